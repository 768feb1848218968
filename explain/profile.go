package explain

import (
	"cmp"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sort"
	"sync/atomic"
	"unsafe"

	"telltale/cnn"
	"telltale/corpus"
)

// ProfileOptions controls Profile. Zero values select the defaults.
type ProfileOptions struct {
	TopK      int     // n-grams reported per filter (default 10)
	Examples  int     // example text indices kept per n-gram (default 3)
	Purity    float64 // share p of the purity threshold (default 0.5)
	Bins      int     // bins of the reported activation histogram (default 20)
	ExactTop  int     // top activations per filter kept exactly for the threshold (default 4096)
	Pool      int     // distinct top n-grams per filter kept for families (default 100)
	SlotWords int     // trigger and suppressor words per slot (default 8)
	MinCount  int     // minimum corpus count of a slot word (default 2)
	// Counts gives each vocabulary word's count (e.g. corpus.Vocab.Counts);
	// nil counts the words of the profiled texts.
	Counts []int
	// IdleShare: a filter is idle when fewer than max(5, IdleShare·texts)
	// windows lie at or above its purity threshold (default 0.001).
	IdleShare float64
	// FamilyCut is the average-linkage distance, as a share of the mean
	// slot-vector norm, above which clusters are not merged (default 0.5).
	FamilyCut float64
	Table     *SlotTable // a prebuilt table; nil builds one over the corpus's words
	TableMax  int64      // memory bound of that table (0: DefaultTableBytes)
	Workers   int        // goroutines (0: GOMAXPROCS)
	Progress  Progress   // called with texts done, total
}

func (o *ProfileOptions) defaults() {
	def := func(v *int, d int) {
		if *v <= 0 {
			*v = d
		}
	}
	def(&o.TopK, 10)
	def(&o.Examples, 3)
	def(&o.Bins, 20)
	def(&o.ExactTop, 4096)
	def(&o.Pool, 100)
	def(&o.SlotWords, 8)
	def(&o.MinCount, 2)
	o.Pool = max(o.Pool, o.TopK)
	if o.Purity <= 0 || o.Purity > 1 {
		o.Purity = 0.5
	}
	if o.IdleShare <= 0 {
		o.IdleShare = 0.001
	}
	if o.FamilyCut <= 0 {
		o.FamilyCut = 0.5
	}
}

// Profiles describes every filter of a model over a corpus.
type Profiles struct {
	Texts   int             `json:"texts"`
	Labels  []string        `json:"labels"`
	Purity  float64         `json:"purity"`
	Filters []FilterProfile `json:"filters"`
}

// FilterProfile describes one filter over a corpus. A text's window for the filter
// is the one that wins its max pooling; "assigned" means the text's predicted
// class (the model's own decision, as in Jacovi et al. 2018, who study what
// the network does rather than what the data says).
type FilterProfile struct {
	Filter int    `json:"filter"`
	Width  int    `json:"width"`
	Masked bool   `json:"masked"`
	Class  int    `json:"class"` // the class the filter votes for: argmax_c OutW[c][g]
	Label  string `json:"label"`
	// Votes is the filter's output-weight column OutW[·][g]; Margin is
	// Votes[Class] minus the next largest vote.
	Votes  []float64 `json:"votes"`
	Margin float64   `json:"margin"`

	Fired         int     `json:"fired"` // texts whose winning window has a positive activation
	MaxActivation float64 `json:"max_activation"`

	// Threshold is the purity threshold of Jacovi, Sar Shalom & Goldberg
	// (2018, "Understanding Convolutional Neural Networks for Text
	// Classification", BlackboxNLP): the lowest activation a such that at
	// least a share Purity of the fired winning windows with activation ≥ a
	// come from texts assigned the filter's class. +Inf (JSON null) when no
	// such a exists. ThresholdExact is false when the threshold fell below
	// the ExactTop largest activations and was taken at a histogram bin edge.
	Threshold      float64 `json:"threshold"`
	ThresholdExact bool    `json:"threshold_exact"`
	Above          int     `json:"above"`        // winning windows with activation ≥ Threshold
	AbovePurity    float64 `json:"above_purity"` // share of those from texts assigned Class
	// Idle marks a filter with fewer than max(5, IdleShare·texts) windows at
	// or above its threshold, or a masked filter.
	Idle bool `json:"idle"`

	Hist      Histogram   `json:"histogram"`
	TopNgrams []Ngram     `json:"top_ngrams"`
	Slots     []SlotWords `json:"slots"`
	Families  []Family    `json:"families"`
}

// Histogram counts winning-window activations of fired texts in fixed bins
// [Edges[j], Edges[j+1]); the last bin also holds everything above.
type Histogram struct {
	Edges    []float64 `json:"edges"`
	Counts   []int     `json:"counts"`
	InClass  []int     `json:"in_class"`  // of Counts, texts assigned the filter's class
	NotFired int       `json:"not_fired"` // texts whose winning activation is ≤ 0
}

// Ngram is a distinct winning window.
type Ngram struct {
	IDs        []int32   `json:"ids"`
	Tokens     []string  `json:"tokens"`
	Slots      []float64 `json:"slots"` // slot scores; bias + Σ Slots = Activation
	Activation float64   `json:"activation"`
	Count      int       `json:"count"`    // texts in which it wins
	Examples   []int     `json:"examples"` // smallest indices of those texts
	ByPred     []int     `json:"by_pred"`  // those texts per predicted class
	ByGold     []int     `json:"by_gold,omitempty"`
}

// WordScore is a word's slot score.
type WordScore struct {
	Word  string  `json:"word"`
	ID    int32   `json:"id"`
	Score float64 `json:"score"`
	Count int     `json:"count"`
}

// SlotWords lists, for one slot of a filter, the words with the largest
// (Triggers) and the most negative (Suppressors) slot scores.
type SlotWords struct {
	Slot        int         `json:"slot"`
	Triggers    []WordScore `json:"triggers"`
	Suppressors []WordScore `json:"suppressors"`
}

// MarshalJSON writes an infinite threshold as null.
func (p FilterProfile) MarshalJSON() ([]byte, error) {
	type plain FilterProfile
	q := struct {
		plain
		Threshold *float64 `json:"threshold"`
	}{plain: plain(p)}
	if !math.IsInf(p.Threshold, 0) {
		q.Threshold = &p.Threshold
	}
	return jsonMarshal(q)
}

// Profile runs every text of ids through m once and describes each filter.
// Gold, when not nil, gives each text's gold class (len(gold) = len(ids)).
// Ids must be < VocabSize. Without opt.Table it tables the words of the
// texts, most frequent first. Memory beyond the texts and the table is
// bounded independently of the number of texts (see ProfileStream). It
// returns ctx.Err() when cancelled.
func Profile(ctx context.Context, m *cnn.Model, ids [][]int32, gold []int, opt ProfileOptions) (*Profiles, error) {
	cfg := m.Config
	if gold != nil && len(gold) != len(ids) {
		return nil, fmt.Errorf("explain: %d gold labels for %d texts", len(gold), len(ids))
	}
	if opt.Counts != nil && len(opt.Counts) != cfg.VocabSize {
		return nil, fmt.Errorf("explain: %d word counts for a vocabulary of %d", len(opt.Counts), cfg.VocabSize)
	}
	seen := make([]int, cfg.VocabSize)
	for i, text := range ids {
		for j, id := range text {
			if id < 0 || int(id) >= cfg.VocabSize {
				return nil, fmt.Errorf("explain: text %d token %d: id %d outside the vocabulary of %d", i, j, id, cfg.VocabSize)
			}
			seen[id]++
		}
		if gold != nil && (gold[i] < 0 || gold[i] >= cfg.Classes) {
			return nil, fmt.Errorf("explain: text %d: gold class %d outside 0…%d", i, gold[i], cfg.Classes-1)
		}
	}
	if opt.Counts == nil {
		opt.Counts = seen
	}
	if opt.Table == nil {
		var words []int32
		for id, n := range seen {
			if n > 0 {
				words = append(words, int32(id))
			}
		}
		slices.SortStableFunc(words, func(a, b int32) int { return cmp.Compare(seen[b], seen[a]) })
		st, err := NewSlotTable(m, TableOptions{Words: words, MaxBytes: opt.TableMax, Workers: opt.Workers})
		if err != nil {
			return nil, err
		}
		opt.Table = st
	}
	return profile(ctx, m, SliceSource(ids, gold), len(ids), opt)
}

// ProfileStream is Profile over texts read one at a time from next, for
// corpora too big to hold: it keeps at most a few batches of texts in memory
// at once besides the table and the per-filter summaries (bounded heaps and
// a histogram of 1024 fine bins per filter and worker), so its memory does
// not grow with the number of texts. Texts with gold −1 count in no gold
// column; ByGold is reported when at least one text has a gold class.
//
// Without opt.Table it tables the whole vocabulary up to opt.TableMax, most
// frequent first when opt.Counts is given and in vocabulary order (the order
// corpus.Vocab gives: most frequent first) otherwise; without opt.Counts the
// slot words' counts are those of the streamed texts. Progress gets total 0.
// It returns next's error, an error naming the first text with an id
// outside the vocabulary or a gold class outside the model's, or ctx.Err()
// when cancelled.
func ProfileStream(ctx context.Context, m *cnn.Model, next TextSource, opt ProfileOptions) (*Profiles, error) {
	cfg := m.Config
	if opt.Counts != nil && len(opt.Counts) != cfg.VocabSize {
		return nil, fmt.Errorf("explain: %d word counts for a vocabulary of %d", len(opt.Counts), cfg.VocabSize)
	}
	if opt.Table == nil {
		var words []int32
		if opt.Counts != nil {
			words = make([]int32, cfg.VocabSize)
			for i := range words {
				words[i] = int32(i)
			}
			slices.SortStableFunc(words, func(a, b int32) int { return cmp.Compare(opt.Counts[b], opt.Counts[a]) })
		}
		st, err := NewSlotTable(m, TableOptions{Words: words, MaxBytes: opt.TableMax, Workers: opt.Workers})
		if err != nil {
			return nil, err
		}
		opt.Table = st
	}
	return profile(ctx, m, next, 0, opt)
}

// profile is the pass shared by Profile and ProfileStream: opt.Table is set;
// opt.Counts nil means count the streamed words.
func profile(ctx context.Context, m *cnn.Model, next TextSource, total int, opt ProfileOptions) (*Profiles, error) {
	opt.defaults()
	cfg := m.Config
	st := opt.Table
	if st.m != m {
		return nil, fmt.Errorf("explain: the slot table was built for another model")
	}
	counts := opt.Counts
	var streamCounts []int
	if counts == nil {
		streamCounts = make([]int, cfg.VocabSize)
		counts = streamCounts
	}
	nf := cfg.NumFilters()
	votes := make([]int, nf)
	for g := range votes {
		votes[g] = voteClass(m, g)
	}
	workers := opt.Workers
	if workers <= 0 {
		workers = runtimeWorkers()
	}
	ub := upperBounds(st)
	accs := make([]*filterAccs, workers)
	for w := range accs {
		accs[w] = newFilterAccs(cfg, &opt, ub)
	}
	var haveGold atomic.Bool
	texts, err := scanStream(ctx, st, next, workers, opt.Progress, total, streamCounts, func(wk, text, gd int, p *Pass) {
		a := accs[wk]
		if gd >= 0 && !a.gold {
			a.gold = true
			haveGold.Store(true)
		}
		for g := 0; g < nf; g++ {
			a.filters[g].add(p, g, text, gd, p.Pred == votes[g], cfg.Classes)
		}
	})
	if err != nil {
		return nil, err
	}
	out := &Profiles{Texts: texts, Labels: labelNames(m), Purity: opt.Purity, Filters: make([]FilterProfile, nf)}
	parallelRows(nf, workers, 1, func(lo, hi int) {
		for g := lo; g < hi; g++ {
			out.Filters[g] = finishProfile(st, g, votes[g], accs, counts, texts, haveGold.Load(), &opt)
		}
	})
	return out, ctx.Err()
}

func voteClass(m *cnn.Model, g int) int {
	nf := m.Config.NumFilters()
	best := 0
	for c := 1; c < m.Config.Classes; c++ {
		if m.OutW[c*nf+g] > m.OutW[best*nf+g] {
			best = c
		}
	}
	return best
}

// upperBounds is, per filter, B_g + Σ_s max over tabled words of the slot
// score: no window of tabled words can exceed it (windows with words
// computed on the fly can; the fine histogram's last bin holds them).
func upperBounds(st *SlotTable) []float32 {
	m := st.m
	var ub []float32
	for b := range st.banks {
		tb := &st.banks[b]
		F, w := tb.filters, tb.width
		mx := make([]float32, w*F)
		copy(mx, tb.t[:w*F])
		for r := 1; r < len(st.words); r++ {
			row := tb.t[r*w*F : (r+1)*w*F]
			for k, v := range row {
				mx[k] = max(mx[k], v)
			}
		}
		for f := 0; f < F; f++ {
			u := tb.bias[f]
			for s := 0; s < w; s++ {
				u += mx[s*F+f]
			}
			ub = append(ub, max(u, 1e-6))
		}
	}
	_ = m
	return ub
}

const fineBins = 1024

type filterAccs struct {
	filters []filterAcc
	gold    bool // some text had a gold class
}

type filterAcc struct {
	width    int
	pool     ngramHeap
	index    map[string]*ngramEntry
	top      topActs
	hist     []int32 // fineBins × 2: [bin][in-class]
	scale    float32 // fineBins / ub
	notFired int
	fired    int
	maxAct   float32
	key      []byte
	slab     []ngramEntry // entries not yet used
	opt      *ProfileOptions
}

func newFilterAccs(cfg cnn.Config, opt *ProfileOptions, ub []float32) *filterAccs {
	a := &filterAccs{filters: make([]filterAcc, cfg.NumFilters())}
	for g := range a.filters {
		a.filters[g] = filterAcc{
			width: cfg.Widths[g/cfg.Filters],
			index: make(map[string]*ngramEntry),
			hist:  make([]int32, 2*fineBins),
			scale: fineBins / ub[g],
			opt:   opt,
		}
	}
	return a
}

type ngramEntry struct {
	key      string // the window's ids, 4 bytes each; points into kb
	kb       []byte
	act      float32
	count    int
	examples []int
	byPred   []int
	byGold   []int
}

// worse orders n-grams by activation, then by key, so that the top set is
// unique whatever the order in which texts arrive.
func worse(a float32, ak string, b *ngramEntry) bool {
	if a != b.act {
		return a < b.act
	}
	return ak > b.key
}

func (fa *filterAcc) add(p *Pass, g, text, gold int, inClass bool, classes int) {
	a := p.Pre[g]
	if a <= 0 {
		fa.notFired++
		return
	}
	fa.fired++
	fa.maxAct = max(fa.maxAct, a)
	bin := min(int(a*fa.scale), fineBins-1)
	in := 0
	if inClass {
		in = 1
	}
	fa.hist[2*bin+in]++
	fa.top.push(actEntry{a, inClass}, fa.opt.ExactTop)

	pool := &fa.pool
	if len(pool.e) == fa.opt.Pool && a < pool.e[0].act {
		return
	}
	t := int(p.Start[g])
	win := p.IDs[t : t+fa.width]
	fa.key = fa.key[:0]
	for _, id := range win {
		fa.key = append(fa.key, byte(id), byte(id>>8), byte(id>>16), byte(id>>24))
	}
	if e, ok := fa.index[string(fa.key)]; ok {
		e.note(text, p.Pred, gold, fa.opt.Examples)
		return
	}
	var e *ngramEntry
	if len(pool.e) == fa.opt.Pool {
		if worse(a, string(fa.key), pool.e[0]) {
			return
		}
		// The evicted entry's slices are reused: only the key allocates.
		e = pool.pop()
		delete(fa.index, e.key)
		clear(e.byPred)
		clear(e.byGold)
		*e = ngramEntry{kb: e.kb, examples: e.examples[:0], byPred: e.byPred, byGold: e.byGold}
	} else {
		e = fa.newEntry(classes)
	}
	// The key is a string over the entry's own bytes, rewritten only after
	// the entry left the index, so replacing an entry allocates nothing.
	e.kb = append(e.kb[:0], fa.key...)
	e.key, e.act = unsafe.String(unsafe.SliceData(e.kb), len(e.kb)), a
	e.note(text, p.Pred, gold, fa.opt.Examples)
	fa.index[e.key] = e
	pool.push(e)
}

// newEntry takes a fresh entry from the filter's slab, allocated at once for
// Pool entries on first use.
func (fa *filterAcc) newEntry(classes int) *ngramEntry {
	if len(fa.slab) == 0 {
		n := fa.opt.Pool
		fa.slab = make([]ngramEntry, n)
		counts := make([]int, 2*classes*n)
		keys := make([]byte, 4*fa.width*n)
		for i := range fa.slab {
			c := counts[2*classes*i:]
			fa.slab[i] = ngramEntry{byPred: c[:classes:classes], byGold: c[classes : 2*classes : 2*classes],
				kb: keys[4*fa.width*i : 4*fa.width*i : 4*fa.width*(i+1)]}
		}
	}
	e := &fa.slab[0]
	fa.slab = fa.slab[1:]
	return e
}

func (e *ngramEntry) note(text, pred, gold, keep int) {
	e.count++
	e.byPred[pred]++
	if gold >= 0 {
		e.byGold[gold]++
	}
	e.examples = insertSmallest(e.examples, text, keep)
}

// insertSmallest adds v to the sorted list xs, keeping the keep smallest.
func insertSmallest(xs []int, v, keep int) []int {
	if len(xs) == keep && v >= xs[len(xs)-1] {
		return xs
	}
	i := sort.SearchInts(xs, v)
	if len(xs) < keep {
		xs = append(xs, 0)
	}
	copy(xs[i+1:], xs[i:len(xs)-1])
	xs[i] = v
	return xs
}

// ngramHeap is a min-heap of n-grams under worse.
type ngramHeap struct{ e []*ngramEntry }

func (h *ngramHeap) less(i, j int) bool { return worse(h.e[i].act, h.e[i].key, h.e[j]) }

func (h *ngramHeap) push(e *ngramEntry) {
	h.e = append(h.e, e)
	for i := len(h.e) - 1; i > 0; {
		p := (i - 1) / 2
		if !h.less(i, p) {
			break
		}
		h.e[i], h.e[p] = h.e[p], h.e[i]
		i = p
	}
}

func (h *ngramHeap) pop() *ngramEntry {
	top := h.e[0]
	n := len(h.e) - 1
	h.e[0] = h.e[n]
	h.e = h.e[:n]
	for i := 0; ; {
		l, r, s := 2*i+1, 2*i+2, i
		if l < n && h.less(l, s) {
			s = l
		}
		if r < n && h.less(r, s) {
			s = r
		}
		if s == i {
			break
		}
		h.e[i], h.e[s] = h.e[s], h.e[i]
		i = s
	}
	return top
}

type actEntry struct {
	a  float32
	in bool
}

// topActs keeps the largest activations pushed: at least the capacity
// largest, and every value above its floor. Values go to the end of a buffer
// of up to twice the capacity; a full buffer is cut to its capacity largest
// by selection (Hoare's FIND, 1961), which sets the floor. That costs O(1)
// per push on average, where a heap would cost a logarithm with scattered
// memory accesses. Dropped records whether any value was left out.
type topActs struct {
	e       []actEntry
	floor   float32
	full    bool
	dropped bool
}

func (h *topActs) push(v actEntry, capacity int) {
	if h.full && v.a <= h.floor {
		h.dropped = true
		return
	}
	if h.e == nil {
		h.e = make([]actEntry, 0, 2*capacity)
	}
	h.e = append(h.e, v)
	if len(h.e) >= 2*capacity {
		selectTop(h.e, capacity)
		h.e = h.e[:capacity]
		h.floor = h.e[0].a
		for _, x := range h.e[1:] {
			h.floor = min(h.floor, x.a)
		}
		h.full, h.dropped = true, true
	}
}

// selectTop reorders e so that its k largest activations come first (k <
// len(e)), by quickselect with a middle pivot and a three-way partition
// (ties are common: a word n-gram repeats its activation exactly).
func selectTop(e []actEntry, k int) {
	lo, hi := 0, len(e) // the answer's boundary lies in [lo, hi)
	for hi-lo > 1 {
		p := e[lo+(hi-lo)/2].a
		// Three-way partition of e[lo:hi] into > p, == p, < p.
		i, j, n := lo, lo, hi
		for j < n {
			switch a := e[j].a; {
			case a > p:
				e[i], e[j] = e[j], e[i]
				i++
				j++
			case a < p:
				n--
				e[j], e[n] = e[n], e[j]
			default:
				j++
			}
		}
		switch {
		case k < i:
			hi = i
		case k > j:
			lo = j
		default:
			return
		}
	}
}

// finishProfile merges the workers' accumulators of filter g.
func finishProfile(st *SlotTable, g, class int, accs []*filterAccs, counts []int, texts int, haveGold bool, opt *ProfileOptions) FilterProfile {
	m := st.m
	nf := m.Config.NumFilters()
	C := m.Config.Classes
	pr := FilterProfile{Filter: g, Width: m.FilterWidth(g), Masked: m.IsMasked(g), Class: class,
		Label: labelNames(m)[class], Votes: make([]float64, C)}
	second := math.Inf(-1)
	for c := 0; c < C; c++ {
		pr.Votes[c] = float64(m.OutW[c*nf+g])
		if c != class {
			second = max(second, pr.Votes[c])
		}
	}
	pr.Margin = pr.Votes[class] - second

	hist := make([]int, 2*fineBins)
	var top []actEntry
	dropped := false
	merged := map[string]*ngramEntry{}
	var scale float32
	for _, a := range accs {
		fa := &a.filters[g]
		scale = fa.scale
		pr.Fired += fa.fired
		pr.Hist.NotFired += fa.notFired
		pr.MaxActivation = max(pr.MaxActivation, float64(fa.maxAct))
		for i, v := range fa.hist {
			hist[i] += int(v)
		}
		top = append(top, fa.top.e...)
		dropped = dropped || fa.top.dropped
		for _, e := range fa.pool.e {
			if x, ok := merged[e.key]; ok {
				x.count += e.count
				for c := range x.byPred {
					x.byPred[c] += e.byPred[c]
				}
				for c := range x.byGold {
					x.byGold[c] += e.byGold[c]
				}
				for _, t := range e.examples {
					x.examples = insertSmallest(x.examples, t, opt.Examples)
				}
			} else {
				cp := *e
				cp.examples = slices.Clone(e.examples)
				cp.byPred = slices.Clone(e.byPred)
				cp.byGold = slices.Clone(e.byGold)
				merged[e.key] = &cp
			}
		}
	}
	slices.SortFunc(top, func(a, b actEntry) int { return cmp.Compare(b.a, a.a) })
	if len(top) > opt.ExactTop {
		top = top[:opt.ExactTop]
	}
	pr.Threshold, pr.ThresholdExact, pr.Above, pr.AbovePurity = purityThreshold(top, dropped, hist, scale, opt.Purity)
	pr.Idle = pr.Masked || pr.Above < max(5, int(math.Ceil(opt.IdleShare*float64(texts))))
	pr.Hist = displayHist(hist, scale, opt.Bins, pr.Hist.NotFired)

	pool := make([]*ngramEntry, 0, len(merged))
	for _, e := range merged {
		pool = append(pool, e)
	}
	slices.SortFunc(pool, func(a, b *ngramEntry) int {
		if a.act != b.act {
			return cmp.Compare(b.act, a.act)
		}
		return cmp.Compare(a.key, b.key)
	})
	if len(pool) > opt.Pool {
		pool = pool[:opt.Pool]
	}
	ngrams := make([]Ngram, len(pool))
	for i, e := range pool {
		ngrams[i] = makeNgram(st, g, e, haveGold)
	}
	pr.TopNgrams = ngrams[:min(opt.TopK, len(ngrams))]
	pr.Slots = slotWords(st, g, counts, opt.SlotWords, opt.MinCount)
	var above []Ngram
	for _, n := range ngrams {
		if n.Activation >= pr.Threshold {
			above = append(above, n)
		}
	}
	pr.Families = families(above, opt.FamilyCut)
	return pr
}

func makeNgram(st *SlotTable, g int, e *ngramEntry, haveGold bool) Ngram {
	m := st.m
	w := len(e.key) / 4
	n := Ngram{IDs: make([]int32, w), Tokens: make([]string, w), Slots: make([]float64, w),
		Activation: float64(e.act), Count: e.count, Examples: e.examples, ByPred: e.byPred}
	if haveGold {
		n.ByGold = e.byGold
	}
	for s := 0; s < w; s++ {
		k := e.key[4*s:]
		id := int32(uint32(k[0]) | uint32(k[1])<<8 | uint32(k[2])<<16 | uint32(k[3])<<24)
		n.IDs[s] = id
		n.Tokens[s] = wordOf(m, id)
		n.Slots[s] = float64(st.SlotScore(g, s, id))
	}
	return n
}

// purityThreshold finds the lowest activation a with purity(≥ a) ≥ p. Top
// holds the largest activations in descending order; when dropped is false
// it holds every fired window and the answer is exact. Otherwise candidates
// at or below the smallest kept value are the fine-histogram bin edges
// (count ≥ edge is exact there, the edge itself is the approximation).
func purityThreshold(top []actEntry, dropped bool, hist []int, scale float32, p float64) (thr float64, exact bool, above int, purity float64) {
	if dropped && len(top) > 0 {
		floor := top[len(top)-1].a
		cumAt, inAt := make([]int, fineBins), make([]int, fineBins)
		var cum, in int
		for j := fineBins - 1; j >= 0; j-- {
			cum += hist[2*j] + hist[2*j+1]
			in += hist[2*j+1]
			cumAt[j], inAt[j] = cum, in
		}
		for j := 0; j < fineBins && float32(j)/scale <= floor; j++ {
			if cumAt[j] > 0 && float64(inAt[j]) >= p*float64(cumAt[j]) {
				return float64(float32(j) / scale), false, cumAt[j], float64(inAt[j]) / float64(cumAt[j])
			}
		}
		// Above the floor every window is kept: values equal to the floor
		// may have lost ties and are left out.
		k := len(top)
		for k > 0 && top[k-1].a == floor {
			k--
		}
		top = top[:k]
	}
	// Exact: the threshold is the activation at the end of the longest
	// satisfying prefix of the descending list (tied values kept whole).
	best, in := -1, 0
	for i, e := range top {
		if e.in {
			in++
		}
		if i+1 < len(top) && top[i+1].a == e.a {
			continue
		}
		if float64(in) >= p*float64(i+1) {
			best, purity = i, float64(in)/float64(i+1)
		}
	}
	if best < 0 {
		return math.Inf(1), true, 0, 0
	}
	return float64(top[best].a), true, best + 1, purity
}

// displayHist regroups the fine bins up to the last non-empty one into at
// most bins bins.
func displayHist(hist []int, scale float32, bins, notFired int) Histogram {
	last := -1
	for j := fineBins - 1; j >= 0; j-- {
		if hist[2*j]+hist[2*j+1] > 0 {
			last = j
			break
		}
	}
	h := Histogram{NotFired: notFired}
	if last < 0 {
		return h
	}
	group := (last + bins) / bins
	for j0 := 0; j0 <= last; j0 += group {
		h.Edges = append(h.Edges, float64(float32(j0)/scale))
		var n, in int
		for j := j0; j < min(j0+group, fineBins); j++ {
			n += hist[2*j] + hist[2*j+1]
			in += hist[2*j+1]
		}
		h.Counts = append(h.Counts, n)
		h.InClass = append(h.InClass, in)
	}
	h.Edges = append(h.Edges, float64(float32(min(len(h.Counts)*group, fineBins))/scale))
	return h
}

// slotWords lists, for each slot of filter g, the tabled words with count ≥
// minCount (PAD and UNK excluded) whose slot scores are largest and most
// negative.
func slotWords(st *SlotTable, g int, counts []int, k, minCount int) []SlotWords {
	m := st.m
	b, f := m.FilterConv(g)
	tb := &st.banks[b]
	F, w := tb.filters, tb.width
	out := make([]SlotWords, w)
	for s := 0; s < w; s++ {
		var hi, lo []WordScore
		for r, id := range st.words {
			if id == corpus.PAD || id == corpus.UNK || counts[id] < minCount {
				continue
			}
			v := float64(tb.t[(r*w+s)*F+f])
			if len(hi) < k || v > hi[len(hi)-1].Score {
				hi = insertScore(hi, WordScore{ID: id, Score: v, Count: counts[id]}, k, true)
			}
			if v < 0 && (len(lo) < k || v < lo[len(lo)-1].Score) {
				lo = insertScore(lo, WordScore{ID: id, Score: v, Count: counts[id]}, k, false)
			}
		}
		for i := range hi {
			hi[i].Word = wordOf(m, hi[i].ID)
		}
		for i := range lo {
			lo[i].Word = wordOf(m, lo[i].ID)
		}
		out[s] = SlotWords{Slot: s, Triggers: hi, Suppressors: lo}
	}
	return out
}

// insertScore inserts v into xs sorted descending (or ascending), keeping k;
// equal scores keep the earlier (more frequent) word first.
func insertScore(xs []WordScore, v WordScore, k int, desc bool) []WordScore {
	i := sort.Search(len(xs), func(i int) bool {
		if desc {
			return xs[i].Score < v.Score
		}
		return xs[i].Score > v.Score
	})
	if i >= k {
		return xs
	}
	if len(xs) < k {
		xs = append(xs, WordScore{})
	}
	copy(xs[i+1:], xs[i:len(xs)-1])
	xs[i] = v
	return xs
}

func jsonMarshal(v any) ([]byte, error) { return json.Marshal(v) }

func runtimeWorkers() int { return runtime.GOMAXPROCS(0) }

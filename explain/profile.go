package explain

import (
	"cmp"
	"context"
	"encoding/json"
	"fmt"
	"runtime"
	"slices"
	"sync/atomic"

	"telltale/cnn"
)

// ProfileOptions controls Profile. Zero values select the defaults.
type ProfileOptions struct {
	TopK     int // n-grams reported per filter (default 10)
	Examples int // example text indices kept per n-gram (default 3)
	// Purity is the share p of the deprecated FilterProfile.Threshold
	// (default 0.5).
	//
	// Deprecated: see FilterProfile.Threshold; Selective sets Selectivity.
	Purity    float64
	Bins      int // bins of the reported activation histogram (default 20)
	ExactTop  int // top activations per filter kept exactly for the threshold (default 4096)
	Pool      int // distinct top n-grams per filter kept for families (default 100)
	SlotWords int // trigger and suppressor words per slot (default 8)
	MinCount  int // minimum corpus count of a slot word (default 2)
	// Counts gives each vocabulary word's count (e.g. corpus.Vocab.Counts);
	// nil counts the words of the profiled texts.
	Counts []int
	// IdleShare: a filter is idle when fewer than max(5, IdleShare·texts)
	// windows lie at or above its purity threshold (default 0.001).
	//
	// Deprecated: see FilterProfile.Threshold.
	IdleShare float64
	// FamilyCut is the average-linkage distance, as a share of the
	// weighted mean slot-vector norm, above which clusters are not merged
	// (default 0.5).
	FamilyCut float64
	// FamilySample is the number of winning windows sampled per activation
	// stratum (of 32) in each half of the corpus for the families (default
	// 16): one half's sample chooses them, the other's measures their
	// shares (see Family).
	FamilySample int
	// Selective is the Share of Selectivity: how far from the class's base
	// rate towards purity the selectivity threshold must be (default 0.5).
	Selective float64
	// Alpha is the level of the selectivity test (default 0.05).
	Alpha float64
	// Negatives is the number of negative n-grams kept per filter
	// (default 10).
	Negatives int
	// Seed seeds the family sample and its resampling.
	Seed uint64
	// Reopen, for ProfileStream, reads the same texts again from the
	// start. Negative n-grams need a filter's final threshold; the pass
	// searches a band around an early estimate of it, and a filter whose
	// threshold falls outside the band is searched again with Reopen.
	// Without it such filters' negative n-grams are marked inexact
	// (FilterProfile.NegativesExact). Profile reads its slices again.
	Reopen   func() (TextSource, error)
	Table    *SlotTable // a prebuilt table; nil builds one over the corpus's words
	TableMax int64      // memory bound of that table (0: DefaultTableBytes)
	Workers  int        // goroutines (0: GOMAXPROCS)
	Progress Progress   // called with texts done, total
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
	def(&o.FamilySample, 16)
	def(&o.Negatives, 10)
	o.Pool = max(o.Pool, o.TopK)
	if o.Selective <= 0 || o.Selective >= 1 {
		o.Selective = 0.5
	}
	if o.Alpha <= 0 || o.Alpha >= 1 {
		o.Alpha = 0.05
	}
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
	Texts  int      `json:"texts"`
	Labels []string `json:"labels"`
	// Purity is the share of the deprecated FilterProfile.Threshold.
	//
	// Deprecated: see FilterProfile.Threshold.
	Purity float64 `json:"-"`
	// Halves counts the texts of the choosing and the other half (see
	// Selectivity).
	Halves [2]int `json:"halves"`
	// Selective and Alpha are the Share and level of every filter's
	// Selectivity. Selective's JSON key is selectivity_share, as the
	// filters command writes it: "selective" is every filter's verdict.
	Selective float64         `json:"selectivity_share"`
	Alpha     float64         `json:"alpha"`
	Filters   []FilterProfile `json:"filters"`
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
	// CentredVotes[c] = OutW[c][g] − the column's mean: how much a unit of
	// the filter's activation moves class c's centred logit. Margin is the
	// filter's vote for Class minus the next largest vote. MaxActivation
	// is the largest winning-window activation. None is identified (a
	// rescaling of the filter by k > 0 divides the first two by k and
	// multiplies the last by k; see VoteScale): they are never shown.
	CentredVotes  []float64 `json:"-"`
	Margin        float64   `json:"-"`
	MaxActivation float64   `json:"-"`

	// The shown figures of the filter's scale, in log-odds units, are
	// identified. CentredVotesLogOdds[c] = CentredVotes[c]·MaxActivation
	// is how much the filter's highest winning window moves class c's
	// centred logit; MarginLogOdds = Margin·MaxActivation, the vote margin
	// shown, is how far that window raises Class's logit above the next
	// largest class's (both 0 when the filter never fired); MaxLogOdds =
	// MaxActivation·VoteScale is the highest winning window in log-odds
	// units, as every other activation-scale number of the profile is
	// (fields named …LogOdds), the most it moves the log-odds between two
	// classes. With two classes MarginLogOdds = MaxLogOdds.
	CentredVotesLogOdds []float64 `json:"centred_votes_log_odds"`
	MarginLogOdds       float64   `json:"margin_log_odds"`
	MaxLogOdds          float64   `json:"max_log_odds"`

	Fired int `json:"fired"` // texts whose winning window has a positive activation

	// Threshold, ThresholdExact, Above, AbovePurity and Idle are the purity
	// threshold of Jacovi, Sar Shalom & Goldberg (2018, "Understanding
	// Convolutional Neural Networks for Text Classification", BlackboxNLP)
	// taken at the share ProfileOptions.Purity of the fired winning windows
	// over all texts (+Inf when none), whether it is exact or a histogram
	// bin edge, the windows at or above it, their share from texts assigned
	// Class, and whether fewer than max(5, IdleShare·texts) windows reach it
	// (or the filter is masked). No view shows them and JSON leaves them
	// out: they are not compared with the class's base rate, and they are
	// chosen and measured on the same texts.
	//
	// Deprecated: kept only for the former cue audit of this package
	// (audit*.go), and removed with it; use Selectivity.
	Threshold      float64 `json:"-"`
	ThresholdExact bool    `json:"-"`
	Above          int     `json:"-"`
	AbovePurity    float64 `json:"-"`
	Idle           bool    `json:"-"`

	// Selectivity is the threshold relative to the class's base rate, with
	// its held-out test.
	Selectivity Selectivity `json:"selectivity"`

	Hist      Histogram   `json:"histogram"`
	TopNgrams []Ngram     `json:"top_ngrams"`
	Slots     []SlotWords `json:"slots"`
	// Negatives are the negative n-grams for the selectivity threshold,
	// the ones held down furthest first. NegativesExact is false when the
	// search could not be completed (see ProfileOptions.Reopen): the ones
	// listed are negative n-grams, but others may be missing and their
	// counts short.
	Negatives      []NegativeNgram `json:"negatives"`
	NegativesExact bool            `json:"negatives_exact"`
	// Families group the winning windows at or above the selectivity
	// threshold, largest first (see Family); FamilySample is the number of
	// the choosing half's sampled windows they were built from (of its
	// Selectivity.Above − Selectivity.Windows), FamilyMeasured the number
	// of the other half's sampled windows their shares were measured on (of
	// its Selectivity.Windows).
	Families       []Family `json:"families"`
	FamilySample   int      `json:"family_sample"`
	FamilyMeasured int      `json:"family_measured"`
}

// Histogram counts winning-window activations of fired texts in fixed bins
// [Edges[j], Edges[j+1]); the last bin also holds everything above.
// Edges are raw activations, never shown; EdgesLogOdds are them in
// log-odds units (times the filter's VoteScale).
type Histogram struct {
	Edges        []float64 `json:"-"`
	EdgesLogOdds []float64 `json:"edges_log_odds"`
	Counts       []int     `json:"counts"`
	InClass      []int     `json:"in_class"`  // of Counts, texts assigned the filter's class
	NotFired     int       `json:"not_fired"` // texts whose winning activation is ≤ 0
}

// Ngram is a distinct winning window. Slots and Activation are raw, never
// shown; SlotsLogOdds and ActivationLogOdds are them in log-odds units
// (times the filter's VoteScale).
type Ngram struct {
	IDs               []int32   `json:"ids"`
	Tokens            []string  `json:"tokens"`
	Slots             []float64 `json:"-"` // slot scores; bias + Σ Slots = Activation
	Activation        float64   `json:"-"`
	SlotsLogOdds      []float64 `json:"slots_log_odds"`
	ActivationLogOdds float64   `json:"activation_log_odds"`
	Count             int       `json:"count"`    // texts in which it wins
	Examples          []int     `json:"examples"` // smallest indices of those texts
	ByPred            []int     `json:"by_pred"`  // those texts per predicted class
	ByGold            []int     `json:"by_gold,omitempty"`
}

// WordScore is a word's slot score: raw (Score, never shown) and in
// log-odds units (ScoreLogOdds, times the filter's VoteScale).
type WordScore struct {
	Word         string  `json:"word"`
	ID           int32   `json:"id"`
	Score        float64 `json:"-"`
	ScoreLogOdds float64 `json:"score_log_odds"`
	Count        int     `json:"count"`
}

// SlotWords lists, for one slot of a filter, the words with the largest
// (Triggers) and the most negative (Suppressors) slot scores.
type SlotWords struct {
	Slot        int         `json:"slot"`
	Triggers    []WordScore `json:"triggers"`
	Suppressors []WordScore `json:"suppressors"`
}

// Profile runs every text of ids through m once and describes each filter.
// Gold, when not nil, gives each text's gold class (len(gold) = len(ids)).
// Ids must be < VocabSize. Without opt.Table it tables the words of the
// texts, most frequent first. Memory beyond the texts and the table is
// bounded independently of the number of texts (see ProfileStream); the
// first texts of each worker are copied aside for the negative n-gram
// search, and the texts are read again for the filters whose threshold
// left their search band (see ProfileOptions.Reopen), so that every
// FilterProfile.NegativesExact is true. It returns ctx.Err() when
// cancelled.
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
	reopen := func() (TextSource, error) { return SliceSource(ids, gold), nil }
	return profile(ctx, m, SliceSource(ids, gold), len(ids), reopen, opt)
}

// ProfileStream is Profile over texts read one at a time from next, for
// corpora too big to hold: it keeps at most a few batches of texts in memory
// at once besides the table and the per-filter summaries (bounded heaps and
// a histogram of 512 fine bins per filter and worker), so its memory does
// not grow with the number of texts. Texts with gold −1 count in no gold
// column; ByGold is reported when at least one text has a gold class.
//
// Without opt.Table it tables the whole vocabulary up to opt.TableMax, most
// frequent first when opt.Counts is given and in vocabulary order (the order
// corpus.Vocab gives: most frequent first) otherwise; without opt.Counts the
// slot words' counts are those of the streamed texts. Progress gets total 0.
// Each worker also keeps a copy of its first 2048 texts for the negative
// n-gram search; give opt.Reopen so that filters whose threshold left the
// search band are searched again (else they are marked inexact). It
// returns next's or Reopen's error, an error naming the first text with an
// id outside the vocabulary or a gold class outside the model's, or
// ctx.Err() when cancelled.
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
	return profile(ctx, m, next, 0, opt.Reopen, opt)
}

// profile is the pass shared by Profile and ProfileStream: opt.Table is set;
// opt.Counts nil means count the streamed words. Reopen, when not nil,
// reads the texts again for a second negative n-gram search (see
// filterAccs).
func profile(ctx context.Context, m *cnn.Model, next TextSource, total int, reopen func() (TextSource, error), opt ProfileOptions) (*Profiles, error) {
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
	prepare := func(wk int, r *Runner) { accs[wk].attach(st, r) }
	texts, err := scanStream(ctx, st, next, workers, opt.Progress, total, streamCounts, prepare, func(wk, text, gd int, p *Pass) {
		a := accs[wk]
		if gd >= 0 && !a.gold {
			a.gold = true
			haveGold.Store(true)
		}
		hf := half(text)
		a.texts[hf]++
		a.assigned[hf][p.Pred]++
		a.hold(p, text, gd, hf, votes, cfg.Classes)
		a.searchNegatives(st, p, text, votes, cfg.Classes, &opt)
	})
	if err != nil {
		return nil, err
	}
	for _, a := range accs {
		a.addHeld(votes, cfg.Classes)
		a.flush()
	}
	sels := make([]Selectivity, nf)
	parallelRows(nf, workers, 1, func(lo, hi int) {
		for g := lo; g < hi; g++ {
			sels[g] = mergedSelectivity(g, votes[g], accs, &opt)
		}
	})
	exact, err := finishNegatives(ctx, st, accs, sels, reopen)
	if err != nil {
		return nil, err
	}
	out := &Profiles{Texts: texts, Labels: labelNames(m), Purity: opt.Purity, Selective: opt.Selective, Alpha: opt.Alpha,
		Filters: make([]FilterProfile, nf)}
	for _, a := range accs {
		out.Halves[0] += a.texts[0]
		out.Halves[1] += a.texts[1]
	}
	parallelRows(nf, workers, 1, func(lo, hi int) {
		for g := lo; g < hi; g++ {
			out.Filters[g] = finishProfile(st, g, votes[g], accs, counts, texts, haveGold.Load(), &opt, sels[g], exact[g])
		}
	})
	holmSelective(out.Filters)
	return out, ctx.Err()
}

// finishNegatives completes the negative n-gram search once the thresholds
// are known: every worker searches the texts it kept aside, and the
// filters whose threshold fell outside some worker's band are searched
// again over the corpus read anew with reopen, their skylines cleared
// first. It reports, per filter, whether the search is complete (false
// only for such filters when reopen is nil).
func finishNegatives(ctx context.Context, st *SlotTable, accs []*filterAccs, sels []Selectivity, reopen func() (TextSource, error)) ([]bool, error) {
	nf := len(sels)
	theta := make([]float32, nf)
	for g, s := range sels {
		theta[g] = float32(s.Threshold)
	}
	parallelRows(len(accs), len(accs), 1, func(lo, hi int) {
		for _, a := range accs[lo:hi] {
			if a.runner == nil {
				continue
			}
			a.exactScreens(theta, nil)
			a.runner.negativesOnly = true
			a.firstTexts.each(func(ids []int32, text int) {
				a.negatives(a.runner.Run(ids), text)
			})
			a.runner.negativesOnly = false
		}
	})
	exact := make([]bool, nf)
	again := make([]bool, nf)
	redo := false
	for g, t := range theta {
		exact[g] = true
		for _, a := range accs {
			if a.banded && t != posInf && !(a.lo[g] <= t && t <= a.hi[g]) {
				exact[g], again[g], redo = false, true, true
			}
		}
	}
	if !redo || reopen == nil {
		return exact, ctx.Err()
	}
	next, err := reopen()
	if err != nil {
		return nil, err
	}
	for _, a := range accs {
		for g := range again {
			if again[g] {
				sky := a.filters[g].sky
				a.filters[g].sky = newSkyline(sky.k, sky.keep)
			}
		}
	}
	prepare := func(wk int, r *Runner) {
		a := accs[wk]
		a.attach(st, r)
		a.exactScreens(theta, again)
		r.negativesOnly = true
	}
	_, err = scanStream(ctx, st, next, len(accs), nil, 0, nil, prepare, func(wk, text, _ int, p *Pass) {
		accs[wk].negatives(p, text)
	})
	if err != nil {
		return nil, err
	}
	for g := range exact {
		exact[g] = true
	}
	return exact, nil
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

func jsonMarshal(v any) ([]byte, error) { return json.Marshal(v) }

func runtimeWorkers() int { return runtime.GOMAXPROCS(0) }

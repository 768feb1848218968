package explain

import (
	"math"
	"sort"
	"unsafe"

	"telltale/cnn"
)

// fineBins is the number of bins of each filter's activation histogram,
// which holds four counters a bin (the corpus half and whether the text
// was assigned the filter's class): 8 KiB a filter, so that a worker's
// histograms stay in cache (the histogram is touched at random for every
// text and filter).
const fineBins = 512

// filterAccs is one worker's accumulators: one per filter, and the texts
// and predicted classes of each half of the corpus.
//
// Negative n-grams depend on the selectivity threshold, known only when
// the pass ends. A worker keeps its first phaseTexts texts aside
// (firstTexts); then it estimates each filter's threshold from what it has
// seen and searches, for the rest of the pass, the windows that are
// negative for some threshold in a band around that estimate (lo, hi).
// When the pass ends, the texts kept aside are searched with the final
// threshold, and a filter whose threshold fell outside a worker's band is
// searched again over the whole corpus (see profile).
type filterAccs struct {
	filters  []filterAcc
	gold     bool // some text had a gold class
	texts    [2]int
	assigned [2][]int // [half][class]: texts assigned each class
	filtersF int      // filters per bank
	key      []byte

	recent     int          // texts counted in the small histogram counters
	held       heldWindows  // texts not yet added to the accumulators
	runner     *Runner      // the worker's runner, whose screens feed negatives
	screens    []bankScreen // per bank
	firstTexts textBuffer
	banded     bool      // the band is set: texts go straight to the search
	lo, hi     []float32 // per filter: the band of thresholds searched
}

// phaseTexts is the number of texts a worker keeps aside before it sets
// the bands of its negative n-gram search (a variable for the tests).
var phaseTexts = 2048

// textBuffer holds copies of texts with their indices.
type textBuffer struct {
	flat  []int32
	ends  []int
	index []int
}

func (b *textBuffer) add(ids []int32, text int) {
	b.flat = append(b.flat, ids...)
	b.ends = append(b.ends, len(b.flat))
	b.index = append(b.index, text)
}

// each calls fn with every text held.
func (b *textBuffer) each(fn func(ids []int32, text int)) {
	lo := 0
	for i, hi := range b.ends {
		fn(b.flat[lo:hi], b.index[i])
		lo = hi
	}
}

// filterAcc accumulates one filter over the texts a worker sees.
type filterAcc struct {
	width int
	pool  ngramHeap
	index map[string]*ngramEntry
	top   topActs
	// hist counts fired windows by fine bin, [bin][half][in-class]: the
	// recent ones in small counters (touched at random for every text and
	// filter, so kept small for the cache), moved to total before they
	// can overflow (see filterAccs.count).
	hist     []uint16
	total    []int32
	scale    float32 // fineBins / ub
	notFired int
	fired    int
	maxAct   float32
	key      []byte
	slab     []ngramEntry // entries not yet used
	sky      *skyline     // negative n-gram candidates
	fam      *famSample   // the family sample
	famBar   []uint64     // fam.bar, read for every window
	opt      *ProfileOptions
}

func newFilterAccs(cfg cnn.Config, opt *ProfileOptions, ub []float32) *filterAccs {
	a := &filterAccs{filters: make([]filterAcc, cfg.NumFilters()), filtersF: cfg.Filters}
	bars := make([]uint64, famCells*cfg.NumFilters())
	for h := range a.assigned {
		a.assigned[h] = make([]int, cfg.Classes)
	}
	for g := range a.filters {
		a.filters[g] = filterAcc{
			width:  cfg.Widths[g/cfg.Filters],
			index:  make(map[string]*ngramEntry),
			hist:   make([]uint16, 4*fineBins),
			total:  make([]int32, 4*fineBins),
			scale:  fineBins / ub[g],
			sky:    newSkyline(opt.Negatives, opt.Examples),
			fam:    &famSample{bar: bars[g*famCells : (g+1)*famCells]},
			famBar: bars[g*famCells : (g+1)*famCells],
			opt:    opt,
		}
	}
	return a
}

// heldTexts is the number of texts whose winning windows a worker holds
// before it adds them to its filters' accumulators, one filter after the
// other: each filter's histogram, top lists and samples then stay in the
// cache for all of them, where text after text they would be fetched anew
// for every filter. Each filter still sees its texts in the same order.
const heldTexts = 128

// heldWindows holds the winning windows of up to heldTexts texts.
type heldWindows struct {
	pre                    []float32 // [text][filter]
	start                  []int32   // [text][filter]
	ids                    []int32   // the texts' padded ids one after the other
	ends                   []int     // end of each text in ids
	pred, gold, text, half []int
}

// hold keeps the winning windows of one text (of the given gold class and
// half) and adds the held texts to the accumulators once heldTexts are
// held. Votes gives each filter's class.
func (a *filterAccs) hold(p *Pass, text, gold, hf int, votes []int, classes int) {
	h := &a.held
	h.pre = append(h.pre, p.Pre...)
	h.start = append(h.start, p.Start...)
	h.ids = append(h.ids, p.IDs...)
	h.ends = append(h.ends, len(h.ids))
	h.pred = append(h.pred, p.Pred)
	h.gold = append(h.gold, gold)
	h.text = append(h.text, text)
	h.half = append(h.half, hf)
	if len(h.ends) == heldTexts {
		a.addHeld(votes, classes)
	}
}

// addHeld adds the held texts to every filter's accumulator, in the order
// they were held, and empties the hold. The small histogram counters are
// moved to the totals first when the held texts could make one overflow
// (a text adds at most one to each filter's histogram).
func (a *filterAccs) addHeld(votes []int, classes int) {
	h := &a.held
	n := len(h.ends)
	if n == 0 {
		return
	}
	if a.recent+n >= math.MaxUint16 {
		a.flush()
	}
	a.recent += n
	nf := len(a.filters)
	for g := range a.filters {
		fa := &a.filters[g]
		lo := 0
		for i, hi := range h.ends {
			fa.add(h.pre[i*nf+g], int(h.start[i*nf+g]), h.ids[lo:hi], h.pred[i], g, h.text[i], h.gold[i], h.half[i], h.pred[i] == votes[g], classes)
			lo = hi
		}
	}
	h.pre, h.start, h.ids, h.ends = h.pre[:0], h.start[:0], h.ids[:0], h.ends[:0]
	h.pred, h.gold, h.text, h.half = h.pred[:0], h.gold[:0], h.text[:0], h.half[:0]
}

// flush moves the small histogram counters to the totals.
func (a *filterAccs) flush() {
	for g := range a.filters {
		fa := &a.filters[g]
		for i, v := range fa.hist {
			fa.total[i] += int32(v)
		}
		clear(fa.hist)
	}
	a.recent = 0
}

// attach makes r the worker's runner. Its screens stay off until the band
// is set.
func (a *filterAccs) attach(st *SlotTable, r *Runner) {
	a.runner = r
	r.cands = make([][]negCand, len(st.banks))
	if a.screens == nil {
		a.screens = make([]bankScreen, len(st.banks))
		for b := range st.banks {
			a.screens[b] = newBankScreen(st.banks[b].filters)
		}
	}
	if a.banded {
		r.screen = a.screens
	}
}

// searchNegatives feeds one text to the negative n-gram search, or keeps it
// aside while the band is not set.
func (a *filterAccs) searchNegatives(st *SlotTable, p *Pass, text int, votes []int, classes int, opt *ProfileOptions) {
	if a.banded {
		a.negatives(p, text)
		return
	}
	a.firstTexts.add(p.IDs, text)
	if len(a.firstTexts.ends) == phaseTexts {
		a.setBands(st, votes, classes, opt)
	}
}

// setBands estimates each filter's selectivity threshold from the worker's
// choosing half (at the bin edges of its fine histogram) and sets the band
// [est/2, 2·est + 4 bins]. A filter without an estimate (its fired
// windows never reach the purity asked) gets the band of every threshold,
// [0, +Inf), when at most one filter in widestBands lacks one: its
// final threshold, an activation of a fired window or a bin edge, is
// never negative, so it lies inside, where no band would make the whole
// corpus be read again for it. Such a band lets more windows through and
// keeps more of them, so with more such filters they get no band.
func (a *filterAccs) setBands(st *SlotTable, votes []int, classes int, opt *ProfileOptions) {
	F := a.filtersF
	a.addHeld(votes, classes)
	a.flush()
	a.lo, a.hi = make([]float32, len(a.filters)), make([]float32, len(a.filters))
	none := 0
	for g := range a.filters {
		fa := &a.filters[g]
		a.lo[g], a.hi[g] = posInf, negInf
		if a.texts[0] > 0 {
			base := float64(a.assigned[0][votes[g]]) / float64(a.texts[0])
			if est, ok := histThreshold(fa.total, 0, fa.scale, base+opt.Selective*(1-base)); ok {
				a.lo[g], a.hi[g] = est/2, 2*est+4/fa.scale
				continue
			}
		}
		none++
	}
	for g := range a.filters {
		if a.lo[g] == posInf && none*widestBands <= len(a.filters) {
			a.lo[g], a.hi[g] = 0, posInf
		}
		a.screens[g/F].band(g%F, a.lo[g], a.hi[g])
		a.filters[g].sky.setBand(a.lo[g], a.hi[g])
	}
	a.banded = true
	a.runner.screen = a.screens
}

// widestBands: filters get the band of every threshold only when at most
// one in widestBands lacks an estimate (see setBands; a variable for the
// tests).
var widestBands = 32

// histThreshold is the lowest bin edge of the fine histogram hist
// ([bin][half][in-class]) at which the windows of half hf at or above it
// reach purity target.
func histThreshold(hist []int32, hf int, scale float32, target float64) (float32, bool) {
	var n, in int
	best := -1
	for j := fineBins - 1; j >= 0; j-- {
		n += int(hist[4*j+2*hf] + hist[4*j+2*hf+1])
		in += int(hist[4*j+2*hf+1])
		if n > 0 && float64(in) >= target*float64(n) {
			best = j
		}
	}
	if best < 0 {
		return 0, false
	}
	return float32(best) / scale, true
}

// exactScreens sets every filter's screen to the windows negative for its
// final threshold, theta[g] (+Inf: none), or, when only is not nil, for
// the filters with only[g] set (the others get none).
func (a *filterAccs) exactScreens(theta []float32, only []bool) {
	F := a.filtersF
	for g, t := range theta {
		if only != nil && !only[g] {
			t = posInf
		}
		sc := &a.screens[g/F]
		if t == posInf {
			sc.band(g%F, posInf, negInf)
			continue
		}
		sc.band(g%F, t, t)
		sky := a.filters[g].sky
		sky.setBand(t, t)
		sky.screen(sc, g%F)
	}
	a.runner.screen = a.screens
}

// negatives passes the windows of the text that got through the screens
// to their filters' skylines and updates the screens that changed enough.
func (a *filterAccs) negatives(p *Pass, text int) {
	r := a.runner
	F := a.filtersF
	for b, cands := range r.cands {
		for _, c := range cands {
			g := b*F + int(c.f)
			fa := &a.filters[g]
			a.key = appendKey(a.key[:0], p.IDs[c.t:int(c.t)+fa.width])
			fa.sky.add(a.key, c.a, c.p, text)
		}
		for _, c := range cands {
			g := b*F + int(c.f)
			if sky := a.filters[g].sky; sky.needsScreen() {
				sky.screen(&r.screen[b], int(c.f))
			}
		}
	}
}

// appendKey encodes ids, 4 bytes each, least significant first.
func appendKey(dst []byte, ids []int32) []byte {
	for _, id := range ids {
		dst = append(dst, byte(id), byte(id>>8), byte(id>>16), byte(id>>24))
	}
	return dst
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

// add records filter g's winning window of one text (in half hf): its
// pre-activation a, its start t in the text's padded ids, and the text's
// predicted class pred.
func (fa *filterAcc) add(a float32, t int, ids []int32, pred, g, text, gold, hf int, inClass bool, classes int) {
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
	fa.hist[4*bin+2*hf+in]++
	fa.top.push(actEntry{a: a, in: inClass, half: hf == 1}, fa.opt.ExactTop)
	win := ids[t : t+fa.width]
	j := cell(hf, bin)
	prio := priority(fa.opt.Seed, text, g)
	if b := fa.famBar[j]; b == 0 || prio < b {
		fa.fam.add(j, prio, a, win, fa.opt.FamilySample)
	}

	pool := &fa.pool
	if len(pool.e) == fa.opt.Pool && a < pool.e[0].act {
		return
	}
	fa.key = appendKey(fa.key[:0], win)
	if e, ok := fa.index[string(fa.key)]; ok {
		e.note(text, pred, gold, fa.opt.Examples)
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
	e.note(text, pred, gold, fa.opt.Examples)
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
	a    float32
	in   bool
	half bool // from the held-out half
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

package explain

import (
	"cmp"
	"slices"
	"strings"
	"unsafe"
)

// NegativeNgram is a corpus window of one filter whose positive slots alone
// would pass the filter's selectivity threshold but whose negative slots
// hold it below: Positive ≥ Threshold > Activation. Jacovi, Sar Shalom &
// Goldberg (2018, "Understanding Convolutional Neural Networks for Text
// Classification", BlackboxNLP, §5) show that filters are defined by such
// n-grams too: a negation in one slot keeping a praise filter quiet.
//
// Slots, Activation, Positive and HeldDown are raw, never shown; the
// fields named …LogOdds are them in log-odds units (times the filter's
// VoteScale).
type NegativeNgram struct {
	IDs    []int32   `json:"ids"`
	Tokens []string  `json:"tokens"`
	Slots  []float64 `json:"-"` // slot scores; bias + Σ Slots = Activation
	// Activation is the window's pre-activation, below the threshold.
	Activation float64 `json:"-"`
	// Positive is bias + Σ of the positive slot scores, at or above the
	// threshold.
	Positive float64 `json:"-"`
	// HeldDown = Positive − Activation, minus the sum of the negative slot
	// scores (summed in float64, see heldDown): how far the negative slots
	// held the window down (the ranking).
	HeldDown float64 `json:"-"`

	SlotsLogOdds      []float64 `json:"slots_log_odds"`
	ActivationLogOdds float64   `json:"activation_log_odds"`
	PositiveLogOdds   float64   `json:"positive_log_odds"`
	HeldDownLogOdds   float64   `json:"held_down_log_odds"`
	// NegativeSlots lists the slots with negative scores and Words their
	// words.
	NegativeSlots []int    `json:"negative_slots"`
	Words         []string `json:"words"`
	Count         int      `json:"count"`    // windows of the corpus equal to it, winning or not
	Examples      []int    `json:"examples"` // smallest indices of texts holding it
}

// skyline keeps, for one filter, every distinct corpus window that might be
// among the k negative n-grams with the largest HeldDown for any threshold,
// which is not known until the pass ends.
//
// Window y dominates window x when P_y ≥ P_x and a_y ≤ a_x (ties broken by
// the ids, so that dominance is a strict order): for every threshold θ, x
// valid (P_x ≥ θ > a_x) makes y valid, and y then holds at least as far
// down (P_y − a_y ≥ P_x − a_x). A window with k dominators can never be in
// the top k, and neither can any window it dominates, so the skyline keeps
// exactly the windows seen with fewer than k dominators (the k-skyline): an
// evicted window's dominators stay dominated by at least k kept ones, so
// the count over the kept ones decides membership. A window once out stays
// out; a kept window sees every occurrence while it holds down by at least
// dmin (below, and it cannot be among the k), so its count is exact. For
// random points its size grows like k·ln(n).
//
// The search covers the thresholds of a band [lo, hi] (see bankScreen). A
// window negative for every threshold of the band (P ≥ hi, a < lo) beats,
// for every threshold, any window that holds down less; so the k largest
// HeldDown values of such windows (best, a min-heap) give a floor dmin
// below which a window can be dropped, and kept ones are dropped from the
// skyline too.
type skyline struct {
	k     int
	keep  int // examples per n-gram
	items []*skyEntry
	// ps, as and doms hold the items' P, a and dominators seen (stops at
	// k), in the same order, so that the scans of add read contiguous
	// memory.
	ps, as []float32
	doms   []int32
	// stair[i] is the k-th smallest a of items 0…i (+Inf while fewer
	// than k): a window whose place comes after item i and whose a is
	// at least stair[i] has k dominators. Evicting a window with k
	// dominators leaves every value unchanged (its a is at least the
	// k-th smallest of any prefix holding it).
	stair []float32
	heap  []float32 // scratch of restair
	// fresh counts insertions since the screen was last updated.
	fresh  int
	lo, hi float32
	best   []float32 // min-heap of the k largest HeldDown of band-wide windows
	floor  float32   // the floor the screen was last given
}

type skyEntry struct {
	key      string // the window's ids, 4 bytes each
	a, p     float32
	count    int
	examples []int
	inBest   bool // its HeldDown is in best
}

func newSkyline(k, keep int) *skyline {
	return &skyline{k: k, keep: keep, lo: negInf, hi: posInf, floor: negInf}
}

// dmin is the HeldDown floor (−Inf while best holds fewer than k values).
func (s *skyline) dmin() float32 {
	if len(s.best) < s.k {
		return negInf
	}
	return s.best[0]
}

// setBand narrows the band to [lo, hi] (inside the one before) and adds
// to best the kept windows that are now negative for all of it.
func (s *skyline) setBand(lo, hi float32) {
	s.lo, s.hi = lo, hi
	for _, e := range s.items {
		s.noteBest(e)
	}
	s.fresh++
}

// noteBest adds e's HeldDown to best when e is negative for the whole band.
func (s *skyline) noteBest(e *skyEntry) {
	if e.inBest || !(e.p >= s.hi && e.a < s.lo) {
		return
	}
	e.inBest = true
	s.best = pushLargest(s.best, e.p-e.a, s.k)
}

// pushLargest keeps the k largest values in a min-heap h.
func pushLargest(h []float32, v float32, k int) []float32 {
	if len(h) == k {
		if v <= h[0] {
			return h
		}
		h[0] = v
	} else {
		h = append(h, v)
		for i := len(h) - 1; i > 0; {
			p := (i - 1) / 2
			if h[p] <= h[i] {
				return h
			}
			h[p], h[i] = h[i], h[p]
			i = p
		}
		return h
	}
	for i := 0; ; {
		l, r, m := 2*i+1, 2*i+2, i
		if l < len(h) && h[l] < h[m] {
			m = l
		}
		if r < len(h) && h[r] < h[m] {
			m = r
		}
		if m == i {
			return h
		}
		h[i], h[m] = h[m], h[i]
		i = m
	}
}

// add records one occurrence in text of the window whose ids are encoded
// in kb (4 bytes each, least significant first), with pre-activation a and
// positive part p. Items are kept in the order of descending P, then
// ascending a and ids, so that a window's dominators all come before its
// place and the windows it dominates all after.
//
// The same ids always give the same (a, P) (the slot scores are a table
// by id, summed in slot order), so a kept window is found at its place in
// that order, without an index. A window holding down by less than dmin
// is dropped before it is looked for, even when kept: dmin only grows, so
// such a window can never be among the k (k band-wide windows beat it for
// every threshold of the band), and its count is no longer needed.
func (s *skyline) add(kb []byte, a, p float32, text int) {
	if p-a < s.dmin() {
		return
	}
	// The items with a larger P all come first: when k of them have an a
	// not larger, the window is dominated k times, and it is not kept
	// (a kept window has fewer than k dominators).
	above := countGreater(s.ps, p)
	if above > 0 && s.stair[above-1] <= a {
		return
	}
	key := unsafe.String(unsafe.SliceData(kb), len(kb))
	at := s.placeFrom(above, key, a, p)
	if at < len(s.items) && s.ps[at] == p && s.as[at] == a && s.items[at].key == key {
		e := s.items[at]
		e.count++
		if !slices.Contains(e.examples, text) {
			e.examples = insertSmallest(e.examples, text, s.keep)
		}
		return
	}
	// Every item before at comes first in the order, so it dominates the
	// window exactly when its a is not larger.
	if at > 0 && s.stair[at-1] <= a {
		return
	}
	d := countAtMost(s.as[:at], a, s.k)
	x := &skyEntry{key: string(kb), a: a, p: p, count: 1, examples: []int{text}} // kb is a reused buffer
	s.noteBest(x)
	s.items = slices.Insert(s.items, at, x)
	s.ps = slices.Insert(s.ps, at, p)
	s.as = slices.Insert(s.as, at, a)
	s.doms = slices.Insert(s.doms, at, int32(d))
	s.stair = slices.Insert(s.stair, at, 0)
	s.restair(at)
	s.fresh++
	// The window dominates exactly the items after it with a not smaller.
	full := false
	for i, v := range s.as[at+1:] {
		if v >= a {
			j := at + 1 + i
			s.doms[j]++
			full = full || s.doms[j] >= int32(s.k)
		}
	}
	if full {
		s.evictDominated(at + 1)
	}
}

// restair updates stair after the window at item at, with a below
// stair[at−1], was inserted. Only the values above a change: stair does
// not grow along the items, so they end at the first old value at or
// below a. There the k smallest a so far are rebuilt from the items
// before at.
func (s *skyline) restair(at int) {
	a := s.as[at]
	end := at + 1
	for end < len(s.stair) && s.stair[end] > a {
		end++
	}
	s.heap = kSmallest(s.heap[:0], s.as[:at], s.k)
	s.stairFrom(at, end)
}

// stairFrom sets stair[from:to] with heap holding the k smallest a of the
// items before from (all of them when fewer).
func (s *skyline) stairFrom(from, to int) {
	h := s.heap
	for i := from; i < to; i++ {
		h = pushSmallest(h, s.as[i], s.k)
		if len(h) == s.k {
			s.stair[i] = h[0]
		} else {
			s.stair[i] = posInf
		}
	}
	s.heap = h
}

// kSmallest appends to h[:0] the k smallest values of vs as a max-heap
// (see pushSmallest). It reads vs from the end: along the skyline a falls
// with P, so from the end most values are larger than the heap's largest
// and cost one comparison.
func kSmallest(h, vs []float32, k int) []float32 {
	i := len(vs) - 1
	for ; len(h) < k && i >= 0; i-- {
		h = pushSmallest(h, vs[i], k)
	}
	for ; i >= 0; i-- {
		if v := vs[i]; v < h[0] {
			h = pushSmallest(h, v, k)
		}
	}
	return h
}

// countGreater is the number of values of the descending list ps above p
// (a binary search without data-dependent branches).
func countGreater(ps []float32, p float32) int {
	lo, n := 0, len(ps)
	for n > 0 {
		half := n / 2
		if ps[lo+half] > p {
			lo += half + 1
			n -= half + 1
		} else {
			n = half
		}
	}
	return lo
}

// countAtMost counts the values of vs at or below a, stopping once the
// count reaches k (then it returns at least k).
func countAtMost(vs []float32, a float32, k int) int {
	d := 0
	for len(vs) >= 16 {
		for _, v := range vs[:16] {
			if v <= a {
				d++
			}
		}
		if d >= k {
			return d
		}
		vs = vs[16:]
	}
	for _, v := range vs {
		if v <= a {
			d++
		}
	}
	return d
}

// evictDominated drops the items from i on that have k dominators.
func (s *skyline) evictDominated(i int) {
	n := i
	for ; i < len(s.items); i++ {
		if s.doms[i] < int32(s.k) {
			s.items[n], s.ps[n], s.as[n], s.doms[n], s.stair[n] = s.items[i], s.ps[i], s.as[i], s.doms[i], s.stair[i]
			n++
		}
	}
	s.truncate(n)
}

// truncate keeps the first n items.
func (s *skyline) truncate(n int) {
	clear(s.items[n:])
	s.items, s.ps, s.as, s.doms, s.stair = s.items[:n], s.ps[:n], s.as[:n], s.doms[:n], s.stair[:n]
}

// placeFrom is where a window (key, a, p) goes in the order of the items
// (descending P, then ascending a, then ids): after every item that comes
// first. The first lo items have a larger P. The ids are compared only on
// a tie in P and a.
func (s *skyline) placeFrom(lo int, key string, a, p float32) int {
	hi := lo
	for hi < len(s.ps) && s.ps[hi] == p {
		hi++
	}
	for lo < hi {
		mid := int(uint(lo+hi) >> 1)
		var before bool
		if ya := s.as[mid]; ya != a {
			before = ya < a
		} else {
			before = s.items[mid].key < key
		}
		if before {
			lo = mid + 1
		} else {
			hi = mid
		}
	}
	return lo
}

// screen writes the skyline's staircase corners for filter f into sc: a
// corner (P, a) is such that k kept windows have P_y ≥ P and a_y ≤ a, so a
// window with P_x < P and a_x ≥ a has k dominators. The corners are spread
// over the staircase in its order, so they run down as bankScreen asks.
// It does nothing while fewer than k windows are kept.
func (s *skyline) screen(sc *bankScreen, f int) {
	s.fresh = 0
	floor := s.dmin()
	sc.dmin[f], s.floor = max(floor, minHeldDown), floor
	n := 0
	for i, e := range s.items {
		if s.ps[i]-s.as[i] >= floor {
			s.items[n], s.ps[n], s.as[n], s.doms[n] = e, s.ps[i], s.as[i], s.doms[i]
			n++
		}
	}
	if n < len(s.items) {
		s.truncate(n)
		s.heap = s.heap[:0]
		s.stairFrom(0, n)
	}
	if n < s.k {
		return
	}
	// The staircase runs down in P from item k−1 on.
	const k = corners - 2 // the first two corners hold the band
	for i := range k {
		j := s.k - 1 + i*(n-s.k)/(k-1)
		sc.pc[2+i][f], sc.ac[2+i][f] = s.ps[j], s.stair[j]
	}
}

// pushSmallest keeps the k smallest values in a max-heap h.
func pushSmallest(h []float32, v float32, k int) []float32 {
	if len(h) < k {
		h = append(h, v)
		for i := len(h) - 1; i > 0; {
			p := (i - 1) / 2
			if h[p] >= h[i] {
				break
			}
			h[p], h[i] = h[i], h[p]
			i = p
		}
		return h
	}
	if v >= h[0] {
		return h
	}
	h[0] = v
	for i := 0; ; {
		l, r, m := 2*i+1, 2*i+2, i
		if l < len(h) && h[l] > h[m] {
			m = l
		}
		if r < len(h) && h[r] > h[m] {
			m = r
		}
		if m == i {
			break
		}
		h[i], h[m] = h[m], h[i]
		i = m
	}
	return h
}

// needsScreen reports whether enough windows were added since the last
// screen update to make another worth its cost (a sort of the skyline).
func (s *skyline) needsScreen() bool {
	return s.fresh > 0 && (len(s.items) < 4*s.k || s.fresh >= len(s.items)/8 || s.dmin() > s.floor)
}

// negativeNgrams merges the workers' skylines of filter g and returns the
// valid windows (P ≥ θ > a, in float32 as the kernels computed them) with
// the largest HeldDown, ties by ids, at most k. Counts add up over workers:
// a window among the top k is kept by every worker that saw it.
func negativeNgrams(st *SlotTable, g int, skies []*skyline, theta float32, k, keep int) []NegativeNgram {
	merged := map[string]*skyEntry{}
	for _, s := range skies {
		for _, e := range s.items {
			if !(e.p >= theta && e.a < theta) {
				continue
			}
			if x, ok := merged[e.key]; ok {
				x.count += e.count
				for _, t := range e.examples {
					if !slices.Contains(x.examples, t) {
						x.examples = insertSmallest(x.examples, t, keep)
					}
				}
			} else {
				cp := *e
				cp.examples = slices.Clone(e.examples)
				merged[e.key] = &cp
			}
		}
	}
	all := make([]*skyEntry, 0, len(merged))
	held := make(map[*skyEntry]float64, len(merged))
	for _, e := range merged {
		all = append(all, e)
		held[e] = heldDown(st, g, e.key)
	}
	slices.SortFunc(all, func(x, y *skyEntry) int {
		if c := cmp.Compare(held[y], held[x]); c != 0 {
			return c
		}
		return strings.Compare(x.key, y.key)
	})
	out := make([]NegativeNgram, 0, min(k, len(all)))
	for _, e := range all[:min(k, len(all))] {
		out = append(out, makeNegative(st, g, e))
	}
	return out
}

// heldDown is −Σ of the negative slot scores of filter g's window key,
// summed in float64 in slot order: windows that share their negative
// slots and words tie exactly, whatever their other slots (the float32
// difference of the kernels' sums P − a would split such ties by
// rounding, differently when the filter is rescaled).
func heldDown(st *SlotTable, g int, key string) float64 {
	var d float64
	for s := 0; s < len(key)/4; s++ {
		if v := float64(st.SlotScore(g, s, keyID(key, s))); v < 0 {
			d -= v
		}
	}
	return d
}

// keyID is the id at slot s of a window key.
func keyID(key string, s int) int32 {
	k := key[4*s:]
	return int32(uint32(k[0]) | uint32(k[1])<<8 | uint32(k[2])<<16 | uint32(k[3])<<24)
}

func makeNegative(st *SlotTable, g int, e *skyEntry) NegativeNgram {
	m := st.m
	w := len(e.key) / 4
	n := NegativeNgram{IDs: make([]int32, w), Tokens: make([]string, w), Slots: make([]float64, w),
		Activation: float64(e.a), Positive: float64(e.p), HeldDown: heldDown(st, g, e.key),
		Count: e.count, Examples: e.examples}
	for s := 0; s < w; s++ {
		k := e.key[4*s:]
		id := int32(uint32(k[0]) | uint32(k[1])<<8 | uint32(k[2])<<16 | uint32(k[3])<<24)
		n.IDs[s], n.Tokens[s] = id, wordOf(m, id)
		n.Slots[s] = float64(st.SlotScore(g, s, id))
		if n.Slots[s] < 0 {
			n.NegativeSlots = append(n.NegativeSlots, s)
			n.Words = append(n.Words, n.Tokens[s])
		}
	}
	return n
}

package explain

import (
	"cmp"
	"math"
	"slices"
	"sort"

	"telltale/cnn"
	"telltale/corpus"
)

// finishProfile merges the workers' accumulators of filter g.
func finishProfile(st *SlotTable, g, class int, accs []*filterAccs, counts []int, texts int, haveGold bool, opt *ProfileOptions,
	sel Selectivity, negExact bool) FilterProfile {
	m := st.m
	pr := FilterProfile{Filter: g, Width: m.FilterWidth(g), Masked: m.IsMasked(g), Class: class,
		Label: labelNames(m)[class]}
	pr.CentredVotes, pr.Margin = filterVotes(m, g, class)
	hist := make([]int, 4*fineBins)
	var top []actEntry
	dropped := false
	merged := map[string]*ngramEntry{}
	var scale float32
	skies := make([]*skyline, len(accs))
	fams := make([]*famSample, len(accs))
	for w, a := range accs {
		fa := &a.filters[g]
		scale = fa.scale
		pr.Fired += fa.fired
		pr.Hist.NotFired += fa.notFired
		pr.MaxActivation = max(pr.MaxActivation, float64(fa.maxAct))
		for i, v := range fa.total {
			hist[i] += int(v)
		}
		top = append(top, fa.top.e...)
		dropped = dropped || fa.top.dropped
		mergeNgrams(merged, fa.pool.e, opt.Examples)
		skies[w], fams[w] = fa.sky, fa.fam
	}
	slices.SortFunc(top, func(a, b actEntry) int { return cmp.Compare(b.a, a.a) })
	if len(top) > opt.ExactTop {
		top, dropped = top[:opt.ExactTop], true
	}
	both := halfHist(hist, -1)
	pr.Threshold, pr.ThresholdExact, pr.Above, pr.AbovePurity = purityThreshold(top, dropped, both, scale, opt.Purity)
	pr.Idle = pr.Masked || pr.Above < max(5, int(math.Ceil(opt.IdleShare*float64(texts))))
	pr.Hist = displayHist(both, scale, opt.Bins, pr.Hist.NotFired)
	pr.Selectivity, pr.NegativesExact = sel, negExact

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
	pool = pool[:min(opt.TopK, len(pool))]
	for _, e := range pool {
		pr.TopNgrams = append(pr.TopNgrams, makeNgram(st, g, e, haveGold))
	}
	pr.Slots = slotWords(st, g, counts, opt.SlotWords, opt.MinCount)
	if theta := pr.Selectivity.Threshold; !math.IsInf(theta, 1) {
		pr.Negatives = negativeNgrams(st, g, skies, float32(theta), opt.Negatives, opt.Examples)
		sample := mergeSamples(fams, hist, opt.FamilySample)
		ws, _ := sample.above(float32(theta), 0)
		mws, _ := sample.above(float32(theta), 1)
		pr.FamilySample, pr.FamilyMeasured = len(ws), len(mws)
		pr.Families = buildFamilies(st, g, &sample, float32(theta), opt.FamilyCut, opt.Seed, sel.Above)
	}
	pr.setLogOdds(VoteScale(m, g))
	return pr
}

// setLogOdds fills the shown, identified figures of pr (the fields named
// …LogOdds) from the raw ones, r being the filter's VoteScale.
func (pr *FilterProfile) setLogOdds(r float64) {
	pr.CentredVotesLogOdds = make([]float64, len(pr.CentredVotes))
	for c, v := range pr.CentredVotes {
		pr.CentredVotesLogOdds[c] = v * pr.MaxActivation
	}
	pr.MarginLogOdds = pr.Margin * pr.MaxActivation
	pr.MaxLogOdds = inLogOdds(pr.MaxActivation, r)
	pr.Selectivity.ThresholdLogOdds = inLogOdds(pr.Selectivity.Threshold, r)
	pr.Hist.EdgesLogOdds = allInLogOdds(pr.Hist.Edges, r)
	for i := range pr.TopNgrams {
		n := &pr.TopNgrams[i]
		n.SlotsLogOdds, n.ActivationLogOdds = allInLogOdds(n.Slots, r), inLogOdds(n.Activation, r)
	}
	for i := range pr.Negatives {
		n := &pr.Negatives[i]
		n.SlotsLogOdds, n.ActivationLogOdds = allInLogOdds(n.Slots, r), inLogOdds(n.Activation, r)
		n.PositiveLogOdds, n.HeldDownLogOdds = inLogOdds(n.Positive, r), inLogOdds(n.HeldDown, r)
	}
	for i := range pr.Slots {
		for _, ws := range [][]WordScore{pr.Slots[i].Triggers, pr.Slots[i].Suppressors} {
			for j := range ws {
				ws[j].ScoreLogOdds = inLogOdds(ws[j].Score, r)
			}
		}
	}
	for i := range pr.Families {
		f := &pr.Families[i]
		f.CentroidLogOdds = allInLogOdds(f.Centroid, r)
		for j := range f.Slots {
			f.Slots[j].MeanLogOdds = inLogOdds(f.Slots[j].Mean, r)
		}
	}
}

// filterVotes returns filter g's output-weight column minus its mean, and
// the margin of class over the next largest vote: the identified parts of
// the column (adding a constant to all of it changes neither).
func filterVotes(m *cnn.Model, g, class int) (centred []float64, margin float64) {
	nf := m.Config.NumFilters()
	C := m.Config.Classes
	votes, centred := make([]float64, C), make([]float64, C)
	var mean float64
	second := math.Inf(-1)
	for c := 0; c < C; c++ {
		votes[c] = float64(m.OutW[c*nf+g])
		mean += votes[c] / float64(C)
		if c != class {
			second = max(second, votes[c])
		}
	}
	for c := range centred {
		centred[c] = votes[c] - mean
	}
	return centred, votes[class] - second
}

// mergeNgrams adds a worker's top n-grams to merged.
func mergeNgrams(merged map[string]*ngramEntry, es []*ngramEntry, keep int) {
	for _, e := range es {
		if x, ok := merged[e.key]; ok {
			x.count += e.count
			for c := range x.byPred {
				x.byPred[c] += e.byPred[c]
			}
			for c := range x.byGold {
				x.byGold[c] += e.byGold[c]
			}
			for _, t := range e.examples {
				x.examples = insertSmallest(x.examples, t, keep)
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

// halfHist returns the fine histogram [bin][in-class] of one half (0 or
// 1), or of both (−1), from the [bin][half][in-class] one.
func halfHist(hist []int, hf int) []int {
	out := make([]int, 2*fineBins)
	for j := 0; j < fineBins; j++ {
		for h := 0; h < 2; h++ {
			if hf < 0 || hf == h {
				out[2*j] += hist[4*j+2*h]
				out[2*j+1] += hist[4*j+2*h+1]
			}
		}
	}
	return out
}

// mergedSelectivity merges the workers' largest activations and
// histograms of filter g and computes its Selectivity.
func mergedSelectivity(g, class int, accs []*filterAccs, opt *ProfileOptions) Selectivity {
	hist := make([]int, 4*fineBins)
	var top []actEntry
	dropped := false
	var scale float32
	for _, a := range accs {
		fa := &a.filters[g]
		scale = fa.scale
		for i, v := range fa.total {
			hist[i] += int(v)
		}
		top = append(top, fa.top.e...)
		dropped = dropped || fa.top.dropped
	}
	slices.SortFunc(top, func(a, b actEntry) int { return cmp.Compare(b.a, a.a) })
	if len(top) > opt.ExactTop {
		top, dropped = top[:opt.ExactTop], true
	}
	return selectivity(top, dropped, hist, scale, class, accs, opt)
}

// selectivity chooses the threshold on the choosing half and tests it on
// the held-out half (see Selectivity). Top holds the largest activations of
// both halves in descending order.
func selectivity(top []actEntry, dropped bool, hist []int, scale float32, class int, accs []*filterAccs, opt *ProfileOptions) Selectivity {
	var texts, assigned [2]int
	for _, a := range accs {
		for h := range texts {
			texts[h] += a.texts[h]
			assigned[h] += a.assigned[h][class]
		}
	}
	s := Selectivity{Share: opt.Selective, Threshold: math.Inf(1), ThresholdExact: true}
	if texts[0] > 0 {
		base := float64(assigned[0]) / float64(texts[0])
		s.Target = base + opt.Selective*(1-base)
		var choose []actEntry
		for _, e := range top {
			if !e.half {
				choose = append(choose, e)
			}
		}
		// Above the floor of top every window is kept, so the choosing
		// half's part of it is complete there too.
		floor := negInf
		if len(top) > 0 {
			floor = top[len(top)-1].a
		}
		s.Threshold, s.ThresholdExact, _, _ = purityThresholdAbove(choose, dropped, floor, halfHist(hist, 0), scale, s.Target)
	}
	var windows, inClass int
	if !math.IsInf(s.Threshold, 1) {
		fromTop := !dropped || s.Threshold > float64(top[len(top)-1].a)
		s.Above, _ = countAbove(top, fromTop, halfHist(hist, -1), scale, s.Threshold, -1)
		windows, inClass = countAbove(top, fromTop, halfHist(hist, 1), scale, s.Threshold, 1)
	}
	s.heldOutTest(windows, inClass, texts[1], assigned[1], opt.Alpha)
	return s
}

// countAbove counts the winning windows with activation ≥ thr (and of
// those, the ones in class) in one half (hf 0 or 1) or both (−1): from the
// list top when it holds them all (fromTop), else from the fine histogram
// hist of that half, thr being a bin edge.
func countAbove(top []actEntry, fromTop bool, hist []int, scale float32, thr float64, hf int) (n, in int) {
	if fromTop {
		for _, e := range top {
			if float64(e.a) < thr {
				break
			}
			if hf < 0 || e.half == (hf == 1) {
				n++
				if e.in {
					in++
				}
			}
		}
		return n, in
	}
	j0 := int(math.Round(thr * float64(scale)))
	for j := j0; j < fineBins; j++ {
		n += hist[2*j] + hist[2*j+1]
		in += hist[2*j+1]
	}
	return n, in
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
// (count ≥ edge is exact there, the edge itself is the approximation), and
// an answer from the kept values (or none) is exact only when no bin below
// them could hold a threshold between its edges.
func purityThreshold(top []actEntry, dropped bool, hist []int, scale float32, p float64) (thr float64, exact bool, above int, purity float64) {
	floor := negInf
	if len(top) > 0 {
		floor = top[len(top)-1].a
	}
	return purityThresholdAbove(top, dropped, floor, hist, scale, p)
}

// purityThresholdAbove is purityThreshold when top holds every window above
// floor (and maybe some at it), which may be above its last value: top may
// hold one half of the windows the floor was set on.
func purityThresholdAbove(top []actEntry, dropped bool, floor float32, hist []int, scale float32, p float64) (thr float64, exact bool, above int, purity float64) {
	if dropped {
		cumAt, inAt := make([]int, fineBins), make([]int, fineBins)
		var cum, in int
		for j := fineBins - 1; j >= 0; j-- {
			cum += hist[2*j] + hist[2*j+1]
			in += hist[2*j+1]
			cumAt[j], inAt[j] = cum, in
		}
		// A threshold inside bin j is possible only if the bin's in-class
		// windows all above it and the others all below could reach p.
		possible := false
		for j := 0; j < fineBins && float32(j)/scale <= floor; j++ {
			if cumAt[j] > 0 && float64(inAt[j]) >= p*float64(cumAt[j]) {
				return float64(float32(j) / scale), false, cumAt[j], float64(inAt[j]) / float64(cumAt[j])
			}
			inBin, above := hist[2*j+1], 0
			if j+1 < fineBins {
				above = cumAt[j+1]
			}
			if inBin > 0 && float64(inAt[j]) >= p*float64(above+inBin) {
				possible = true
			}
		}
		// Above the floor every window is kept: values equal to the floor
		// may have lost ties and are left out.
		k := len(top)
		for k > 0 && top[k-1].a == floor {
			k--
		}
		thr, _, above, purity = purityThresholdAbove(top[:k], false, floor, nil, scale, p)
		return thr, !possible, above, purity
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

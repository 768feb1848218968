package cnn

import (
	"cmp"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/stat/distuv"
)

// The percentile bootstrap over texts (BootstrapF1s, BootstrapMacroF1)
// sees only the errors the sample holds. Where a class has few errors (or
// few right texts) its resamples cannot hold many more, so the interval is
// too narrow: with about 4 errors in 390 texts it covers the macro-F1 in
// about 90% of samples, and where the texts pin a figure (a class none of
// whose texts is an error, or none right; with no error at all, as in
// SpamAssassin's 390 test texts) it shrinks to a point, which eval printed
// "macro-F1 1.000 (1.000–1.000)". There the tool shows an exact interval
// instead, built on the Clopper–Pearson interval of a binomial proportion
// (Clopper & Pearson 1934, "The use of confidence or fiducial limits
// illustrated in the case of the binomial", Biometrika 26:404–413).
//
// A class's F1 as a binomial proportion. Call the texts gold c or
// predicted c class c's texts: n_c = TP_c + FP_c + FN_c of them, and every
// one that is an error counts once in FP_c + FN_c (as a false negative of
// its gold class when that is c, a false positive of its predicted class
// when that is c, never both), so e_c = FP_c + FN_c of them are errors and
// F1_c = 2TP_c/(2TP_c + e_c) = f(e_c/n_c) with f(r) = 2(1−r)/(2−r), which
// falls from 1 at r = 0 to 0 at r = 1. The texts being drawn independently,
// given n_c the count e_c is Binomial(n_c, r_c), where r_c is the share of
// errors among class c's texts in the population the texts are drawn from,
// and the population's F1 (the figure the sample's tends to) is f(r_c).
// So [f(hi), f(lo)], with [lo, hi] the Clopper–Pearson interval of e_c of
// n_c, is an interval of F1_c at the level of the Clopper–Pearson interval:
// exact in its sense, conservative (coverage at least the level, given n_c
// and so overall, whatever the counts), holding the estimate f(e_c/n_c),
// within [0, 1], and never a point while n_c ≥ 1: at e_c = 0 it is
// [f(1 − ((1−level)/2)^(1/n_c)), 1], at e_c = n_c it is
// [0, f(((1−level)/2)^(1/n_c))].
//
// Macro and weighted F1. With the m classes present in gold or predictions,
// each at the level 1 − (1−level)/m, every class's F1 lies in its interval
// at once with probability at least the level (Bonferroni's inequality,
// which needs no independence between the classes). The macro-F1 is the
// mean of the m F1s, so it lies between the mean of their lower bounds and
// the mean of their upper bounds. The weighted F1 is a mean of the F1s of
// the classes with gold texts under weights (their shares) that are not
// known exactly: with each share in its Clopper–Pearson interval as well
// (2g intervals for the g classes with gold texts, each at 1 − (1−level)/(2g)),
// it lies between the least and the greatest mean of the F1s' bounds
// under shares in those intervals (exactWeightedF1). Both are
// conservative bounds, for the classes present in the texts (a class
// absent from them has no F1 to bound), wider than the bootstrap's where
// errors are many.
//
// Which interval is used when. A class is thin when fewer than
// thinCount of its texts are errors, or fewer than thinCount are right
// (min(TP_c, e_c) < thinCount; pinned is the case 0). A thin class's F1
// gets the exact interval; the macro-F1 gets the exact bound where some
// class present is thin; the weighted F1, a mean weighted by the classes'
// texts that moves with the errors of all classes together, gets its
// exact bound where fewer than thinCount texts in all are errors, or
// fewer than thinCount right. Everywhere else a figure keeps
// its percentile bootstrap interval, which follows the sample's
// dependence between the classes that these bounds give up (and is
// checked against SciPy's and by its coverage) and is the narrower there.
// The mixture's coverage is measured by simulation, not proved
// (TestF1IntervalsOfCoverageWithRareErrors: two classes at 0.1% to 10%
// errors, three classes at 1% and 5%; every figure at least 95% less
// three standard errors of the simulation).

// thinCount is the count of errors, or of right texts, below which a
// class is thin and its F1 gets the exact interval (see above). It was
// measured, not derived: in a simulation of sets of 390 to 1,000 texts of
// two or three classes with 0.3% to 20% errors (testdata/thin_threshold.py,
// seeded; numpy's multinomial draws and SciPy's beta quantiles, the
// percentile bootstrap of 1,000 resamples), the macro-F1's interval under
// this rule covered 94–100% of sets at threshold 10, against 93.5% at 5
// and down to 69% for the bootstrap alone (with 1.2 errors per set on
// average).
const thinCount = 10

// ClopperPearsonInterval is the proportion k/n with its exact
// Clopper–Pearson interval at the two-sided level: the (1−level)/2
// quantile of Beta(k, n−k+1) and the (1+level)/2 quantile of
// Beta(k+1, n−k), 0 at k = 0 and 1 at k = n. Preconditions: 0 ≤ k ≤ n,
// 0 < level < 1. With n = 0 it is 0 in [0, 1].
func ClopperPearsonInterval(k, n int, level float64) Interval {
	if k < 0 || k > n || !(level > 0 && level < 1) {
		panic(fmt.Sprintf("cnn: ClopperPearsonInterval(%d, %d, %g): need 0 ≤ k ≤ n and a level in (0, 1)", k, n, level))
	}
	if n == 0 {
		return Interval{Low: 0, High: 1}
	}
	a := (1 - level) / 2
	iv := Interval{Estimate: float64(k) / float64(n), Low: 0, High: 1, Method: MethodClopperPearson}
	if k > 0 {
		iv.Low = distuv.Beta{Alpha: float64(k), Beta: float64(n - k + 1)}.Quantile(a)
	}
	if k < n {
		iv.High = distuv.Beta{Alpha: float64(k + 1), Beta: float64(n - k)}.Quantile(1 - a)
	}
	return iv
}

// f1OfErrorShare is f(r) = 2(1−r)/(2−r), the F1 of a class whose texts
// (gold or predicted as it) are errors in the share r.
func f1OfErrorShare(r float64) float64 { return 2 * (1 - r) / (2 - r) }

// exactClassF1 is the exact interval at the two-sided level of the F1 of a
// class with tp right texts and e errors among its texts (see above):
// f mapped over the Clopper–Pearson interval of e of tp+e. Its Estimate is
// 2tp/(2tp+e). Precondition: tp+e ≥ 1.
func exactClassF1(tp, e int, level float64) Interval {
	r := ClopperPearsonInterval(e, tp+e, level)
	return Interval{Estimate: ratio(2*tp, 2*tp+e), Low: f1OfErrorShare(r.High), High: f1OfErrorShare(r.Low), Method: MethodExactF1}
}

// thinF1 reports whether a class with tp right texts and e errors among
// its texts is thin (see above): it has texts, and fewer than thinCount
// of them are errors or fewer than thinCount right.
func thinF1(tp, e int) bool { return tp+e > 0 && min(tp, e) < thinCount }

// exactF1s replaces in f (BootstrapF1s of confusion at level) the
// intervals of the figures of thin classes by their exact intervals (see
// above), keeping every Estimate.
func exactF1s(confusion [][]int, f *F1Intervals, level float64) {
	k := len(confusion)
	flat, n, wrong := flatten(confusion)
	if n == 0 {
		return
	}
	for c := range k {
		tp, fp, fn := classCounts(flat, k, c)
		if tp+fn > 0 && thinF1(tp, fp+fn) {
			iv := exactClassF1(tp, fp+fn, level)
			f.PerClass[c].Low, f.PerClass[c].High, f.PerClass[c].Method = iv.Low, iv.High, iv.Method
		}
	}
	if lo, hi, ok := exactMacroF1(flat, k, level); ok {
		f.Macro.Low, f.Macro.High, f.Macro.Method = lo, hi, MethodExactBonferroni
	}
	if min(wrong, n-wrong) < thinCount {
		f.Weighted.Low, f.Weighted.High = exactWeightedF1(flat, k, level)
		f.Weighted.Method = MethodExactBound
	}
}

// flatten is the k×k confusion matrix (rows gold) as row-major counts,
// with its number of texts n and of errors wrong. Precondition: a square
// matrix (textCells checks it).
func flatten(confusion [][]int) (flat []int, n, wrong int) {
	k := len(confusion)
	flat = make([]int, k*k)
	for g, row := range confusion {
		for p, c := range row {
			flat[g*k+p] = c
			n += c
			if g != p {
				wrong += c
			}
		}
	}
	return flat, n, wrong
}

// simultaneousF1s is the exact interval of the F1 of every class present
// in the k×k confusion counts flat (row-major, rows gold) at the level
// 1 − (1−level)/m, m the classes present, so that all hold at once at
// level (Bonferroni); present[c] says whether class c is.
func simultaneousF1s(flat []int, k int, level float64) (ivs []Interval, present []bool) {
	m := 0
	for c := range k {
		tp, fp, fn := classCounts(flat, k, c)
		if tp+fp+fn > 0 {
			m++
		}
	}
	ivs, present = make([]Interval, k), make([]bool, k)
	for c := range k {
		tp, fp, fn := classCounts(flat, k, c)
		if tp+fp+fn > 0 {
			ivs[c], present[c] = exactClassF1(tp, fp+fn, 1-(1-level)/float64(m)), true
		}
	}
	return ivs, present
}

// exactMacroF1 is the exact bound of the macro-F1 of the k×k confusion
// counts flat at level (see above): the means of the lower and of the
// upper bounds of simultaneousF1s; ok is false, and the bootstrap's
// interval stays, unless some class present is thin.
func exactMacroF1(flat []int, k int, level float64) (lo, hi float64, ok bool) {
	m, thin := 0, false
	for c := range k {
		tp, fp, fn := classCounts(flat, k, c)
		if tp+fp+fn > 0 {
			thin = thin || thinF1(tp, fp+fn)
			m++
		}
	}
	if !thin {
		return 0, 0, false
	}
	ivs, present := simultaneousF1s(flat, k, level)
	for c, iv := range ivs {
		if present[c] {
			lo += iv.Low
			hi += iv.High
		}
	}
	return lo / float64(m), hi / float64(m), true
}

// exactWeightedF1 is the exact bound of the weighted F1 of the k×k
// confusion counts flat at level (see above). The weighted F1 of the
// population is Σ π_c F1_c over the g classes with gold texts, π_c the
// class's share of the gold labels. Each F1_c in its exact interval and
// each π_c in the Clopper–Pearson interval of its gold texts among all,
// the 2g intervals at level 1 − (1−level)/(2g) so that all hold at once
// (Bonferroni; with g = 1 the share is 1 and the one F1 at level), the figure lies between the least and the greatest of
// Σ w_c F1_c over shares w in their intervals that sum to 1 and F1s in
// theirs (weightedExtreme). Precondition: some text.
func exactWeightedF1(flat []int, k int, level float64) (lo, hi float64) {
	var gold []int
	total := 0
	for c := range k {
		if tp, _, fn := classCounts(flat, k, c); tp+fn > 0 {
			gold = append(gold, c)
			total += tp + fn
		}
	}
	// With one class the share is 1 and needs no interval.
	each := level
	if len(gold) > 1 {
		each = 1 - (1-level)/float64(2*len(gold))
	}
	lows, highs := make([]float64, len(gold)), make([]float64, len(gold))
	shares := make([]Interval, len(gold))
	for j, c := range gold {
		tp, fp, fn := classCounts(flat, k, c)
		iv := exactClassF1(tp, fp+fn, each)
		lows[j], highs[j] = iv.Low, iv.High
		shares[j] = ClopperPearsonInterval(tp+fn, total, each)
	}
	return weightedExtreme(shares, lows, false), weightedExtreme(shares, highs, true)
}

// weightedExtreme is the least (greatest when most) of Σ w_j x_j over the
// weights w_j in [shares[j].Low, shares[j].High] that sum to 1: each
// weight at its lower bound, then what is left of 1 given to the
// smallest x first (the largest when most), each up to its upper bound
// (the greedy solution of this linear programme, a fractional knapsack).
// Precondition: the bounds' lows sum to at most 1 and their highs to at
// least 1 (they hold the sample's shares, which sum to 1).
func weightedExtreme(shares []Interval, x []float64, most bool) float64 {
	order := make([]int, len(x))
	for j := range order {
		order[j] = j
	}
	slices.SortFunc(order, func(a, b int) int {
		if most {
			return cmp.Compare(x[b], x[a])
		}
		return cmp.Compare(x[a], x[b])
	})
	// Σ w_j x_j as x_first + Σ w_j (x_j − x_first), exact where the x
	// are equal, so the bound holds the estimate to the last bit.
	first := x[order[0]]
	left, sum := 1.0, first
	for j := range x {
		left -= shares[j].Low
		sum += shares[j].Low * (x[j] - first)
	}
	for _, j := range order {
		add := math.Max(0, math.Min(left, shares[j].High-shares[j].Low))
		sum += add * (x[j] - first)
		left -= add
	}
	return math.Min(1, math.Max(0, sum))
}

// F1IntervalsOf is the F1 figures of the confusion matrix with their
// intervals as the tool shows them: BootstrapF1s, but the exact interval
// for a thin class's F1, the exact bound for the macro-F1 where some class
// is thin, and for the weighted F1 where the errors or the right texts are
// fewer than thinCount (see above).
// Arguments and preconditions as BootstrapF1s'.
func F1IntervalsOf(confusion [][]int, resamples int, level float64, seed uint64) F1Intervals {
	f := BootstrapF1s(confusion, resamples, level, seed)
	exactF1s(confusion, &f, level)
	return f
}

// MacroF1IntervalOf is the macro-F1 of the confusion matrix with its
// interval as the tool shows it: F1IntervalsOf's Macro, drawn as
// BootstrapMacroF1 draws it (the cheaper path of the headline).
func MacroF1IntervalOf(confusion [][]int, resamples int, level float64, seed uint64) Interval {
	checkBootstrap("MacroF1IntervalOf", resamples, level)
	// Where the exact bound applies no resample is drawn: the estimate is
	// the one BootstrapMacroF1 would give.
	if len(textCells(confusion, "MacroF1IntervalOf")) > 0 {
		flat, _, _ := flatten(confusion)
		if lo, hi, ok := exactMacroF1(flat, len(confusion), level); ok {
			return Interval{Estimate: macroF1Of(flat, len(confusion)), Low: lo, High: hi, Method: MethodExactBonferroni}
		}
	}
	return BootstrapMacroF1(confusion, resamples, level, seed)
}

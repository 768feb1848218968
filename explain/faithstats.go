package explain

import (
	"math"
	"math/rand/v2"
	"slices"

	"telltale/cnn"
)

// faithMeasures are the measures Pairs compares.
var faithMeasures = []string{"comp", "suff", "aopc"}

// faithReport averages the per-text figures (per[text][method], nil for
// empty texts) and adds the intervals and the paired tests.
func faithReport(per [][]textFaith, correct []bool, haveGold bool, opt *FaithOptions) *FaithReport {
	out := &FaithReport{Percents: opt.Percents, Accuracy: math.NaN(), Draws: opt.Draws, Resamples: opt.Resamples}
	var rows [][]textFaith
	nCorrect := 0
	for i, r := range per {
		if r != nil {
			rows = append(rows, r)
			if correct[i] {
				nCorrect++
			}
		}
	}
	out.Texts = len(rows)
	if haveGold && out.Texts > 0 {
		acc := cnn.WilsonInterval(nCorrect, out.Texts, cnn.IntervalLevel)
		out.Accuracy, out.AccuracyInterval = acc.Estimate, &acc
	}
	rng := rand.New(rand.NewPCG(opt.Seed, 0xfa17))
	// The per-percent intervals draw from a stream of their own, so that the
	// aggregates' intervals do not depend on how many percents there are.
	binRng := rand.New(rand.NewPCG(opt.Seed, 0xfa18))
	column := func(mi int, get func(textFaith) float64) []float64 {
		var xs []float64
		for _, r := range rows {
			if v := get(r[mi]); !math.IsNaN(v) {
				xs = append(xs, v)
			}
		}
		return xs
	}
	for mi, meth := range opt.Methods {
		mf := MethodFaith{Method: meth}
		for pi := range opt.Percents {
			c := column(mi, func(f textFaith) float64 { return f.comp[pi] })
			s := column(mi, func(f textFaith) float64 { return f.suff[pi] })
			mf.Comprehensiveness = append(mf.Comprehensiveness, mean(c))
			mf.Sufficiency = append(mf.Sufficiency, mean(s))
			mf.PercentTexts = append(mf.PercentTexts, len(c))
			mf.ComprehensivenessCI = append(mf.ComprehensivenessCI, bootstrapMean(c, opt.Resamples, estimateLevel, binRng))
			mf.SufficiencyCI = append(mf.SufficiencyCI, bootstrapMean(s, opt.Resamples, estimateLevel, binRng))
		}
		comp := column(mi, func(f textFaith) float64 { return f.aggComp })
		mf.AggregateTexts = len(comp)
		mf.Comp, mf.CompCI = mean(comp), bootstrapMean(comp, opt.Resamples, estimateLevel, rng)
		suff := column(mi, func(f textFaith) float64 { return f.aggSuff })
		mf.Suff, mf.SuffCI = mean(suff), bootstrapMean(suff, opt.Resamples, estimateLevel, rng)
		aopc := column(mi, func(f textFaith) float64 { return f.aopc })
		mf.AOPC, mf.AOPCCI = mean(aopc), bootstrapMean(aopc, opt.Resamples, estimateLevel, rng)
		t1c := column(mi, func(f textFaith) float64 { return f.top1Comp })
		mf.Top1Comp, mf.Top1CompCI = mean(t1c), bootstrapMean(t1c, opt.Resamples, estimateLevel, rng)
		t1s := column(mi, func(f textFaith) float64 { return f.top1Suff })
		mf.Top1Suff, mf.Top1SuffCI = mean(t1s), bootstrapMean(t1s, opt.Resamples, estimateLevel, rng)
		out.Methods = append(out.Methods, mf)
	}
	out.Pairs = methodPairs(rows, opt, rng)
	return out
}

// methodPairs compares every two methods on every measure of faithMeasures,
// the p-values adjusted by Holm's method across all the comparisons (Holm
// 1979, "A Simple Sequentially Rejective Multiple Test Procedure", Scand.
// J. Statist. 6:65–70; see Holm), which holds the family-wise error rate
// under any dependence between them. The intervals of the differences are
// simultaneous over the same comparisons, those with a p (pairLevel). The
// sign flips draw from a stream of their own (seeded by opt.Seed), so that
// the intervals do not depend on how many the tests draw.
func methodPairs(rows [][]textFaith, opt *FaithOptions, rng *rand.Rand) []MethodPair {
	flipRng := rand.New(rand.NewPCG(opt.Seed, 0xfa19))
	var pairs []MethodPair
	var diffs [][]float64
	for a := range opt.Methods {
		for b := a + 1; b < len(opt.Methods); b++ {
			for _, meas := range faithMeasures {
				d := pairDiffs(rows, a, b, meas)
				p, patterns := signFlipTest(d, SignFlipDraws, flipRng)
				pairs = append(pairs, MethodPair{A: opt.Methods[a], B: opt.Methods[b], Measure: meas, Texts: len(d),
					Diff: mean(d), P: p, SignFlips: patterns})
				diffs = append(diffs, d)
			}
		}
	}
	ps := make([]float64, len(pairs))
	for i, pr := range pairs {
		ps[i] = pr.P
	}
	for i, adj := range Holm(ps) {
		pairs[i].PHolm = adj
	}
	level, resamples := pairLevel(FaithReport{Pairs: pairs}.Compared(), opt.Resamples)
	for i := range pairs {
		pairs[i].DiffCI = bootstrapMean(diffs[i], resamples, level, rng)
		if len(diffs[i]) > 0 {
			pairs[i].DiffCILevel, pairs[i].DiffCIResamples = level, resamples
		}
	}
	return pairs
}

// pairAlpha is the family-wise error rate of a report's comparisons: the
// pairs' intervals cover their means all together with probability at
// least 1 − pairAlpha, as Holm's adjusted p-values are read at 0.05.
const pairAlpha = 0.05

// pairTailResamples is the least number of bootstrap means expected beyond
// each bound of a pair's interval.
const pairTailResamples = 20

// pairLevel is the level of each pair's interval and the resamples behind
// it, for k comparisons with a p. By Bonferroni's inequality, k intervals
// each at level 1 − α/k, α = pairAlpha, cover their means all together
// with probability at least 1 − α (Dunn 1961, "Multiple Comparisons Among
// Means", JASA 56:52–64), as far as each covers at its own level (the
// bootstrap's approximation). An interval that leaves out 0
// is then a test of that mean at level α/k, Bonferroni's adjusted test, and
// Holm's method rejects whatever Bonferroni's does: an interval without 0
// goes with a Holm p below α but for the difference between the bootstrap
// and the sign-flip test. Each tail of the interval holds α/(2k) of the
// bootstrap means, so there are at least opt's resamples and enough for
// pairTailResamples in each tail: max(resamples, ⌈2·pairTailResamples·k/α⌉).
// With no comparison (k = 0) it is as with one.
func pairLevel(k, resamples int) (level float64, b int) {
	k = max(k, 1)
	return 1 - pairAlpha/float64(k), max(resamples, int(math.Ceil(2*pairTailResamples*float64(k)/pairAlpha)))
}

// pairDiffs is A − B on measure meas over the texts where methods a and b
// both have it.
func pairDiffs(rows [][]textFaith, a, b int, meas string) []float64 {
	var d []float64
	for _, r := range rows {
		x, y := measureOf(r[a], meas), measureOf(r[b], meas)
		if !math.IsNaN(x) && !math.IsNaN(y) {
			d = append(d, x-y)
		}
	}
	return d
}

// measureOf picks one aggregate measure of a text's figures.
func measureOf(f textFaith, meas string) float64 {
	switch meas {
	case "comp":
		return f.aggComp
	case "suff":
		return f.aggSuff
	}
	return f.aopc
}

// mean is the mean of xs, NaN when empty.
func mean(xs []float64) float64 {
	if len(xs) == 0 {
		return math.NaN()
	}
	var s float64
	for _, x := range xs {
		s += x
	}
	return s / float64(len(xs))
}

// estimateLevel is the level of the intervals of the methods' own figures,
// each an estimate on its own.
const estimateLevel = 0.95

// bootstrapMean is the percentile interval at level of the mean of xs over
// b resamples with replacement (Efron & Tibshirani 1993, ch. 13): the
// (1−level)/2 and (1+level)/2 quantiles of bootstrapMeans (NaN, NaN when xs
// is empty).
func bootstrapMean(xs []float64, b int, level float64, rng *rand.Rand) Interval {
	if len(xs) == 0 {
		return Interval{math.NaN(), math.NaN()}
	}
	lo, hi := percentileInterval(bootstrapMeans(xs, b, rng), level)
	return Interval{lo, hi}
}

// bootstrapMeans is the means of b resamples of xs with replacement, each
// of len(xs) draws from rng. Precondition: xs not empty.
func bootstrapMeans(xs []float64, b int, rng *rand.Rand) []float64 {
	means := make([]float64, b)
	for r := range means {
		var s float64
		for range xs {
			s += xs[rng.IntN(len(xs))]
		}
		means[r] = s / float64(len(xs))
	}
	return means
}

// SignFlipDraws is the number of random sign patterns signFlipTest draws
// for more than signFlipExactMax differences: its p-value is then at least
// 1/(SignFlipDraws+1).
const SignFlipDraws = 9999

// signFlipExactMax is the most differences for which signFlipTest
// enumerates all 2ⁿ sign patterns.
const signFlipExactMax = 16

// signFlipTest is the two-sided p-value of the paired sign-flip permutation
// test that the mean of the paired differences d is zero (Good 2005,
// "Permutation, Parametric, and Bootstrap Tests of Hypotheses", 3rd ed.,
// Springer, the one-sample and matched-pairs permutation test; recalled
// from memory): under the null each difference is as likely to have
// either sign, so every pattern of signs s gives an equally likely sample,
// and p is the share of patterns whose mean |Σ sᵢdᵢ|/n reaches the observed
// |Σ dᵢ|/n. A mean reaches it within SciPy's tolerance max(10⁻¹⁴, 10⁻¹⁴·|t|)
// (scipy.stats.permutation_test, 1.10), so that sums equal but for their
// rounding count as equal. With at most signFlipExactMax differences every
// pattern is enumerated (the exact p, as permutation_test with
// permutation_type="samples" and n_resamples=inf gives it); with more,
// draws patterns are drawn from rng and p = (1 + #reaching)/(draws + 1),
// never 0 (Phipson & Smyth 2010, "Permutation P-values Should Never Be
// Zero", SAGMB 9(1)). It also returns the number of patterns behind p.
// Preconditions: finite d, draws ≥ 1. With no difference p is NaN (0
// patterns); with every difference 0 it is 1.
func signFlipTest(d []float64, draws int, rng *rand.Rand) (p float64, patterns int) {
	n := len(d)
	if n == 0 {
		return math.NaN(), 0
	}
	if draws < 1 {
		panic("explain: signFlipTest: draws < 1")
	}
	if n <= signFlipExactMax {
		return signFlipExact(d), 1 << n
	}
	fn, reach := float64(n), reachOf(d)
	count := 0
	signs := make([]uint64, (n+63)/64)
	for range draws {
		for w := range signs {
			signs[w] = rng.Uint64()
		}
		var sum float64
		for i, v := range d {
			if signs[i/64]>>(i%64)&1 == 1 {
				v = -v
			}
			sum += v
		}
		if math.Abs(sum)/fn >= reach {
			count++
		}
	}
	return float64(1+count) / float64(draws+1), draws
}

// reachOf is the least |mean| of a sign pattern of d that reaches d's own:
// |mean(d)| less SciPy's tolerance max(10⁻¹⁴, 10⁻¹⁴·|mean(d)|).
func reachOf(d []float64) float64 {
	t := math.Abs(mean(d))
	return t - max(1e-14, 1e-14*t)
}

// signFlipExact is signFlipTest's p-value over all 2ⁿ sign patterns of d.
// Preconditions: 1 ≤ len(d) ≤ 62, finite d; it takes time n·2ⁿ.
func signFlipExact(d []float64) float64 {
	n := len(d)
	if n < 1 || n > 62 {
		panic("explain: signFlipExact: need 1 to 62 differences")
	}
	fn, reach := float64(n), reachOf(d)
	count := 0
	for s := range uint64(1) << n {
		if math.Abs(flippedSum(d, s))/fn >= reach {
			count++
		}
	}
	return float64(count) / math.Exp2(fn)
}

// flippedSum is Σ sᵢdᵢ with sᵢ = −1 where bit i of signs is set, +1
// elsewhere. Precondition: len(d) ≤ 64.
func flippedSum(d []float64, signs uint64) float64 {
	var sum float64
	for i, v := range d {
		if signs>>i&1 == 1 {
			v = -v
		}
		sum += v
	}
	return sum
}

// MarshalJSON writes NaN figures (nothing to average) as null.
func (mf MethodFaith) MarshalJSON() ([]byte, error) {
	type plain MethodFaith
	q := struct {
		plain
		Comprehensiveness []*float64 `json:"comprehensiveness"`
		Sufficiency       []*float64 `json:"sufficiency"`
		Comp              *float64   `json:"comp"`
		Suff              *float64   `json:"suff"`
		AOPC              *float64   `json:"aopc"`
		Top1Comp          *float64   `json:"top1_comp"`
		Top1Suff          *float64   `json:"top1_suff"`
	}{plain: plain(mf), Comp: finite(mf.Comp), Suff: finite(mf.Suff), AOPC: finite(mf.AOPC),
		Top1Comp: finite(mf.Top1Comp), Top1Suff: finite(mf.Top1Suff)}
	for i := range mf.Comprehensiveness {
		q.Comprehensiveness = append(q.Comprehensiveness, finite(mf.Comprehensiveness[i]))
		q.Sufficiency = append(q.Sufficiency, finite(mf.Sufficiency[i]))
	}
	return jsonMarshal(q)
}

// MarshalJSON writes NaN bounds as null.
func (iv Interval) MarshalJSON() ([]byte, error) {
	return jsonMarshal(struct {
		Low  *float64 `json:"low"`
		High *float64 `json:"high"`
	}{finite(iv.Low), finite(iv.High)})
}

// PAtFloor reports whether P is the floor 1/(SignFlipDraws+1) of the drawn
// sign-flip test: no drawn pattern reached the observed mean, so that P, and
// PHolm with it, are bounds (the exact p is at most that), not estimates.
func (mp MethodPair) PAtFloor() bool {
	return mp.SignFlips == SignFlipDraws && mp.P <= 1/float64(SignFlipDraws+1)
}

// Compared is the number of pairs with a p-value, the family Holm's method
// adjusted across (methodPairs; Holm leaves NaN p-values, pairs with no
// text, out of it).
func (f FaithReport) Compared() int {
	n := 0
	for _, pr := range f.Pairs {
		if !math.IsNaN(pr.P) {
			n++
		}
	}
	return n
}

// AnyPAtFloor reports whether some pair's p is a bound at the floor of the
// drawn sign-flip test (MethodPair.PAtFloor), not an exact or drawn value.
func (f FaithReport) AnyPAtFloor() bool {
	return slices.ContainsFunc(f.Pairs, MethodPair.PAtFloor)
}

// MarshalJSON writes a NaN difference or p-value (no text) as null.
func (mp MethodPair) MarshalJSON() ([]byte, error) {
	type plain MethodPair
	return jsonMarshal(struct {
		plain
		Diff  *float64 `json:"diff"`
		P     *float64 `json:"p"`
		PHolm *float64 `json:"p_holm"`
	}{plain: plain(mp), Diff: finite(mp.Diff), P: finite(mp.P), PHolm: finite(mp.PHolm)})
}

// MarshalJSON writes a NaN accuracy as null.
func (f FaithReport) MarshalJSON() ([]byte, error) {
	type plain FaithReport
	q := struct {
		plain
		Accuracy *float64 `json:"accuracy"`
	}{plain: plain(f), Accuracy: finite(f.Accuracy)}
	return jsonMarshal(q)
}

package explain

import (
	"cmp"
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
			mf.ComprehensivenessCI = append(mf.ComprehensivenessCI, bootstrapMean(c, opt.Resamples, binRng))
			mf.SufficiencyCI = append(mf.SufficiencyCI, bootstrapMean(s, opt.Resamples, binRng))
		}
		comp := column(mi, func(f textFaith) float64 { return f.aggComp })
		mf.AggregateTexts = len(comp)
		mf.Comp, mf.CompCI = mean(comp), bootstrapMean(comp, opt.Resamples, rng)
		suff := column(mi, func(f textFaith) float64 { return f.aggSuff })
		mf.Suff, mf.SuffCI = mean(suff), bootstrapMean(suff, opt.Resamples, rng)
		aopc := column(mi, func(f textFaith) float64 { return f.aopc })
		mf.AOPC, mf.AOPCCI = mean(aopc), bootstrapMean(aopc, opt.Resamples, rng)
		t1c := column(mi, func(f textFaith) float64 { return f.top1Comp })
		mf.Top1Comp, mf.Top1CompCI = mean(t1c), bootstrapMean(t1c, opt.Resamples, rng)
		t1s := column(mi, func(f textFaith) float64 { return f.top1Suff })
		mf.Top1Suff, mf.Top1SuffCI = mean(t1s), bootstrapMean(t1s, opt.Resamples, rng)
		out.Methods = append(out.Methods, mf)
	}
	for a := range opt.Methods {
		for b := a + 1; b < len(opt.Methods); b++ {
			for _, meas := range faithMeasures {
				out.Pairs = append(out.Pairs, methodPair(rows, a, b, meas, opt, rng))
			}
		}
	}
	return out
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

func methodPair(rows [][]textFaith, a, b int, meas string, opt *FaithOptions, rng *rand.Rand) MethodPair {
	var d []float64
	for _, r := range rows {
		x, y := measureOf(r[a], meas), measureOf(r[b], meas)
		if !math.IsNaN(x) && !math.IsNaN(y) {
			d = append(d, x-y)
		}
	}
	p, _ := WilcoxonSignedRank(d)
	return MethodPair{A: opt.Methods[a], B: opt.Methods[b], Measure: meas, Texts: len(d),
		Diff: mean(d), DiffCI: bootstrapMean(d, opt.Resamples, rng), P: p}
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

// bootstrapMean is the 95% percentile interval of the mean of xs over b
// resamples with replacement (NaN, NaN when xs is empty).
func bootstrapMean(xs []float64, b int, rng *rand.Rand) Interval {
	if len(xs) == 0 {
		return Interval{math.NaN(), math.NaN()}
	}
	means := make([]float64, b)
	for r := range means {
		var s float64
		for range xs {
			s += xs[rng.IntN(len(xs))]
		}
		means[r] = s / float64(len(xs))
	}
	lo, hi := percentileInterval(means, 0.95)
	return Interval{lo, hi}
}

// WilcoxonSignedRank is the two-sided p-value of the Wilcoxon signed-rank
// test that the differences d are symmetric about zero (Wilcoxon 1945):
// zero differences are dropped, the others ranked by absolute value with
// average ranks for ties, and W+ (the sum of the ranks of the positive
// ones) compared with its distribution under the null. As SciPy's
// scipy.stats.wilcoxon does by default, that distribution is the exact one
// when there are at most wilcoxonExactMax differences and none is zero;
// unlike SciPy 1.10, which then truncates a W+ of average ranks, ties
// also send the test to the normal approximation: mean n(n+1)/4, variance
// n(n+1)(2n+1)/24 − Σ(t³−t)/48 over the groups of t tied values, no
// continuity correction, its tail taken with erfc so that it does not
// underflow before about 1e-300. It also returns n; the p-value is NaN
// when n = 0 and 1 when every rank ties.
func WilcoxonSignedRank(d []float64) (p float64, n int) {
	var nz, abs []float64
	for _, v := range d {
		if v != 0 {
			nz = append(nz, v)
			abs = append(abs, math.Abs(v))
		}
	}
	n = len(abs)
	if n == 0 {
		return math.NaN(), 0
	}
	order := make([]int, n)
	for i := range order {
		order[i] = i
	}
	slices.SortFunc(order, func(a, b int) int { return cmp.Compare(abs[a], abs[b]) })
	var wPlus, ties float64
	for i := 0; i < n; {
		j := i
		for j+1 < n && abs[order[j+1]] == abs[order[i]] {
			j++
		}
		rank := float64(i+j)/2 + 1 // average of ranks i+1 … j+1
		for k := i; k <= j; k++ {
			if nz[order[k]] > 0 {
				wPlus += rank
			}
		}
		t := float64(j - i + 1)
		ties += t*t*t - t
		i = j + 1
	}
	if ties == 0 && n == len(d) && n <= wilcoxonExactMax {
		return wilcoxonExact(n, int(wPlus)), n
	}
	fn := float64(n)
	mu := fn * (fn + 1) / 4
	v := fn*(fn+1)*(2*fn+1)/24 - ties/48
	if v <= 0 {
		return 1, n
	}
	z := (wPlus - mu) / math.Sqrt(v)
	// 2·(1 − Φ(|z|)) = erfc(|z|/√2); 1 − erf would reach 0 near |z| = 8.
	return math.Erfc(math.Abs(z) / math.Sqrt2), n
}

// wilcoxonExactMax is the most differences for which WilcoxonSignedRank
// uses the exact distribution, SciPy's threshold.
const wilcoxonExactMax = 50

// wilcoxonExact is the exact two-sided p-value of W+ = w among n untied
// nonzero differences: twice the smaller tail of the number of subsets of
// {1…n} with rank sum ≤ w or ≥ w over 2ⁿ, capped at 1, and 1 at the
// centre, as SciPy computes it. The counts are below 2⁵⁰ for n ≤ 50, exact
// in float64. Precondition: 0 ≤ w ≤ n(n+1)/2.
func wilcoxonExact(n, w int) float64 {
	top := n * (n + 1) / 2
	if w < 0 || w > top {
		panic("explain: wilcoxonExact: rank sum out of range")
	}
	counts := make([]float64, top+1)
	counts[0] = 1
	for r := 1; r <= n; r++ {
		for s := r * (r + 1) / 2; s >= r; s-- {
			counts[s] += counts[s-r]
		}
	}
	if 2*w == top {
		return 1
	}
	var below, above float64
	for s, c := range counts {
		if s <= w {
			below += c
		}
		if s >= w {
			above += c
		}
	}
	return min(1, 2*min(below, above)/math.Exp2(float64(n)))
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

// MarshalJSON writes a NaN difference or p-value (no text) as null.
func (mp MethodPair) MarshalJSON() ([]byte, error) {
	type plain MethodPair
	return jsonMarshal(struct {
		plain
		Diff *float64 `json:"diff"`
		P    *float64 `json:"p"`
	}{plain: plain(mp), Diff: finite(mp.Diff), P: finite(mp.P)})
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

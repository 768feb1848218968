package explain

import (
	"bytes"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os/exec"
	"slices"
	"testing"

	"telltale/internal/testref"
)

// runSciPy runs script with Debian's Python, the JSON of in on its
// standard input, and decodes the JSON it prints into out.
func runSciPy(t *testing.T, script string, in, out any) {
	t.Helper()
	testref.RequirePython(t, "scipy")
	js, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(testref.Python, "-c", script)
	cmd.Stdin = bytes.NewReader(js)
	b, err := cmd.Output()
	if err != nil {
		t.Fatalf("scipy: %v", err)
	}
	if err := json.Unmarshal(b, out); err != nil {
		t.Fatal(err)
	}
}

// The exact sign-flip test (up to signFlipExactMax differences) against
// SciPy's scipy.stats.permutation_test((d,), np.mean,
// permutation_type="samples", n_resamples=np.inf), run live: with one
// sample SciPy flips the signs of its values, and with n_resamples=inf
// enumerates all 2ⁿ patterns; its two-sided p is 2·min(P[T ≤ t], P[T ≥ t]),
// which for the symmetric null of sign flips is the share of |T| ≥ |t|
// that signFlipTest counts. Among the cases: continuous differences,
// integer ones with zeros and ties (sums equal to the observed one), and
// all zero (p = 1). The shares are exact: relative tolerance 1e-12. SciPy
// takes no sample of one: one difference d has two patterns, ±d, of the
// same |mean|, so p = 1 (an identity).
func TestSignFlipExactSciPy(t *testing.T) {
	testref.SequentialSkipInRace(t, "signFlipTest against SciPy")
	rng := rand.New(rand.NewPCG(19, 19))
	var cases [][]float64
	for c := range 40 {
		d := make([]float64, 2+rng.IntN(signFlipExactMax-1))
		for i := range d {
			if c%2 == 0 {
				d[i] = float64(rng.IntN(7) - 2) // zeros and ties
			} else {
				d[i] = rng.NormFloat64()*0.05 + 0.02
			}
		}
		cases = append(cases, d)
	}
	cases = append(cases, []float64{0, 0, 0}, []float64{1, 2, 3, -6})
	var want []float64
	runSciPy(t, `
import sys, json, warnings
import numpy as np
from scipy.stats import permutation_test
warnings.simplefilter("ignore")
out = []
for d in json.load(sys.stdin):
    r = permutation_test((np.array(d),), np.mean, permutation_type="samples",
                         n_resamples=np.inf, alternative="two-sided", vectorized=True)
    out.append(float(r.pvalue))
print(json.dumps(out))
`, cases, &want)
	for i, d := range cases {
		got, patterns := signFlipTest(d, SignFlipDraws, rng)
		if patterns != 1<<len(d) || !testref.Close(got, want[i], 0, 1e-12) {
			t.Errorf("case %d (n %d): p %.15g over %d patterns, SciPy %.15g", i, len(d), got, patterns, want[i])
		}
	}
	if p, patterns := signFlipTest([]float64{-0.3}, SignFlipDraws, rng); p != 1 || patterns != 2 {
		t.Errorf("one difference: p %g over %d patterns, want 1 over 2", p, patterns)
	}
	if p, patterns := signFlipTest(nil, SignFlipDraws, rng); !math.IsNaN(p) || patterns != 0 {
		t.Errorf("no difference: p %g over %d patterns, want NaN over 0", p, patterns)
	}
}

// Beyond signFlipExactMax differences the drawn test estimates the exact
// p-value of all 2ⁿ patterns (signFlipExact, checked against SciPy in
// TestSignFlipExactSciPy; SciPy's own exact test of 20 differences takes
// minutes here): for 20 differences each drawn p lies within 4.5 binomial
// standard errors of SignFlipDraws draws, plus the 1/(draws+1) of its
// never-zero form (Phipson & Smyth 2010), of the exact one. The seeds are
// fixed, so the check is deterministic. With 60 positive differences no
// draw reaches the observed mean (2 of 2⁶⁰ patterns do), so p is its floor
// 1/(SignFlipDraws+1).
func TestSignFlipDrawn(t *testing.T) {
	testref.SequentialSkipInRace(t, "signFlipTest against signFlipExact")
	rng := rand.New(rand.NewPCG(20, 20))
	for i, shift := range []float64{0, 0.01, 0.02, 0.03} {
		d := make([]float64, 20)
		for i := range d {
			d[i] = rng.NormFloat64()*0.05 + shift
		}
		want := signFlipExact(d)
		got, patterns := signFlipTest(d, SignFlipDraws, rand.New(rand.NewPCG(uint64(i), 7)))
		se := math.Sqrt(want * (1 - want) / SignFlipDraws)
		if patterns != SignFlipDraws || math.Abs(got-want) > 4.5*se+1.0/(SignFlipDraws+1) {
			t.Errorf("case %d: drawn p %g over %d patterns, exact %g (standard error %.2g)", i, got, patterns, want, se)
		}
	}
	d := make([]float64, 60)
	for i := range d {
		d[i] = 0.5 + rng.Float64()
	}
	if p, _ := signFlipTest(d, SignFlipDraws, rng); p != 1.0/(SignFlipDraws+1) {
		t.Errorf("60 positive differences: p %g, want the floor %g", p, 1.0/(SignFlipDraws+1))
	}
}

// holmRule is Holm's procedure as Holm (1979, §2) states it: sort the
// p-values; reject the hypotheses in that order while p₍ₖ₎ ≤ α/(m−k+1),
// and none after the first that is not. It returns whether each of ps (no
// NaN) is rejected at family-wise level α.
func holmRule(ps []float64, alpha float64) []bool {
	order := make([]int, len(ps))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int {
		switch {
		case ps[a] < ps[b]:
			return -1
		case ps[a] > ps[b]:
			return 1
		}
		return 0
	})
	rejected := make([]bool, len(ps))
	for k, i := range order {
		if ps[i] > alpha/float64(len(ps)-k) {
			break
		}
		rejected[i] = true
	}
	return rejected
}

// Holm's adjusted p-values are the least levels at which Holm's procedure,
// as Holm (1979) states it (holmRule), rejects each hypothesis (Wright 1992,
// "Adjusted P-Values for Simultaneous Inference", Biometrics 48:1005–1013):
// at every level α of a grid, those adjusted to α or less are exactly
// those the procedure rejects. Families of 1 to 18 tests (faithfulness
// shows 18 for four methods), some with tied p-values; NaN p-values (no
// text) stay NaN and do not count in the family.
func TestHolmIsHolmsProcedure(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 21))
	for trial := range 300 {
		m := 1 + trial%18
		ps := make([]float64, m)
		for i := range ps {
			ps[i] = math.Pow(rng.Float64(), 3) // many small ones
			if i > 0 && rng.IntN(5) == 0 {
				ps[i] = ps[rng.IntN(i)] // a tie
			}
		}
		adj := Holm(ps)
		for i := range ps {
			if !(adj[i] >= ps[i] && adj[i] <= 1) {
				t.Fatalf("trial %d: p %g adjusted to %g", trial, ps[i], adj[i])
			}
		}
		for a := range 200 {
			alpha := (float64(a) + 0.5) / 200
			rule := holmRule(ps, alpha)
			for i := range ps {
				if (adj[i] <= alpha) != rule[i] {
					t.Fatalf("trial %d, α %g: p %g adjusted to %g, Holm's rule rejects: %v (p-values %v)", trial, alpha, ps[i], adj[i], rule[i], ps)
				}
			}
		}
		withNaN := append(slices.Clone(ps), math.NaN())
		got := Holm(withNaN)
		if !math.IsNaN(got[m]) || !slices.Equal(got[:m], adj) {
			t.Fatalf("trial %d: with a NaN p-value %v, without %v", trial, got, adj)
		}
	}
}

// The interval and the test of a pair speak of the same quantity, the mean
// difference: differences whose ranks balance (141 small positive ones, 59
// large negative ones, so that a signed-rank statistic sits near its null
// centre) but whose mean is clearly negative get an interval of the mean
// that excludes 0 and a test of the mean that rejects it. The report's
// PHolm is Holm of its p-values, each at least its own.
func TestFaithPairsTestTheMean(t *testing.T) {
	rng := rand.New(rand.NewPCG(22, 22))
	rows := make([][]textFaith, 200)
	for i := range rows {
		d := 0.01 * rng.Float64()
		if i%200 < 59 {
			d = -0.02 - 0.01*rng.Float64()
		}
		rows[i] = []textFaith{{aggComp: 0.5 + d, aggSuff: 0.1 + d, aopc: 0.3 + d}, {aggComp: 0.5, aggSuff: 0.1, aopc: 0.3}}
	}
	opt := &FaithOptions{Methods: []string{MethodExact, MethodOcclusion}, Seed: 5}
	opt.defaults()
	pairs := methodPairs(rows, opt, rand.New(rand.NewPCG(5, 5)))
	if len(pairs) != len(faithMeasures) {
		t.Fatalf("%d pairs, want %d", len(pairs), len(faithMeasures))
	}
	ps := make([]float64, len(pairs))
	for i, pr := range pairs {
		ps[i] = pr.P
		if !(pr.Diff < 0 && pr.DiffCI.High < 0) || !(pr.P < 0.01) || pr.SignFlips != SignFlipDraws || pr.Texts != len(rows) {
			t.Errorf("%s: mean %g in %+v, p %g over %d sign patterns, %d texts: want an interval below 0 and p < 0.01",
				pr.Measure, pr.Diff, pr.DiffCI, pr.P, pr.SignFlips, pr.Texts)
		}
	}
	if !pairs[0].PAtFloor() || pairs[0].P != 1.0/(SignFlipDraws+1) {
		t.Errorf("comp: p %g, at the floor %v: want the floor 1/%d, no drawn pattern reaching a mean 4 standard errors out", pairs[0].P, pairs[0].PAtFloor(), SignFlipDraws+1)
	}
	adj := Holm(ps)
	for i, pr := range pairs {
		if pr.PHolm != adj[i] || pr.PHolm < pr.P {
			t.Errorf("%s: Holm p %g, want %g (p %g)", pr.Measure, pr.PHolm, adj[i], pr.P)
		}
	}
}

// bootstrapMean at a level is the nearest-rank percentile interval
// (Hyndman & Fan 1996, "Sample Quantiles in Statistical Packages", Amer.
// Statist. 50:361–365, definition 1, the inverse of the empirical
// distribution function) of the bootstrap means drawn from the same
// stream: its low bound is a mean with fewer than ⌈q·b⌉ means below it and
// at least ⌈q·b⌉ at or below it, q = (1−level)/2, and its high bound the
// same with q = (1+level)/2. The level only chooses which quantiles are
// read: the draws, and the stream's state after them, are the same at
// every level, so a higher level's interval holds a lower one's.
func TestBootstrapMeanAtLevel(t *testing.T) {
	data := rand.New(rand.NewPCG(23, 23))
	xs := make([]float64, 37)
	for i := range xs {
		xs[i] = data.NormFloat64() + 0.1*float64(i%3)
	}
	for _, c := range []struct {
		level float64
		b     int
	}{
		{0.95, 1000}, {0.99, 4000}, {1 - 0.05/18, 14400}, {1 - 0.05/7, 1000}, {0.5, 101},
	} {
		got := bootstrapMean(xs, c.b, c.level, rand.New(rand.NewPCG(24, 24)))
		drawn := rand.New(rand.NewPCG(24, 24))
		means := bootstrapMeans(xs, c.b, drawn)
		for _, bound := range []struct {
			name string
			v, q float64
		}{{"low", got.Low, (1 - c.level) / 2}, {"high", got.High, (1 + c.level) / 2}} {
			below, atOrBelow := 0, 0
			for _, m := range means {
				if m < bound.v {
					below++
				}
				if m <= bound.v {
					atOrBelow++
				}
			}
			rank := int(math.Ceil(bound.q * float64(c.b)))
			if !slices.Contains(means, bound.v) || below >= rank || atOrBelow < rank {
				t.Errorf("level %g, %d resamples: %s bound %g has %d means below and %d at or below, want the mean of rank %d",
					c.level, c.b, bound.name, bound.v, below, atOrBelow, rank)
			}
		}
		after := rand.New(rand.NewPCG(24, 24))
		at95 := bootstrapMean(xs, c.b, 0.95, after)
		if after.Uint64() != drawn.Uint64() {
			t.Errorf("level %g: the draws depend on the level", c.level)
		}
		wide, narrow := got, at95
		if c.level < 0.95 {
			wide, narrow = at95, got
		}
		if !(wide.Low <= narrow.Low && narrow.High <= wide.High) {
			t.Errorf("level %g: interval %+v, at 95%% %+v from the same draws", c.level, got, at95)
		}
	}
	if iv := bootstrapMean(nil, 100, 0.99, rand.New(rand.NewPCG(1, 1))); !math.IsNaN(iv.Low) || !math.IsNaN(iv.High) {
		t.Errorf("no value: %+v, want NaN bounds", iv)
	}
}

// The pairs' intervals are simultaneous over the k comparisons with a p,
// the family Holm's method adjusts across (FaithReport.Compared; a pair
// with no text has none): by Bonferroni's inequality (Dunn 1961) each is
// the percentile interval at level 1 − 0.05/k, here read from the means of
// the same draws (the pairs' resamples, in order, from the stream the
// methods' intervals leave), and it holds the 95% interval of those draws,
// strictly wider for k > 1. The resamples are max(Resamples, ⌈40·k/0.05⌉),
// so that each tail holds about 20 means. The cases: three methods whose
// third has no AOPC (k = 7 of 9 pairs), with the default 1000 resamples
// and with more than the tail needs; two methods (k = 3); and two with one
// measure only (k = 1: the plain 95% interval).
func TestFaithPairsSimultaneous(t *testing.T) {
	data := rand.New(rand.NewPCG(25, 25))
	f := func(shift float64) float64 { return data.NormFloat64()*0.1 + shift }
	rows := make([][]textFaith, 90)
	for i := range rows {
		rows[i] = []textFaith{
			{aggComp: f(0.3), aggSuff: f(0.1), aopc: f(0.2)},
			{aggComp: f(0.25), aggSuff: f(0.12), aopc: f(0.2)},
			{aggComp: f(0.2), aggSuff: f(0.1), aopc: math.NaN()},
		}
	}
	oneMeasure := make([][]textFaith, len(rows))
	for i, r := range rows {
		oneMeasure[i] = []textFaith{r[0], {aggComp: r[1].aggComp, aggSuff: math.NaN(), aopc: math.NaN()}}
	}
	methods := []string{MethodExact, MethodOcclusion, MethodIG}
	for _, c := range []struct {
		name      string
		rows      [][]textFaith
		methods   int
		resamples int // FaithOptions.Resamples, 0 for the default
		pairs, k  int
		wantLevel float64
		wantDrawn int
	}{
		{"three methods, one without AOPC", rows, 3, 0, 9, 7, 1 - 0.05/7, 5600},
		{"more resamples asked for", rows, 3, 6000, 9, 7, 1 - 0.05/7, 6000},
		{"two methods", rows, 2, 0, 3, 3, 1 - 0.05/3, 2400},
		{"one measure with texts", oneMeasure, 2, 0, 3, 1, 0.95, 1000},
	} {
		opt := &FaithOptions{Methods: methods[:c.methods], Seed: 6, Resamples: c.resamples}
		opt.defaults()
		pairs := methodPairs(c.rows, opt, rand.New(rand.NewPCG(26, 26)))
		if len(pairs) != c.pairs || (FaithReport{Pairs: pairs}).Compared() != c.k {
			t.Fatalf("%s: %d pairs, %d with a p, want %d and %d", c.name, len(pairs), FaithReport{Pairs: pairs}.Compared(), c.pairs, c.k)
		}
		same := rand.New(rand.NewPCG(26, 26))
		for _, pr := range pairs {
			if want := c.wantLevel; (pr.Texts > 0 && pr.DiffCILevel != want) || (pr.Texts == 0 && pr.DiffCILevel != 0) ||
				(pr.Texts > 0 && pr.DiffCIResamples != c.wantDrawn) || (pr.Texts == 0 && pr.DiffCIResamples != 0) {
				t.Errorf("%s: %s − %s %s: level %g over %d resamples, want %g over %d", c.name, pr.A, pr.B, pr.Measure,
					pr.DiffCILevel, pr.DiffCIResamples, c.wantLevel, c.wantDrawn)
			}
			a, b := slices.Index(opt.Methods, pr.A), slices.Index(opt.Methods, pr.B)
			var d []float64
			for _, r := range c.rows {
				if x, y := measureOf(r[a], pr.Measure), measureOf(r[b], pr.Measure); !math.IsNaN(x) && !math.IsNaN(y) {
					d = append(d, x-y)
				}
			}
			if len(d) == 0 {
				if !math.IsNaN(pr.P) || !math.IsNaN(pr.DiffCI.Low) || !math.IsNaN(pr.DiffCI.High) {
					t.Errorf("%s: %s − %s %s has no text, yet p %g and interval %+v", c.name, pr.A, pr.B, pr.Measure, pr.P, pr.DiffCI)
				}
				continue
			}
			means := bootstrapMeans(d, c.wantDrawn, same)
			lo, hi := percentileInterval(means, c.wantLevel)
			lo95, hi95 := percentileInterval(means, 0.95)
			wider := lo < lo95 && hi95 < hi
			if pr.DiffCI != (Interval{lo, hi}) || !(lo <= lo95 && hi95 <= hi) || wider != (c.k > 1) {
				t.Errorf("%s: %s − %s %s: interval %+v, want %g–%g at level %g, holding %g–%g at 95%% (strictly for k > 1)",
					c.name, pr.A, pr.B, pr.Measure, pr.DiffCI, lo, hi, c.wantLevel, lo95, hi95)
			}
			beyond := 0
			for _, m := range means {
				if m < lo {
					beyond++
				}
			}
			if beyond < pairTailResamples-1 {
				t.Errorf("%s: %d means below the low bound, want about %d", c.name, beyond, pairTailResamples)
			}
		}
	}
}

package cnn

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"testing"

	"telltale/internal/testref"
)

// randomPredictions draws n (gold, predicted, confidence) triples over k
// classes, right about 70% of the time, more often the more confident.
func randomPredictions(rng *rand.Rand, k, n int) (gold, pred []int, conf []float64) {
	gold, pred, conf = make([]int, n), make([]int, n), make([]float64, n)
	for i := range gold {
		gold[i] = rng.IntN(k)
		conf[i] = 1/float64(k) + (1-1/float64(k))*rng.Float64()
		pred[i] = gold[i]
		if rng.Float64() > conf[i]*0.9 {
			pred[i] = rng.IntN(k)
		}
	}
	return gold, pred, conf
}

// The F1s the bootstrap resamples are ComputeMetrics' own, bit for bit, and
// its macro-F1 interval is BootstrapMacroF1's: one set of resamples.
func TestBootstrapF1sIsComputeMetrics(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	for i := range 100 {
		k := 2 + rng.IntN(4)
		gold, pred, conf := randomPredictions(rng, k-i%2, 1+rng.IntN(80))
		m := ComputeMetrics(make([]string, k), gold, pred, conf, 10)
		f := BootstrapF1s(m.Confusion, 50, 0.95, uint64(i))
		if f.Macro != BootstrapMacroF1(m.Confusion, 50, 0.95, uint64(i)) {
			t.Fatalf("case %d: macro %+v, BootstrapMacroF1 %+v", i, f.Macro, BootstrapMacroF1(m.Confusion, 50, 0.95, uint64(i)))
		}
		if f.Weighted.Estimate != m.WeightedF1 || len(f.PerClass) != k {
			t.Fatalf("case %d: weighted %+v, ComputeMetrics %v", i, f.Weighted, m.WeightedF1)
		}
		for c, iv := range f.PerClass {
			if m.PerClass[c].Support == 0 { // no gold text: F1 undefined, no interval
				if !math.IsNaN(m.PerClass[c].F1) || !iv.Undefined() {
					t.Fatalf("case %d class %d, no gold text: %+v, ComputeMetrics %v; want both undefined", i, c, iv, m.PerClass[c].F1)
				}
				continue
			}
			if iv.Estimate != m.PerClass[c].F1 || !(0 <= iv.Low && iv.Low <= iv.High && iv.High <= 1) {
				t.Fatalf("case %d class %d: %+v, ComputeMetrics %v", i, c, iv, m.PerClass[c].F1)
			}
		}
		if est, _ := eceDraws(conf, correctOf(gold, pred), 10, 50, uint64(i)); est != m.ECE {
			t.Fatalf("case %d: the bootstrap's ECE %v, ComputeMetrics %v", i, est, m.ECE)
		}
		e := BootstrapECE(conf, correctOf(gold, pred), 10, 50, 0.95, uint64(i))
		if !(0 <= e.Low && e.Low <= e.Estimate && e.Estimate <= e.High && e.High <= 1) {
			t.Fatalf("case %d: ECE %+v", i, e)
		}
	}
	if e := BootstrapECE(nil, nil, 0, 10, 0.95, 1); e.Low != 0 || e.High != 1 {
		t.Errorf("ECE of no text: %+v, want [0, 1]", e)
	}
}

func correctOf(gold, pred []int) []bool {
	ok := make([]bool, len(gold))
	for i := range gold {
		ok[i] = gold[i] == pred[i]
	}
	return ok
}

// IntervalsOf: Wilson on each class's precision (right of predicted) and
// recall (right of gold), F1IntervalsOf's F1s (here every class thin, so
// the exact intervals), and the ECE only when the metrics carry
// confidences.
func TestIntervalsOf(t *testing.T) {
	gold := []int{0, 0, 0, 1, 1, 1, 1, 2, 2, 2}
	pred := []int{0, 0, 1, 1, 1, 1, 2, 2, 2, 0}
	conf := []float64{0.9, 0.8, 0.6, 0.7, 0.95, 0.5, 0.4, 0.85, 0.75, 0.55}
	m := ComputeMetrics([]string{"a", "b", "c"}, gold, pred, conf, 5)
	iv := IntervalsOf(m)
	f := F1IntervalsOf(m.Confusion, BootstrapResamples, IntervalLevel, BootstrapSeed)
	// Class b: 3 right of 4 predicted b, 3 right of 4 gold b.
	if iv.PerClass[1].Precision != WilsonInterval(3, 4, IntervalLevel) || iv.PerClass[1].Recall != WilsonInterval(3, 4, IntervalLevel) ||
		iv.PerClass[1].F1 != f.PerClass[1] || iv.PerClass[1].Label != "b" || iv.WeightedF1 != f.Weighted {
		t.Errorf("intervals %+v", iv)
	}
	// Class a: 2 right of 3 predicted a, 2 of 3 gold a.
	if iv.PerClass[0].Precision != WilsonInterval(2, 3, IntervalLevel) || iv.PerClass[0].Precision.Estimate != m.PerClass[0].Precision {
		t.Errorf("class a: %+v, metrics %+v", iv.PerClass[0], m.PerClass[0])
	}
	if iv.ECE == nil || iv.ECE.Interval != BootstrapECE(conf, correctOf(gold, pred), 5, BootstrapResamples, IntervalLevel, BootstrapSeed) || iv.ECE.Observed != m.ECE ||
		iv.ECE.P != CalibrationTest(conf, correctOf(gold, pred), 5, CalibrationDraws, BootstrapSeed) {
		t.Errorf("ECE %+v", iv.ECE)
	}
	var back Metrics
	js, _ := json.Marshal(m)
	if err := json.Unmarshal(js, &back); err != nil {
		t.Fatal(err)
	}
	if IntervalsOf(back).ECE != nil {
		t.Errorf("metrics read back from JSON have no confidences, yet an ECE interval")
	}
}

// The weighted-F1, per-class F1 and ECE intervals against SciPy's
// scipy.stats.bootstrap (Debian's python3-scipy 1.10; paired resampling of
// the texts), live: method="percentile" for the F1s, method="basic" for
// the ECE, whose estimate is 2θ̂ less the median of SciPy's
// bootstrap_distribution, all three clipped to [0, 1] as BootstrapECE
// clips them. The two draw different resamples, so the endpoints agree
// only up to the Monte Carlo error of 20,000 resamples each: about 0.001
// here, tolerance 0.005. A class's F1 is undefined (NaN) in a resample
// that drew none of its gold texts, and its percentiles are numpy's
// nanpercentile of SciPy's bootstrap_distribution: the third case has a
// class of 3 texts in 300, absent from about 5% of the resamples.
func TestBootstrapF1sAndECEAgainstSciPy(t *testing.T) {
	testref.SequentialSkipInRace(t, "BootstrapF1s")
	testref.RequirePython(t, "scipy")
	rng := rand.New(rand.NewPCG(31, 32))
	type tc struct {
		K    int       `json:"k"`
		Gold []int     `json:"gold"`
		Pred []int     `json:"pred"`
		Conf []float64 `json:"conf"`
	}
	var cases []tc
	for _, kn := range [][2]int{{2, 300}, {3, 400}} {
		g, p, c := randomPredictions(rng, kn[0], kn[1])
		cases = append(cases, tc{kn[0], g, p, c})
	}
	g, p, c := randomPredictions(rng, 2, 300)
	for i := range 3 { // a rare third class, predicted right
		g[i], p[i] = 2, 2
	}
	p[3] = 2 // and once wrongly: counting undrawn resamples as F1 0 would put its lower bound at 0
	cases = append(cases, tc{3, g, p, c})
	js, _ := json.Marshal(cases)
	script := `
import json, sys
import numpy as np
from scipy.stats import bootstrap
def f1s(k):
    def stat(g, p, axis=-1):
        out, sup = [], []
        for c in range(k):
            tp = np.sum((g == c) & (p == c), axis=axis)
            fp = np.sum((g != c) & (p == c), axis=axis)
            fn = np.sum((g == c) & (p != c), axis=axis)
            den = 2 * tp + fp + fn
            out.append(np.where(tp + fn > 0, 2 * tp / np.maximum(den, 1), np.nan))
            sup.append(tp + fn)
        w = np.sum([np.nan_to_num(f) * s for f, s in zip(out, sup)], axis=0) / np.sum(sup, axis=0)
        return np.stack([w] + out)
    return stat
def ece(conf, ok, axis=-1):
    b = np.clip(np.ceil(conf * 15).astype(int) - 1, 0, 14)
    gap = ok - conf
    return sum(np.abs(np.sum(np.where(b == m, gap, 0.0), axis=axis)) for m in range(15)) / conf.shape[-1]
out = []
for c in json.load(sys.stdin):
    g, p, conf = np.array(c["gold"]), np.array(c["pred"]), np.array(c["conf"])
    rf = bootstrap((g, p), f1s(c["k"]), paired=True, vectorized=True, n_resamples=20000,
                   confidence_level=0.95, method="percentile", random_state=np.random.default_rng(1))
    ok = (g == p).astype(float)
    re = bootstrap((conf, ok), ece, paired=True, vectorized=True, n_resamples=20000,
                   confidence_level=0.95, method="basic", random_state=np.random.default_rng(2))
    e = float(ece(conf, ok))
    ew = [float(np.clip(x, 0, 1)) for x in (2 * e - np.median(re.bootstrap_distribution), re.confidence_interval.low, re.confidence_interval.high)]
    dist = rf.bootstrap_distribution
    out.append({"f1": [list(map(float, f1s(c["k"])(g, p))), list(map(float, np.nanpercentile(dist, 2.5, axis=-1))), list(map(float, np.nanpercentile(dist, 97.5, axis=-1)))],
                "undrawn": float(np.mean(np.isnan(dist[-1]))),
                "ece": ew, "ece_observed": e})
print(json.dumps(out))
`
	var want []struct {
		F1       [3][]float64 `json:"f1"`
		ECE      [3]float64   `json:"ece"`
		Observed float64      `json:"ece_observed"`
		Undrawn  float64      `json:"undrawn"` // share of resamples without the last class
	}
	runPython(t, script, js, &want)
	if u := want[2].Undrawn; u < 0.02 {
		t.Fatalf("the rare class is missing from %.3f of SciPy's resamples: the case tests nothing", u)
	}
	for i, c := range cases {
		f := BootstrapF1s(confusionOf(c.Gold, c.Pred, c.K), 20000, 0.95, 1)
		ours := append([]Interval{f.Weighted}, f.PerClass...)
		for j, iv := range ours {
			w := [3]float64{want[i].F1[0][j], want[i].F1[1][j], want[i].F1[2][j]}
			t.Logf("%d classes, figure %d: ours %.4f–%.4f, SciPy %.4f–%.4f", c.K, j, iv.Low, iv.High, w[1], w[2])
			if !testref.Close(iv.Estimate, w[0], 1e-12, 0) || !testref.Close(iv.Low, w[1], 5e-3, 0) || !testref.Close(iv.High, w[2], 5e-3, 0) {
				t.Errorf("%d classes, figure %d (0 weighted, then each class's F1): %+v; SciPy %v", c.K, j, iv, w)
			}
		}
		if est, _ := eceDraws(c.Conf, correctOf(c.Gold, c.Pred), 15, 1, 1); !testref.Close(est, want[i].Observed, 1e-12, 0) {
			t.Errorf("%d classes, ECE of the texts %v; SciPy's statistic %v", c.K, est, want[i].Observed)
		}
		e := BootstrapECE(c.Conf, correctOf(c.Gold, c.Pred), 15, 20000, 0.95, 1)
		w := want[i].ECE
		t.Logf("%d classes, ECE: ours %.4f (%.4f–%.4f), SciPy %.4f (%.4f–%.4f)", c.K, e.Estimate, e.Low, e.High, w[0], w[1], w[2])
		if !testref.Close(e.Estimate, w[0], 5e-3, 0) || !testref.Close(e.Low, w[1], 5e-3, 0) || !testref.Close(e.High, w[2], 5e-3, 0) {
			t.Errorf("%d classes, ECE %+v; SciPy %v", c.K, e, w)
		}
	}
}

// The coverage of the weighted-F1 and per-class F1 intervals, by
// simulation (seeded), as TestBootstrapMacroF1Coverage: the share of
// intervals holding the distribution's own figure must be within three
// binomial standard errors of 95%.
func TestBootstrapF1sCoverage(t *testing.T) {
	testref.SequentialSkipInRace(t, "BootstrapF1s")
	sets := 300
	if testing.Short() {
		sets = 100
	}
	p := [][]float64{{0.27, 0.04, 0.02}, {0.03, 0.25, 0.05}, {0.02, 0.06, 0.26}}
	n, k := 300, 3
	truthClass := make([]float64, k)
	truthW := 0.0
	for c := range k {
		tp, fp, fn := p[c][c], 0.0, 0.0
		for o := range k {
			if o != c {
				fp += p[o][c]
				fn += p[c][o]
			}
		}
		truthClass[c] = 2 * tp / (2*tp + fp + fn)
		truthW += truthClass[c] * (tp + fn)
	}
	var cum []float64
	acc := 0.0
	for _, row := range p {
		for _, v := range row {
			acc += v
			cum = append(cum, acc)
		}
	}
	rng := rand.New(rand.NewPCG(41, 42))
	coveredW, coveredC := 0, make([]int, k)
	for s := range sets {
		conf := make([][]int, k)
		for g := range conf {
			conf[g] = make([]int, k)
		}
		for range n {
			u := rng.Float64() * acc
			cell := 0
			for cell < len(cum)-1 && u >= cum[cell] {
				cell++
			}
			conf[cell/k][cell%k]++
		}
		f := BootstrapF1s(conf, 1000, 0.95, uint64(s))
		if f.Weighted.Low <= truthW && truthW <= f.Weighted.High {
			coveredW++
		}
		for c, iv := range f.PerClass {
			if iv.Low <= truthClass[c] && truthClass[c] <= iv.High {
				coveredC[c]++
			}
		}
	}
	tol := 3 * math.Sqrt(0.05*0.95/float64(sets))
	check := func(name string, covered int) {
		share := float64(covered) / float64(sets)
		t.Logf("%s: coverage %.3f over %d sets (tolerance ±%.3f)", name, share, sets, tol)
		if share < 0.95-tol || share > 0.95+tol {
			t.Errorf("%s: coverage %.3f of the 95%% interval over %d sets, outside 0.95 ± %.3f", name, share, sets, tol)
		}
	}
	check("weighted F1", coveredW)
	for c, n := range coveredC {
		check("F1 of class "+string(rune('a'+c)), n)
	}
}

// The ECE's interval holds its estimate on the kind of predictions a
// trained model makes on a dev split (400 texts, about 94% right, most
// confidences near 1), where the binned ECE's upward bias put the
// percentile interval above the ECE of the texts (train printed "ECE 0.017
// (0.020–0.045; …)"). By simulation (seeded; the truth is the
// simulation's own): sets of calibrated predictions (each right with its
// confidence, so that the true binned ECE is 0) and of overconfident ones
// (right with their confidence less 0.1: every bin's expected gap is 0.1,
// and so is the true ECE). In every set the interval must hold its
// estimate and lie in [0, 1]; the sets where the percentile interval of
// the same resamples left out the ECE of the texts are counted, and must
// not be none, to show that this check can fail. Where the true ECE is
// 0.1 the interval's coverage must not fall short of 95% by more than
// three binomial standard errors (the percentile interval's is logged
// beside it). Where it is 0 the coverage is only logged: at the edge of
// its range the binned ECE's bias is corrected in part (see BootstrapECE),
// which is why the tool shows the interval with CalibrationTest.
func TestBootstrapECEHoldsEstimate(t *testing.T) {
	testref.SequentialSkipInRace(t, "BootstrapECE")
	sets := 200
	if testing.Short() {
		sets = 100
	}
	const n, resamples = 400, 1000
	rng := rand.New(rand.NewPCG(51, 52))
	conf, right := make([]float64, n), make([]bool, n)
	for _, shift := range []float64{0, 0.1} {
		covered, pctCovered, pctOut := 0, 0, 0
		for s := range sets {
			for i := range conf {
				conf[i] = 1 - 0.8*math.Pow(rng.Float64(), 12)
				right[i] = rng.Float64() < conf[i]-shift
			}
			// BootstrapECE is basicInterval of eceDraws; the draws give
			// the percentile interval too.
			est, sorted := eceDraws(conf, right, DefaultBins, resamples, uint64(s))
			e := basicInterval(est, sorted, 0.95)
			if s == 0 && e != BootstrapECE(conf, right, DefaultBins, resamples, 0.95, uint64(s)) {
				t.Fatalf("BootstrapECE %+v, its draws give %+v", BootstrapECE(conf, right, DefaultBins, resamples, 0.95, uint64(s)), e)
			}
			if !(0 <= e.Low && e.Low <= e.Estimate && e.Estimate <= e.High && e.High <= 1) {
				t.Errorf("true ECE %g, set %d: %+v does not hold its estimate", shift, s, e)
			}
			if e.Low <= shift && shift <= e.High {
				covered++
			}
			lo, hi := quantileSorted(sorted, 0.025), quantileSorted(sorted, 0.975)
			if lo <= shift && shift <= hi {
				pctCovered++
			}
			if est < lo || est > hi {
				pctOut++
			}
		}
		share := float64(covered) / float64(sets)
		tol := 3 * math.Sqrt(0.05*0.95/float64(sets))
		t.Logf("true ECE %g: the interval covers it in %.3f of %d sets, the percentile interval in %.3f; the percentile interval left out the ECE of the texts in %d",
			shift, share, sets, float64(pctCovered)/float64(sets), pctOut)
		if shift > 0 && share < 0.95-tol {
			t.Errorf("true ECE %g: coverage %.3f of the 95%% interval over %d sets, below 0.95 − %.3f", shift, share, sets, tol)
		}
		if shift == 0 && pctOut == 0 {
			t.Errorf("the percentile interval held the ECE of the texts in every calibrated set: the check above cannot fail here")
		}
	}
}

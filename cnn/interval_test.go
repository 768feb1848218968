package cnn

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os/exec"
	"testing"

	"telltale/internal/testref"
)

// Newcombe (1998), "Two-sided confidence intervals for the single
// proportion: comparison of seven methods", Statistics in Medicine
// 17:857–872, Table I, the score method (Wilson) at 95%: 81/263 gives
// 0.2553–0.3662, 15/148 0.0624–0.1605, 0/20 0–0.1611, 1/29 0.0061–0.1718.
// The values are recalled from memory and agree, to the four digits
// printed, with SciPy's binomtest(k, n).proportion_ci(0.95, "wilson").
func TestWilsonNewcombeExamples(t *testing.T) {
	for _, c := range []struct {
		k, n   int
		lo, hi float64
	}{{81, 263, 0.2553, 0.3662}, {15, 148, 0.0624, 0.1605}, {0, 20, 0, 0.1611}, {1, 29, 0.0061, 0.1718}} {
		iv := WilsonInterval(c.k, c.n, 0.95)
		// Four printed digits: half a unit of the last.
		if !testref.Close(iv.Low, c.lo, 5e-5, 0) || !testref.Close(iv.High, c.hi, 5e-5, 0) || iv.Estimate != float64(c.k)/float64(c.n) {
			t.Errorf("%d/%d: %+v, Newcombe %.4f–%.4f", c.k, c.n, iv, c.lo, c.hi)
		}
	}
	if iv := WilsonInterval(0, 0, 0.95); iv.Low != 0 || iv.High != 1 {
		t.Errorf("no text: %+v, want [0, 1]", iv)
	}
}

// The Wilson interval holds its estimate: at k = 0 its lower bound is 0 and
// at k = n its upper bound 1, exactly (an identity of Wilson's formula: at
// p̂ = 1 the centre plus the half-width is (1 + z²/n)/(1 + z²/n)), so that
// a recall of 1 never lies above its interval by a rounding.
func TestWilsonHoldsItsEstimate(t *testing.T) {
	for _, level := range []float64{0.9, 0.95, 0.99} {
		for n := 1; n <= 2000; n++ {
			for _, k := range []int{0, n / 3, n} {
				iv := WilsonInterval(k, n, level)
				if !(iv.Low <= iv.Estimate && iv.Estimate <= iv.High) || (k == 0 && iv.Low != 0) || (k == n && iv.High != 1) {
					t.Fatalf("Wilson(%d, %d, %g) = %.17g in [%.17g, %.17g]", k, n, level, iv.Estimate, iv.Low, iv.High)
				}
			}
		}
	}
}

// The Wilson interval against SciPy's binomtest(k, n).proportion_ci(level,
// method="wilson") (Debian's python3-scipy), live, at three levels;
// relative tolerance 1e-9 (both invert the normal distribution in double
// precision, the only approximation).
func TestWilsonAgainstSciPy(t *testing.T) {
	testref.SequentialSkipInRace(t, "WilsonInterval against SciPy")
	testref.RequirePython(t, "scipy")
	type tc struct {
		K, N  int
		Level float64
	}
	var cases []tc
	for _, level := range []float64{0.9, 0.95, 0.99} {
		for _, kn := range [][2]int{{0, 1}, {1, 1}, {0, 10}, {3, 10}, {10, 10}, {512, 800}, {1, 1000}, {799, 800}, {6021, 7000}} {
			cases = append(cases, tc{kn[0], kn[1], level})
		}
	}
	js, _ := json.Marshal(cases)
	script := `
import json, sys
from scipy.stats import binomtest
out = []
for c in json.load(sys.stdin):
    ci = binomtest(c["K"], c["N"]).proportion_ci(c["Level"], method="wilson")
    out.append([ci.low, ci.high])
print(json.dumps(out))
`
	var want [][2]float64
	runPython(t, script, js, &want)
	for i, c := range cases {
		iv := WilsonInterval(c.K, c.N, c.Level)
		if !testref.Close(iv.Low, want[i][0], 1e-12, 1e-9) || !testref.Close(iv.High, want[i][1], 1e-12, 1e-9) {
			t.Errorf("Wilson(%d, %d, %g) = [%.12g, %.12g], SciPy [%.12g, %.12g]", c.K, c.N, c.Level, iv.Low, iv.High, want[i][0], want[i][1])
		}
	}
}

// runPython runs script with Debian's Python, input on its standard input,
// and decodes the JSON it prints into out.
func runPython(t *testing.T, script string, input []byte, out any) {
	t.Helper()
	cmd := exec.Command(testref.Python, "-c", script)
	cmd.Stdin = bytesReader(input)
	raw, err := cmd.Output()
	if err != nil {
		t.Fatalf("python: %v", err)
	}
	if err := json.Unmarshal(raw, out); err != nil {
		t.Fatalf("python's output: %v\n%s", err, raw)
	}
}

// confusionOf counts gold and pred (k classes) into a confusion matrix.
func confusionOf(gold, pred []int, k int) [][]int {
	c := make([][]int, k)
	for i := range c {
		c[i] = make([]int, k)
	}
	for i, g := range gold {
		c[g][pred[i]]++
	}
	return c
}

// The macro-F1 the bootstrap resamples is ComputeMetrics' own, bit for bit,
// classes absent from gold and predictions included.
func TestBootstrapMacroF1IsComputeMetricsMacroF1(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for i := range 200 {
		k := 2 + rng.IntN(5)
		used := k - i%2 // every other case leaves the last class out
		n := 1 + rng.IntN(60)
		gold, pred := make([]int, n), make([]int, n)
		for j := range gold {
			gold[j], pred[j] = rng.IntN(used), rng.IntN(used)
		}
		want := ComputeMetrics(make([]string, k), gold, pred, nil, 0).MacroF1
		iv := BootstrapMacroF1(confusionOf(gold, pred, k), 50, 0.95, uint64(i))
		if iv.Estimate != want || !(0 <= iv.Low && iv.Low <= iv.High && iv.High <= 1) {
			t.Fatalf("case %d: %+v, ComputeMetrics %v", i, iv, want)
		}
	}
	c := [][]int{{30, 5}, {7, 20}}
	if a, b := BootstrapMacroF1(c, 500, 0.95, 3), BootstrapMacroF1(c, 500, 0.95, 3); a != b {
		t.Errorf("one seed, two intervals: %+v and %+v", a, b)
	}
	if iv := BootstrapMacroF1([][]int{{0, 0}, {0, 0}}, 10, 0.95, 1); iv.Low != 0 || iv.High != 1 {
		t.Errorf("no text: %+v, want [0, 1]", iv)
	}
}

// The coverage of the macro-F1 interval, by simulation (seeded): test sets
// of n texts drawn from a known joint distribution of (gold, predicted)
// labels; the share of intervals holding the distribution's own macro-F1
// (the value the sample's tends to as n grows) must be within three
// standard errors of the simulation (binomial, S sets) of the 95% level.
func TestBootstrapMacroF1Coverage(t *testing.T) {
	testref.SequentialSkipInRace(t, "BootstrapMacroF1")
	sets := 400
	if testing.Short() {
		sets = 100
	}
	for _, c := range []struct {
		name string
		n    int
		p    [][]float64 // joint probabilities, rows gold
	}{
		{"three balanced classes", 300, [][]float64{{0.27, 0.04, 0.02}, {0.03, 0.25, 0.05}, {0.02, 0.06, 0.26}}},
		{"a rare class of 15%", 400, [][]float64{{0.79, 0.06}, {0.05, 0.10}}},
	} {
		t.Run(c.name, func(t *testing.T) {
			truth := populationMacroF1(c.p)
			rng := rand.New(rand.NewPCG(17, 18))
			k := len(c.p)
			var cum []float64
			acc := 0.0
			for _, row := range c.p {
				for _, v := range row {
					acc += v
					cum = append(cum, acc)
				}
			}
			covered := 0
			for s := range sets {
				conf := make([][]int, k)
				for g := range conf {
					conf[g] = make([]int, k)
				}
				for range c.n {
					u := rng.Float64() * acc
					cell := 0
					for cell < len(cum)-1 && u >= cum[cell] {
						cell++
					}
					conf[cell/k][cell%k]++
				}
				iv := BootstrapMacroF1(conf, 1000, 0.95, uint64(s))
				if iv.Low <= truth && truth <= iv.High {
					covered++
				}
			}
			share := float64(covered) / float64(sets)
			tol := 3 * math.Sqrt(0.05*0.95/float64(sets))
			t.Logf("coverage %.3f over %d sets (macro-F1 of the distribution %.4f; tolerance ±%.3f)", share, sets, truth, tol)
			if share < 0.95-tol || share > 0.95+tol {
				t.Errorf("coverage %.3f of the 95%% interval over %d sets, outside 0.95 ± %.3f", share, sets, tol)
			}
		})
	}
}

// populationMacroF1 is the macro-F1 of a joint distribution of (gold,
// predicted) labels: each class's F1 with probabilities in place of counts.
func populationMacroF1(p [][]float64) float64 {
	k := len(p)
	sum := 0.0
	for c := range k {
		tp, fp, fn := p[c][c], 0.0, 0.0
		for o := range k {
			if o != c {
				fp += p[o][c]
				fn += p[c][o]
			}
		}
		sum += 2 * tp / (2*tp + fp + fn)
	}
	return sum / float64(k)
}

// The macro-F1 interval against SciPy's scipy.stats.bootstrap (Debian's
// python3-scipy; paired resampling of the (gold, predicted) pairs,
// method="percentile"), live. The two draw different resamples, so the
// endpoints agree only up to the Monte Carlo error of 20,000 resamples
// each: about 0.001 for these sets, tolerance 0.005.
func TestBootstrapMacroF1AgainstSciPy(t *testing.T) {
	testref.SequentialSkipInRace(t, "BootstrapMacroF1")
	testref.RequirePython(t, "scipy")
	rng := rand.New(rand.NewPCG(21, 22))
	type tc struct {
		K    int   `json:"k"`
		Gold []int `json:"gold"`
		Pred []int `json:"pred"`
	}
	var cases []tc
	for _, kn := range [][2]int{{2, 300}, {3, 400}, {5, 500}} {
		c := tc{K: kn[0], Gold: make([]int, kn[1]), Pred: make([]int, kn[1])}
		for i := range c.Gold {
			c.Gold[i] = rng.IntN(c.K)
			c.Pred[i] = c.Gold[i]
			if rng.Float64() < 0.3 {
				c.Pred[i] = rng.IntN(c.K)
			}
		}
		cases = append(cases, c)
	}
	js, _ := json.Marshal(cases)
	script := `
import json, sys
import numpy as np
from scipy.stats import bootstrap
def macro_f1(k):
    def stat(g, p, axis=-1):
        g, p = np.asarray(g), np.asarray(p)
        f1s, present = [], []
        for c in range(k):
            tp = np.sum((g == c) & (p == c), axis=axis)
            fp = np.sum((g != c) & (p == c), axis=axis)
            fn = np.sum((g == c) & (p != c), axis=axis)
            den = 2 * tp + fp + fn
            f1s.append(np.where(den > 0, 2 * tp / np.maximum(den, 1), 0.0))
            present.append(den > 0)
        return np.sum(f1s, axis=0) / np.sum(present, axis=0)
    return stat
out = []
for c in json.load(sys.stdin):
    g, p = np.array(c["gold"]), np.array(c["pred"])
    r = bootstrap((g, p), macro_f1(c["k"]), paired=True, vectorized=True, n_resamples=20000,
                  confidence_level=0.95, method="percentile", random_state=np.random.default_rng(1))
    out.append([float(macro_f1(c["k"])(g, p)), r.confidence_interval.low, r.confidence_interval.high])
print(json.dumps(out))
`
	var want [][3]float64
	runPython(t, script, js, &want)
	for i, c := range cases {
		iv := BootstrapMacroF1(confusionOf(c.Gold, c.Pred, c.K), 20000, 0.95, 1)
		t.Logf("%d classes: ours %.4f–%.4f, SciPy %.4f–%.4f", c.K, iv.Low, iv.High, want[i][1], want[i][2])
		if !testref.Close(iv.Estimate, want[i][0], 1e-12, 0) || !testref.Close(iv.Low, want[i][1], 5e-3, 0) || !testref.Close(iv.High, want[i][2], 5e-3, 0) {
			t.Errorf("%d classes, %d texts: %+v; SciPy %.4f (%.4f–%.4f)", c.K, len(c.Gold), iv, want[i][0], want[i][1], want[i][2])
		}
	}
}

// The headline of a metrics record: Wilson on its accuracy, the macro-F1's
// interval as F1IntervalsOf gives it (here every class has under 10 errors,
// so the exact bound), with the constants every face uses.
func TestHeadlineOf(t *testing.T) {
	gold := []int{0, 0, 0, 1, 1, 1, 1, 2, 2, 2}
	pred := []int{0, 0, 1, 1, 1, 1, 2, 2, 2, 0}
	m := ComputeMetrics([]string{"a", "b", "c"}, gold, pred, nil, 0)
	h := HeadlineOf(m)
	if h.N != 10 || h.Accuracy != WilsonInterval(7, 10, IntervalLevel) ||
		h.MacroF1 != F1IntervalsOf(m.Confusion, BootstrapResamples, IntervalLevel, BootstrapSeed).Macro || h.MacroF1.Estimate != m.MacroF1 ||
		h.MacroF1 == BootstrapMacroF1(m.Confusion, BootstrapResamples, IntervalLevel, BootstrapSeed) {
		t.Errorf("headline %+v of %+v", h, m)
	}
	f := FiguresOf(m, nil)
	if f.Baseline != nil || f.McNemar != nil || f.CNN != h {
		t.Errorf("figures without a baseline: %+v", f)
	}
	basePred := []int{0, 0, 0, 1, 0, 1, 1, 2, 1, 2}
	cmp := &Comparison{CNN: m, Baseline: ComputeMetrics(m.Labels, gold, basePred, nil, 0), McNemar: McNemarExact(gold, pred, basePred)}
	f = FiguresOf(m, cmp)
	if f.Baseline == nil || *f.Baseline != HeadlineOf(cmp.Baseline) || f.McNemar == nil ||
		f.McNemar.CNNOnly != cmp.McNemar.OnlyA || f.McNemar.BaselineOnly != cmp.McNemar.OnlyB || f.McNemar.P != cmp.McNemar.P {
		t.Errorf("figures with a baseline: %+v, comparison %+v", f, cmp)
	}
}

func ExampleBaselineTest_Sentence() {
	fmt.Println(BaselineTest{CNNOnly: 1, BaselineOnly: 9, P: 0.021484375}.Sentence())
	fmt.Println(BaselineTest{CNNOnly: 30, BaselineOnly: 48, P: 0.05367}.Sentence())
	// Output:
	// the CNN is right on 1 text where the baseline is wrong, and the baseline on 9 where the CNN is wrong; exact McNemar p = 0.021
	// the CNN is right on 30 texts where the baseline is wrong, and the baseline on 48 where the CNN is wrong; exact McNemar p = 0.054
}

// The accuracy interval of Newcombe's first example (Table I, 81/263) as
// the tool writes it.
func ExampleInterval_String() {
	fmt.Println(WilsonInterval(81, 263, 0.95))
	// Output: 0.308 (0.255–0.366)
}

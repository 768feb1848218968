package audit

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"telltale/cnn"
	"telltale/internal/testref"
)

type refCase struct {
	Kind string `json:"kind"`
	Args []any  `json:"args"`
}

// scipyRef runs testdata/scipy_stats.py with Debian's python3-scipy on the
// cases and returns its answers, one JSON value per case.
func scipyRef(t *testing.T, cases []refCase) []json.RawMessage {
	t.Helper()
	testref.RequirePython(t, "scipy")
	in, err := json.Marshal(cases)
	if err != nil {
		t.Fatal(err)
	}
	out := testref.RunScript(t, "scipy_stats.py", in)
	var res []json.RawMessage
	if err := json.Unmarshal(out, &res); err != nil || len(res) != len(cases) {
		t.Fatalf("scipy_stats.py answered %d values for %d cases (%v): %s", len(res), len(cases), err, out)
	}
	return res
}

// The exact tests against SciPy 1.10 (Debian's python3-scipy), run live on
// a table of cases: small and large counts, the middle and the far tail.
// The tolerance is relative 1e-9 (both sides evaluate the same closed forms
// in float64; SciPy's binom.sf uses the same incomplete beta function) with
// an absolute floor of 1e-300 for values that underflow.
func TestExactTestsSciPy(t *testing.T) {
	type tc struct {
		kind string
		args []int
		p    float64 // binomial success probability
	}
	cases := []tc{
		// The issue's case: 5 of 5 texts in a class of prior 0.2.
		{"binom-upper", []int{5, 5}, 0.2},
		{"binom-upper", []int{0, 5}, 0.2},
		{"binom-upper", []int{1, 5}, 0.2},
		{"binom-upper", []int{3, 10}, 0.5},
		{"binom-upper", []int{60, 60}, 0.3},
		{"binom-upper", []int{576, 672}, 0.18},
		{"binom-upper", []int{40, 1000}, 0.03},
		{"binom-upper", []int{2, 5000}, 0.001},
		{"binom-upper", []int{4100, 4150}, 0.69},
		{"fisher-greater", []int{5, 0, 795, 3200}, 0},
		{"fisher-greater", []int{3, 1, 1, 3}, 0},
		{"fisher-greater", []int{0, 4, 4, 0}, 0},
		{"fisher-greater", []int{576, 96, 144, 3184}, 0},
		{"fisher-greater", []int{30, 40, 690, 3240}, 0},
		{"fisher-greater", []int{12, 3, 2000, 4000}, 0},
		{"fisher-greater", []int{1200, 50, 2950, 1846}, 0},
		{"fisher-greater", []int{7, 7, 7, 7}, 0},
		{"fisher-two", []int{3, 1, 1, 3}, 0},
		{"fisher-two", []int{576, 96, 58, 86}, 0},
		{"fisher-two", []int{10, 20, 30, 40}, 0},
		{"fisher-two", []int{0, 9, 11, 3}, 0},
		{"fisher-two", []int{100, 0, 0, 100}, 0},
		{"sign", []int{9, 1}, 0},
		{"sign", []int{37, 0}, 0},
		{"sign", []int{5, 5}, 0},
		{"sign", []int{0, 3}, 0},
		{"sign", []int{120, 80}, 0},
	}
	var ref []refCase
	for _, c := range cases {
		args := []any{}
		for _, a := range c.args {
			args = append(args, a)
		}
		if c.kind == "binom-upper" {
			args = append(args, c.p)
		}
		ref = append(ref, refCase{c.kind, args})
	}
	want := scipyRef(t, ref)
	for i, c := range cases {
		var w float64
		if err := json.Unmarshal(want[i], &w); err != nil {
			t.Fatal(err)
		}
		var got float64
		a := c.args
		switch c.kind {
		case "binom-upper":
			got = BinomialUpper(a[0], a[1], c.p)
		case "fisher-greater":
			got = FisherGreater(a[0], a[1], a[2], a[3])
		case "fisher-two":
			got = FisherTwoSided(a[0], a[1], a[2], a[3])
		case "sign":
			got = SignTest(a[0], a[1])
		}
		if !testref.Close(got, w, 1e-300, 1e-9) {
			t.Errorf("%s%v: %.17g, SciPy %.17g", c.kind, c.args, got, w)
		}
	}
}

// The Wilson interval against SciPy's binomtest(k, n).proportion_ci(0.95,
// method="wilson"); relative tolerance 1e-9 (the normal quantile is the
// only approximation, and both use a double-precision inverse).
func TestWilsonSciPy(t *testing.T) {
	cases := [][2]int{{0, 10}, {3, 10}, {10, 10}, {512, 800}, {1, 1000}, {799, 800}}
	var ref []refCase
	for _, c := range cases {
		ref = append(ref, refCase{"wilson", []any{c[0], c[1]}})
	}
	want := scipyRef(t, ref)
	for i, c := range cases {
		var w [2]float64
		if err := json.Unmarshal(want[i], &w); err != nil {
			t.Fatal(err)
		}
		lo, hi := Wilson(c[0], c[1], 0.95)
		if !testref.Close(lo, w[0], 1e-12, 1e-9) || !testref.Close(hi, w[1], 1e-12, 1e-9) {
			t.Errorf("Wilson(%d, %d) = [%.12g, %.12g], SciPy [%.12g, %.12g]", c[0], c[1], lo, hi, w[0], w[1])
		}
	}
}

// The Clopper–Pearson interval against SciPy's binomtest(k, n).
// proportion_ci(0.95, method="exact"), run live; relative tolerance 1e-9
// (both invert the regularized incomplete beta function in float64). The
// cases hold 0 and all successes, where a bootstrap collapses to a point:
// 0 of 36 (a cue in 12 texts, 3 draws each) must reach about 10%.
func TestClopperPearsonSciPy(t *testing.T) {
	cases := [][2]int{{0, 36}, {0, 12}, {12, 12}, {1, 1}, {0, 1}, {3, 10}, {512, 800}, {1, 1000}, {799, 800}}
	var ref []refCase
	for _, c := range cases {
		ref = append(ref, refCase{"exact", []any{c[0], c[1]}})
	}
	want := scipyRef(t, ref)
	for i, c := range cases {
		var w [2]float64
		if err := json.Unmarshal(want[i], &w); err != nil {
			t.Fatal(err)
		}
		lo, hi := ClopperPearson(c[0], c[1], 0.95)
		if !testref.Close(lo, w[0], 1e-12, 1e-9) || !testref.Close(hi, w[1], 1e-12, 1e-9) {
			t.Errorf("ClopperPearson(%d, %d) = [%.12g, %.12g], SciPy [%.12g, %.12g]", c[0], c[1], lo, hi, w[0], w[1])
		}
	}
	if _, hi := ClopperPearson(0, 36, 0.95); hi < 0.09 {
		t.Errorf("0 of 36: upper bound %v, want about 0.097", hi)
	}
}

// MeanIntervalIn: values that are all the same give the Clopper–Pearson
// bound for 0 of n texts scaled to the room left in [lo, hi], never a
// point; fewer than 10 values off the most common one give the betting
// interval, more give BootstrapMean's interval unchanged.
func TestMeanIntervalIn(t *testing.T) {
	_, u := ClopperPearson(0, 12, 0.95)
	for _, c := range []struct {
		name           string
		x              []float64
		lo, hi         float64
		wantLo, wantHi float64
	}{
		{"shares all 0", make([]float64, 12), 0, 1, 0, u},
		{"shares all 1", []float64{1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1}, 0, 1, 1 - u, 1},
		{"differences all 0", make([]float64, 12), -1, 1, -u, u},
	} {
		got := MeanIntervalIn(c.x, c.lo, c.hi, 1000, 0.95, 1)
		if got.Estimate != c.x[0] || !testref.Close(got.Low, c.wantLo, 1e-15, 1e-12) || !testref.Close(got.High, c.wantHi, 1e-15, 1e-12) {
			t.Errorf("%s: %+v, want [%v, %v]", c.name, got, c.wantLo, c.wantHi)
		}
		if got.High-got.Low < 0.2 {
			t.Errorf("%s: interval %+v of width below 0.2 for 12 texts", c.name, got)
		}
	}
	x := []float64{0, 0, 1, 0.5, 0, 1, 0, 0, 0.25, 0, 0.5, 1, 0.75, 0.25, 1, 1, 0, 0.5, 0.5, 0.25}
	if a, b := MeanIntervalIn(x, 0, 1, 500, 0.95, 7), BootstrapMean(x, 500, 0.95, 7); a != b {
		t.Errorf("mixed values, 13 off the most common: %+v, BootstrapMean %+v", a, b)
	}
	thin := []float64{0, 0, 1, 0.5, 0, 1, 0, 0, 0.25, 0}
	if a, b := MeanIntervalIn(thin, 0, 1, 500, 0.95, 7), BettingMeanInterval(thin, 0, 1, 0.95, 7); a != b {
		t.Errorf("4 values off the most common: %+v, BettingMeanInterval %+v", a, b)
	}
	// The switch: 9 values off the most common one take the exact
	// interval, 10 the bootstrap.
	for _, c := range []struct {
		off  int
		want string
	}{{9, MethodBetting}, {10, cnn.MethodBootstrap}} {
		v := make([]float64, 40)
		for i := range c.off {
			v[i*4] = 0.1 * float64(i+1)
		}
		if got := MeanIntervalIn(v, 0, 1, 500, 0.95, 7).Method; got != c.want {
			t.Errorf("%d values off the most common: method %q, want %q", c.off, got, c.want)
		}
	}
	// Each branch names its method, so that a script reading the JSON
	// knows which ran.
	for _, c := range []struct {
		x    []float64
		want string
	}{{make([]float64, 12), cnn.MethodClopperPearson}, {thin, MethodBetting}, {x, cnn.MethodBootstrap}} {
		if got := MeanIntervalIn(c.x, 0, 1, 500, 0.95, 7).Method; got != c.want {
			t.Errorf("%v: method %q, want %q", c.x, got, c.want)
		}
	}
}

// Benjamini & Hochberg (1995), section 4.2 (from memory): the 15 p-values
// of a study of myocardial infarction treatment (Neuhaus et al. 1992). At
// q = 0.05 the step-up procedure rejects the four smallest, where the
// Bonferroni correction rejects only three (0.05/15 = 0.0033). The
// adjusted values are worked out by hand from the definition beside each.
func TestBenjaminiHochbergPublishedExample(t *testing.T) {
	p := []float64{0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459,
		0.3240, 0.4262, 0.5719, 0.6528, 0.7590, 1.000}
	q := BenjaminiHochberg(p)
	rejected, bonf := 0, 0
	for i := range p {
		if q[i] <= 0.05 {
			rejected++
		}
		if Bonferroni(p)[i] <= 0.05 {
			bonf++
		}
	}
	if rejected != 4 || bonf != 3 {
		t.Errorf("BH rejects %d (paper: 4), Bonferroni %d (paper: 3)", rejected, bonf)
	}
	// q_(i) = min_{j≥i} 15·p_(j)/j.
	want := map[int]float64{
		0:  0.0015,           // min(15·0.0001/1, 15·0.0004/2=0.003, …)
		1:  0.003,            // 15·0.0004/2
		2:  0.0095,           // 15·0.0019/3
		3:  0.035625,         // 15·0.0095/4
		4:  0.0603,           // min over j ≥ 5: 0.0603, 0.0695, 0.06386, 0.0645, 0.0765, …
		14: 1,                // capped
		13: 15 * 0.7590 / 14, // 0.81321…
	}
	for i, w := range want {
		if !testref.Close(q[i], w, 1e-12, 1e-9) {
			t.Errorf("q[%d] (p = %g) = %.6g, want %.6g", i, p[i], q[i], w)
		}
	}
	// The order of the input does not matter.
	rev := make([]float64, len(p))
	for i := range p {
		rev[len(p)-1-i] = p[i]
	}
	qr := BenjaminiHochberg(rev)
	for i := range p {
		if qr[len(p)-1-i] != q[i] {
			t.Fatalf("reversed input: q differs at %d", i)
		}
	}
}

// Coverage of the percentile bootstrap interval by simulation (seeded):
// 1,000 samples of 200 Bernoulli(0.3) values (a flip indicator per text),
// each with a 95% interval from 1,000 resamples. The share of intervals
// holding 0.3 must lie within three binomial standard errors of the nominal
// level, 0.95 ± 3·sqrt(0.95·0.05/1000) = 0.95 ± 0.021; the percentile
// interval of a mean is known to undercover slightly at this n (Efron &
// Tibshirani 1993, ch. 13), which the band allows for. A second, skewed
// case: exponential values (mean 1), n = 100.
func TestBootstrapCoverage(t *testing.T) {
	if testing.Short() {
		t.Skip("2,000 bootstrap intervals; skipped with -short")
	}
	for _, c := range []struct {
		name string
		n    int
		mean float64
		draw func(r *rand.Rand) float64
	}{
		{"bernoulli", 200, 0.3, func(r *rand.Rand) float64 {
			if r.Float64() < 0.3 {
				return 1
			}
			return 0
		}},
		{"exponential", 100, 1, func(r *rand.Rand) float64 { return r.ExpFloat64() }},
	} {
		r := rand.New(rand.NewPCG(7, 11))
		const reps = 1000
		covered := 0
		x := make([]float64, c.n)
		for rep := range reps {
			for i := range x {
				x[i] = c.draw(r)
			}
			ci := BootstrapMean(x, 1000, 0.95, uint64(rep))
			if ci.Low <= c.mean && c.mean <= ci.High {
				covered++
			}
		}
		cov := float64(covered) / reps
		band := 3 * math.Sqrt(0.95*0.05/reps)
		t.Logf("%s: coverage %.3f (nominal 0.95 ± %.3f)", c.name, cov, band)
		lo := 0.95 - band
		if cov < lo || cov > 0.95+band {
			t.Errorf("%s: coverage %.3f outside [%.3f, %.3f]", c.name, cov, lo, 0.95+band)
		}
	}
}

func ExampleBenjaminiHochberg() {
	q := BenjaminiHochberg([]float64{0.01, 0.04, 0.03, 0.5})
	fmt.Printf("%.2f\n", q)
	// Output: [0.04 0.05 0.05 0.50]
}

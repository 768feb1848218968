package audit

import (
	"math"
	"testing"

	"telltale/internal/testref"
)

// The decided share is a share of predictions: never below 0, and exact
// where every text gives the same value. A cue in 14 of a half's 86 texts
// whose replacement flips no prediction, nor does the control (a model
// sure of every text), decides 0 of the predictions with the bound
// (14/86)·(1 − 0.025^(1/14)): 1 − (α/2)^(1/n) is the closed form of the
// Clopper–Pearson upper bound for 0 of n (Clopper & Pearson 1934; the
// "rule of three" at 95% approximates it by 3/n, Hanley & Lippman-Hand
// 1983). The earlier interval ran from −4.2% to 4.2%. A cue in every text
// flipping each of them in every draw, as no control does, decides all
// of them with the lower bound 1 − 2·that bound for its texts (a net lies
// in [−1, 1]); nets of −1 and 0, half each (the control flips more), give
// a share of 0: the exact interval of their mean net lies below 0, so the
// share, its positive part, is 0 at both bounds.
func TestDecidedShare(t *testing.T) {
	cp0 := func(n int) float64 { return 1 - math.Pow(0.025, 1/float64(n)) }
	type want struct{ est, lo, hi float64 }
	cases := []struct {
		name       string
		half       int   // texts of the half
		pred, flip []int // per measured text (the first len(pred) of the half): the prediction, and the counterfactual's
		ctl        []int // the control's prediction
		want       want
		exact      bool
	}{
		{"nothing flips", 86, zeros(14), zeros(14), zeros(14), want{0, 0, 14.0 / 86 * cp0(14)}, true},
		{"every text flips", 20, zeros(20), ones(20), zeros(20), want{1, 1 - 2*cp0(20), 1}, true},
		// Every net at or below 0, half of them −1: the mean net's exact
		// interval lies below 0.
		{"the control flips more", 40, zeros(20), zeros(20), alternate(20), want{0, 0, 0}, true},
		// One text of 14 flips: the upper bound is at least the count
		// bound for 1 of 14, above the bound for none (monotone).
		{"one text flips", 86, zeros(14), append(zeros(13), 1), zeros(14), want{1.0 / 86, 0, 14.0 / 86 * cp1of14}, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			n := len(c.pred)
			gold := make([]int, c.half)
			ids := make([][]int32, c.half)
			chosen := make([]int, n)
			res := make([]editResult, 0, 2*n)
			for k := range n {
				chosen[k] = k
				res = append(res, editResult{pred: c.flip[k]}, editResult{pred: c.ctl[k]})
			}
			pred := append(append([]int{}, c.pred...), make([]int, c.half-n)...)
			j := &relianceJob{key: "cue", half: Data{IDs: ids, Gold: gold}, base: &basePass{pred: pred}, draws: 1, boot: 1000, seed: 1}
			r := j.summarize(&Reliance{Texts: n, Measured: n, Draws: 1}, chosen, chosen, nil, res)
			d := r.Decided
			if d.Low < 0 || d.Estimate < d.Low || d.High < d.Estimate {
				t.Errorf("decided %+v: a share below 0, or the estimate outside its interval", d)
			}
			if !testref.Close(d.Estimate, c.want.est, 1e-12, 1e-9) || c.exact && !(testref.Close(d.Low, c.want.lo, 1e-12, 1e-9) && testref.Close(d.High, c.want.hi, 1e-12, 1e-9)) ||
				!c.exact && d.High < c.want.hi-1e-12 {
				t.Errorf("decided %+v, want %.4f (%.4f–%.4f)", d, c.want.est, c.want.lo, c.want.hi)
			}
		})
	}
}

// cp1of14 is the Clopper–Pearson 95% upper bound for 1 success in 14
// trials: SciPy 1.x, scipy.stats.binomtest(1, 14).proportion_ci(
// method='exact').high = 0.3386844899318212 (run once, 2026-12-05).
const cp1of14 = 0.3386844899318212

func zeros(n int) []int { return make([]int, n) }

func ones(n int) []int {
	x := make([]int, n)
	for i := range x {
		x[i] = 1
	}
	return x
}

// alternate is 1, 0, 1, 0, …: every other control edit flips.
func alternate(n int) []int {
	x := make([]int, n)
	for i := 0; i < n; i += 2 {
		x[i] = 1
	}
	return x
}

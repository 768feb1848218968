package audit

import (
	"math"
	"math/rand/v2"
	"testing"

	"telltale/cnn"
	"telltale/internal/testref"
)

// flipNets draws n per-text nets of a cue's flip rate (3 draws a text, so
// steps of 1/3): each text is off 0 with probability pOff, and then
// −1/3, 1/3, 2/3 or 1 with probabilities 0.1, 0.4, 0.2 and 0.3. Its mean
// is pOff·0.5. (An invented distribution shaped like the demo's nets.)
func flipNets(r *rand.Rand, x []float64, pOff float64) {
	for i := range x {
		x[i] = 0
		if r.Float64() >= pOff {
			continue
		}
		switch u := r.Float64(); {
		case u < 0.1:
			x[i] = -1.0 / 3
		case u < 0.5:
			x[i] = 1.0 / 3
		case u < 0.7:
			x[i] = 2.0 / 3
		default:
			x[i] = 1
		}
	}
}

// The definition of a 95% interval (common practice, no source): over
// many samples it holds the true mean at least 95% of the time; each
// interval must hold 0.95 less three standard errors of the simulation.
// The flips' (ExactMeanIn) from 1 to 30 texts off 0 in 150, where the
// percentile bootstrap (logged as the rule before) fell to 0.87–0.90 with
// a few; the drops' (MeanIntervalIn) on 5 to 30 texts, exact up to 10.
func TestMeanIntervalInCoverage(t *testing.T) {
	const n, reps = 150, 300
	band := 3 * math.Sqrt(0.95*0.05/reps)
	r := rand.New(rand.NewPCG(3, 5))
	x := make([]float64, n)
	for _, expectOff := range []float64{1, 2, 3, 5, 8, 12, 30} {
		pOff := expectOff / n
		mean := pOff * 0.5
		covered, boot := 0, 0
		for rep := range reps {
			flipNets(r, x, pOff)
			if iv := ExactMeanIn(x, -1, 1, 0.95, uint64(rep)); iv.Low <= mean && mean <= iv.High {
				covered++
			}
			if iv := oldMeanInterval(x, uint64(rep)); iv.Low <= mean && mean <= iv.High {
				boot++
			}
		}
		cov := float64(covered) / reps
		t.Logf("flips, about %v texts off 0 of %d: coverage %.3f (the bootstrap rule before %.3f)", expectOff, n, cov, float64(boot)/reps)
		if cov < 0.95-band {
			t.Errorf("flips, about %v texts off 0 of %d: coverage %.3f, want at least %.3f", expectOff, n, cov, 0.95-band)
		}
	}
	// Drops: a normal of mean 0.3 and spread 0.25 kept inside [−1, 1]
	// (an invented distribution; its mean is 0.3 to well within the
	// simulation's error, the clipped tails being beyond 5 spreads).
	for _, m := range []int{5, 8, 10, 30} {
		d := make([]float64, m)
		covered := 0
		for rep := range reps {
			for i := range d {
				d[i] = min(1, max(-1, 0.3+0.25*r.NormFloat64()))
			}
			if iv := MeanIntervalIn(d, -1, 1, 1000, 0.95, uint64(rep)); iv.Low <= 0.3 && 0.3 <= iv.High {
				covered++
			}
		}
		cov := float64(covered) / reps
		t.Logf("drops on %d texts: coverage %.3f", m, cov)
		if cov < 0.95-band {
			t.Errorf("drops on %d texts: coverage %.3f, want at least %.3f", m, cov, 0.95-band)
		}
	}
}

// oldMeanInterval is the rule before the betting interval: exact where
// every value is the same, the percentile bootstrap otherwise.
func oldMeanInterval(x []float64, seed uint64) Interval {
	if modeCount(x) == len(x) {
		return MeanIntervalIn(x, -1, 1, 1000, 0.95, seed)
	}
	return BootstrapMean(x, 1000, 0.95, seed)
}

// Properties any interval for a mean must have (common practice, no
// source): it holds the sample mean and stays in [lo, hi]; it moves with
// an affine change of the values and their bounds; mirrored values give
// the mirrored interval (the two sides of the bet are each other's
// mirror, so a slip in one side shows here).
func TestBettingMeanIntervalProperties(t *testing.T) {
	r := rand.New(rand.NewPCG(9, 2))
	x := make([]float64, 60)
	for trial := range 20 {
		flipNets(r, x, float64(trial%6+1)/60)
		iv := BettingMeanInterval(x, -1, 1, 0.95, 4)
		if iv.Low > iv.Estimate || iv.Estimate > iv.High || iv.Low < -1 || iv.High > 1 {
			t.Fatalf("trial %d: %+v does not hold the mean inside [−1, 1]", trial, iv)
		}
		y := make([]float64, len(x))
		neg := make([]float64, len(x))
		for i, v := range x {
			y[i] = (v + 1) / 2
			neg[i] = -v
		}
		u := BettingMeanInterval(y, 0, 1, 0.95, 4)
		if !testref.Close(2*u.Low-1, iv.Low, 1e-12, 1e-9) || !testref.Close(2*u.High-1, iv.High, 1e-12, 1e-9) {
			t.Errorf("trial %d: on [0, 1] %+v, on [−1, 1] %+v: not the same interval", trial, u, iv)
		}
		m := BettingMeanInterval(neg, -1, 1, 0.95, 4)
		if !testref.Close(m.Low, -iv.High, 1e-12, 1e-9) || !testref.Close(m.High, -iv.Low, 1e-12, 1e-9) {
			t.Errorf("trial %d: mirrored %+v, want [%v, %v]", trial, m, -iv.High, -iv.Low)
		}
	}
}

// The exact sign test (common practice, no source) finds 6 texts that
// all flip against none at the one-sided 2.5% level (0.5⁶ = 0.016) and
// not 5 (0.031). The betting interval, which also bounds the mean, needs
// one more: 7 of 150 texts that flip every draw put its lower bound above
// 0, where 6 do not (the percentile bootstrap's already is at 4: the
// defect). The edge pins the level: a capital limit of 1/α a side, twice
// the chance of a false finding, moves it to 6.
func TestBettingMeanIntervalFindsAFewConsistentFlips(t *testing.T) {
	for _, c := range []struct {
		flips int
		above bool
	}{{6, false}, {7, true}} {
		x := make([]float64, 150)
		for i := range c.flips {
			x[i*15] = 1
		}
		iv := ExactMeanIn(x, -1, 1, 0.95, 1)
		if (iv.Low > 0) != c.above {
			t.Errorf("%d of 150 texts flip every draw: %+v, lower bound above 0 %v, want %v", c.flips, iv, iv.Low > 0, c.above)
		}
	}
}

// The interval's bounds are grid means that are themselves rejected, the
// first not rejected next to them (the widening that keeps the grid from
// narrowing the interval; common practice, no source).
func TestBettingMeanIntervalBoundsAreRejected(t *testing.T) {
	x := make([]float64, 150)
	for i := range 9 {
		x[i*15] = 1
	}
	iv := BettingMeanInterval(x, -1, 1, 0.95, 1)
	orders, bets := bettingOrdersOf(x, -1, 1, 0.95, 1)
	limit := math.Log(2 / 0.05)
	step := 1.0 / bettingGrid
	low, high := (iv.Low+1)/2, (iv.High+1)/2 // on [0, 1]
	if capital(orders, bets, low, +1) < limit || capital(orders, bets, low+step, +1) >= limit {
		t.Errorf("lower bound %v: not the rejected grid mean next to the first one kept", iv.Low)
	}
	if capital(orders, bets, high, -1) < limit || capital(orders, bets, high-step, -1) >= limit {
		t.Errorf("upper bound %v: not the rejected grid mean next to the last one kept", iv.High)
	}
}

// FlipsConfirmed joins two exact one-sided tests at 2.5% each (Bonferroni;
// common practice, no source): the net flip rate's interval above 0, or
// the sign test of texts flipping more against fewer. 6 texts that all
// flip one way pass the sign test (0.5⁶ = 0.016) where 5 do not (0.031);
// a net interval above 0 passes whatever the sign test says.
func TestFlipsConfirmed(t *testing.T) {
	for _, c := range []struct {
		name        string
		measured    int
		netLow      float64
		more, fewer int
		want        bool
	}{
		{"net interval above 0, sign test weak", 162, 0.01, 30, 20, true},
		{"6 texts flip one way, none the other", 71, -0.02, 6, 0, true},
		{"5 texts flip one way, none the other", 71, -0.02, 5, 0, false},
		{"5 one way, 1 the other", 71, -0.027, 5, 1, false},
		{"nothing measured", 0, 0, 0, 0, false},
	} {
		r := &Reliance{Measured: c.measured, NetFlipRate: Interval{Low: c.netLow}, More: c.more, Fewer: c.fewer}
		if c.measured > 0 { // a Reliance measured on no text keeps FlipP 0: Measured alone must refuse it
			r.FlipP = SignTest(c.more, c.fewer)
		}
		if got := r.FlipsConfirmed(); got != c.want {
			t.Errorf("%s: FlipsConfirmed %v (flip_p %.4f), want %v", c.name, got, r.FlipP, c.want)
		}
	}
}

// The betting interval's width, tracked against an outside reference: on
// shares of 0 and 1 (19 of 162) it must stay within 1.6 times the width
// of the exact Clopper–Pearson interval (cnn.ClopperPearsonInterval,
// checked against SciPy's binomtest in package cnn), and hold it. Today
// about 1.45 times: an exact interval for any distribution in [0, 1] pays
// for not knowing the values are 0 or 1.
func TestBettingMeanIntervalWidthAgainstClopperPearson(t *testing.T) {
	x := make([]float64, 162)
	for i := range 19 {
		x[i*8] = 1
	}
	b := BettingMeanInterval(x, 0, 1, 0.95, 1)
	cp := cnn.ClopperPearsonInterval(19, 162, 0.95)
	ratio := (b.High - b.Low) / (cp.High - cp.Low)
	t.Logf("betting %.3f–%.3f, Clopper–Pearson %.3f–%.3f: %.2f times as wide", b.Low, b.High, cp.Low, cp.High, ratio)
	if ratio > 1.6 || b.Low > cp.Low || b.High < cp.High {
		t.Errorf("betting %.3f–%.3f against Clopper–Pearson %.3f–%.3f: %.2f times as wide, want at most 1.6 and holding it", b.Low, b.High, cp.Low, cp.High, ratio)
	}
}

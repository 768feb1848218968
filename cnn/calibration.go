package cnn

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// CalibrationDraws is the number of label sets CalibrationTest draws.
const CalibrationDraws = 2000

// CalibrationTest is the p-value of the consistency-resampling test of
// Bröcker & Smith (2007, "Increasing the reliability of reliability
// diagrams", Weather and Forecasting 22(3)): under the hypothesis that the
// confidences are perfectly calibrated, prediction i is right with
// probability conf[i]; draws sets of outcomes are drawn so (seeded by seed)
// and the binned ECE of each (bins equal-width bins, as ComputeMetrics
// computes it) is compared with the observed one. The p-value is
// (1 + #{drawn ECE ≥ observed}) / (draws + 1). It answers what the ECE's
// bootstrap interval answers only in part near 0 (see BootstrapECE):
// whether the observed ECE is more than a calibrated model's would be on
// this many texts. Preconditions: equal lengths, confidences in [0, 1], draws ≥ 1;
// bins ≤ 0 means DefaultBins. With no text it is 1.
func CalibrationTest(conf []float64, correct []bool, bins, draws int, seed uint64) float64 {
	if len(conf) != len(correct) || draws < 1 {
		panic("cnn: CalibrationTest: conf and correct differ in length, or draws < 1")
	}
	if len(conf) == 0 {
		return 1
	}
	bin, k := occupiedBins(conf, bins)
	observed := binnedECE(conf, correct, bin, k)
	r := rand.New(rand.NewPCG(seed, 0x2545f4914f6cdd1d))
	drawn := make([]bool, len(conf))
	atLeast := 0
	for range draws {
		for i, c := range conf {
			drawn[i] = r.Float64() < c
		}
		// A tiny tolerance: a drawn set equal to the observed one counts.
		if binnedECE(conf, drawn, bin, k) >= observed-1e-12 {
			atLeast++
		}
	}
	return float64(1+atLeast) / float64(draws+1)
}

// CalibrationFigure is the ECE of the texts (Observed) beside its
// bias-corrected estimate with its basic bootstrap interval (the
// embedded Interval, from BootstrapECE) and the p-value of
// CalibrationTest: near 0 the interval's correction is partial, and the
// test says whether the ECE is more than chance.
type CalibrationFigure struct {
	Interval
	// Observed is the binned ECE of the texts, ComputeMetrics' ECE; the
	// Interval's Estimate is it corrected for its bias.
	Observed float64 `json:"observed"`
	// P is CalibrationTest's p-value: small when the model is not
	// calibrated.
	P float64 `json:"calibration_p"`
	// Draws is the number of label sets behind P; P cannot fall below
	// 1/(Draws+1).
	Draws int `json:"calibration_draws"`
	// AtFloor is true when no drawn label set reached the observed ECE:
	// P is then 1/(Draws+1), a bound (the true p is at most that), not
	// an estimate.
	AtFloor bool `json:"calibration_p_at_floor"`
}

// NewCalibrationFigure joins the observed ECE, its bias-corrected interval
// ece and CalibrationTest's p-value over draws label sets. Precondition:
// draws ≥ 1.
func NewCalibrationFigure(observed float64, ece Interval, p float64, draws int) CalibrationFigure {
	if draws < 1 {
		panic("cnn: NewCalibrationFigure: draws < 1")
	}
	// CalibrationTest computes the floor with this very expression.
	floor := float64(1) / float64(draws+1)
	return CalibrationFigure{Interval: ece, Observed: observed, P: p, Draws: draws, AtFloor: p <= floor}
}

// String writes the figure as the tool shows it, the estimate with its
// interval first and the observed ECE, biased upward and without an
// interval of its own, only as the test's statistic: "bias-corrected
// 0.101 (0.078–0.126); observed 0.114, test of perfect calibration
// p = 0.012", or "p ≤ 0.0005" when P is at its floor (the bound rounded
// up).
func (f CalibrationFigure) String() string {
	p := fmt.Sprintf("= %.2g", f.P)
	if f.AtFloor {
		p = "≤ " + roundUp2(f.P)
	}
	return fmt.Sprintf("bias-corrected %.3f (%.3f–%.3f); observed %.3f, test of perfect calibration p %s", f.Estimate, f.Low, f.High, f.Observed, p)
}

// roundUp2 writes x > 0 with two significant digits, rounded up, so that
// it stays a true upper bound.
func roundUp2(x float64) string {
	scale := math.Pow(10, 1-math.Floor(math.Log10(x)))
	return fmt.Sprintf("%.2g", math.Ceil(x*scale-1e-9)/scale)
}

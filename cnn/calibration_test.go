package cnn

import (
	"math/rand/v2"
	"strings"
	"testing"

	"telltale/internal/testref"
)

// TestCalibrationTestLevel checks the consistency-resampling test of
// Bröcker & Smith (2007) by simulation (common practice, no source): on
// 400 sets of 300 predictions whose outcomes are drawn from their own
// confidences (perfect calibration) it rejects at 5% in about 5% of the
// sets, where the ECE's bootstrap interval reaches 0 in only part of them
// (BootstrapECE); on sets whose accuracy is 0.15 below the confidence it
// rejects nearly always.
func TestCalibrationTestLevel(t *testing.T) {
	if testing.Short() {
		t.Skip("SKIPPED in -short mode: 800 tests of 200 draws each")
	}
	r := rand.New(rand.NewPCG(11, 12))
	const sets, n, draws = 400, 300, 200
	conf := make([]float64, n)
	right := make([]bool, n)
	rejected := [2]int{}
	for s := range 2 * sets {
		shift := 0.0
		if s >= sets {
			shift = 0.15 // overconfident: right less often than it says
		}
		for i := range conf {
			conf[i] = 0.5 + 0.5*r.Float64()
			right[i] = r.Float64() < conf[i]-shift
		}
		if CalibrationTest(conf, right, DefaultBins, draws, uint64(s)) <= 0.05 {
			rejected[s/sets]++
		}
	}
	// Under the hypothesis the count is Binomial(400, 0.05): mean 20, sd 4.4;
	// 8 to 34 is the mean ± 3 sd. (With 200 draws the p-value's own grain
	// is 1/201, well below 0.05.)
	if rejected[0] < 8 || rejected[0] > 34 {
		t.Errorf("calibrated sets: rejected %d of %d at 5%%, want about 20", rejected[0], sets)
	}
	if rejected[1] < sets*95/100 {
		t.Errorf("overconfident sets: rejected %d of %d, want nearly all", rejected[1], sets)
	}
	t.Logf("rejected at 5%%: %d of %d calibrated sets, %d of %d overconfident ones", rejected[0], sets, rejected[1], sets)
}

// CalibrationTest on no text, and its p-value's floor of 1/(draws+1).
func TestCalibrationTestEdges(t *testing.T) {
	if p := CalibrationTest(nil, nil, 0, 10, 1); p != 1 {
		t.Errorf("no text: p = %v, want 1", p)
	}
	conf := []float64{0.99, 0.99, 0.99, 0.99, 0.99, 0.99, 0.99, 0.99}
	wrong := make([]bool, len(conf))
	if p := CalibrationTest(conf, wrong, 0, 99, 1); p != 0.01 {
		t.Errorf("8 wrong predictions at confidence 0.99: p = %v, want 1/100", p)
	}
}

// A p-value at CalibrationTest's floor reads as a bound, "p ≤", rounded up
// so that it stays true (1/2001 = 0.00049975… reads "≤ 0.0005"), and the
// JSON says it is one; a p-value above the floor reads "p =".
func TestCalibrationFigureFloor(t *testing.T) {
	conf := []float64{0.99, 0.99, 0.99, 0.99, 0.99, 0.99, 0.99, 0.99}
	wrong := make([]bool, len(conf))
	iv := Interval{Estimate: 0.99, Low: 0.9, High: 0.99}
	for _, tc := range []struct {
		draws int
		right []bool
		floor bool
		text  string
	}{
		{CalibrationDraws, wrong, true, "; observed 0.950, test of perfect calibration p ≤ 0.0005"},
		{99, wrong, true, "p ≤ 0.01"},
		{2999, wrong, true, "p ≤ 0.00034"}, // 1/3000 = 0.000333…
		{99, []bool{true, true, true, true, true, true, true, true}, false, "p = 1"},
	} {
		p := CalibrationTest(conf, tc.right, 0, tc.draws, 1)
		f := NewCalibrationFigure(0.95, iv, p, tc.draws)
		if f.AtFloor != tc.floor || !strings.HasSuffix(f.String(), tc.text) {
			t.Errorf("%d draws, p %g: at floor %v, %q; want %v, ending %q", tc.draws, p, f.AtFloor, f.String(), tc.floor, tc.text)
		}
		back := testref.JSONFields(t, f)
		if back["calibration_p_at_floor"] != tc.floor || back["calibration_draws"] != float64(tc.draws) || back["calibration_p"] != p || back["observed"] != 0.95 {
			t.Errorf("%d draws: JSON %v", tc.draws, back)
		}
	}
}

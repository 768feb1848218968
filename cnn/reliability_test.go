package cnn

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestReliabilityReproducesECE: the bins of the reliability diagram give
// back ComputeMetrics' expected calibration error, ECE = Σ |B|/n ·
// |acc(B) − conf(B)| (Guo et al. 2017, "On Calibration of Modern Neural
// Networks", ICML, eq. 3), for random predictions and for confidences on
// the bin edges.
func TestReliabilityReproducesECE(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 7))
	for _, c := range []struct {
		name string
		n    int
		bins int
		edge bool
	}{{"random", 500, 15, false}, {"random-10", 333, 10, false}, {"edges", 200, 5, true}, {"one", 1, 15, false}, {"default-bins", 120, 0, false}} {
		t.Run(c.name, func(t *testing.T) {
			labels := []string{"a", "b", "c"}
			gold, pred := make([]int, c.n), make([]int, c.n)
			conf := make([]float64, c.n)
			correct := make([]bool, c.n)
			for i := range c.n {
				gold[i], pred[i] = rng.IntN(3), rng.IntN(3)
				if rng.Float64() < 0.6 {
					pred[i] = gold[i]
				}
				conf[i] = 1.0/3 + rng.Float64()*2/3
				if c.edge {
					conf[i] = float64(rng.IntN(6)) / 5 // 0, 0.2, …, 1: every bin edge
				}
				correct[i] = gold[i] == pred[i]
			}
			want := ComputeMetrics(labels, gold, pred, conf, c.bins).ECE
			bins := Reliability(conf, correct, c.bins)
			nb := c.bins
			if nb == 0 {
				nb = DefaultBins
			}
			if len(bins) != nb {
				t.Fatalf("%d bins, want %d", len(bins), nb)
			}
			var ece float64
			total := 0
			for _, b := range bins {
				ece += float64(b.Count) / float64(c.n) * math.Abs(b.Acc-b.Conf)
				total += b.Count
				if b.Count > 0 && (b.Conf < b.Lo-1e-12 && b.Lo > 0 || b.Conf > b.Hi+1e-12) {
					t.Errorf("bin (%g, %g] has mean confidence %g", b.Lo, b.Hi, b.Conf)
				}
			}
			if total != c.n {
				t.Errorf("bins hold %d predictions, want %d", total, c.n)
			}
			if math.Abs(ece-want) > 1e-12 {
				t.Errorf("bins give ECE %.15f, ComputeMetrics %.15f", ece, want)
			}
		})
	}
}

// TestReliabilityHandCounted checks one small case counted by hand:
// confidences 0.1, 0.5, 0.5, 0.9 in two bins (0, 0.5] and (0.5, 1].
func TestReliabilityHandCounted(t *testing.T) {
	bins := Reliability([]float64{0.1, 0.5, 0.5, 0.9}, []bool{false, true, false, true}, 2)
	want := []ReliabilityBin{{Lo: 0, Hi: 0.5, Count: 3, Conf: 1.1 / 3, Acc: 1.0 / 3}, {Lo: 0.5, Hi: 1, Count: 1, Conf: 0.9, Acc: 1}}
	for i, b := range bins {
		w := want[i]
		if b.Lo != w.Lo || b.Hi != w.Hi || b.Count != w.Count || math.Abs(b.Conf-w.Conf) > 1e-15 || math.Abs(b.Acc-w.Acc) > 1e-15 {
			t.Errorf("bin %d = %+v, want %+v", i, b, w)
		}
	}
}

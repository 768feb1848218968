package main

import (
	"math"
	"testing"
)

// The joined log-loss is the cross-entropy of the softmax of the weighted
// sum (common practice, no source), and a baseline whose scores are the
// same for every label carries nothing, so the fit leaves it out.
func TestStackLossAndFit(t *testing.T) {
	s := stackScores{
		cnn:  [][]float64{{math.Log(0.8), math.Log(0.2)}, {math.Log(0.3), math.Log(0.7)}, {math.Log(0.6), math.Log(0.4)}},
		lin:  [][]float64{{-1, -1}, {-1, -1}, {-1, -1}},
		gold: []int{0, 1, 1},
	}
	a, b := 0.5, 2.0
	for i := range s.gold {
		z0, z1 := a*s.cnn[i][0]+b*s.lin[i][0], a*s.cnn[i][1]+b*s.lin[i][1]
		want := -(map[int]float64{0: z0, 1: z1}[s.gold[i]] - math.Log(math.Exp(z0)+math.Exp(z1)))
		if _, got := s.label(i, a, b); math.Abs(got-want) > 1e-12 {
			t.Errorf("text %d: log-loss %v, want %v", i, got, want)
		}
	}
	// Equal baseline scores add the same to every label: any b gives the
	// same loss, and the fit keeps the first it meets, b = 0.
	if _, fb := s.fit([]int{0, 1, 2}); fb != 0 {
		t.Errorf("fitted baseline weight %v for an uninformative baseline, want 0", fb)
	}
}

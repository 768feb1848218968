package main

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// largestAbs picks what a stable sort by −|v| puts first (the reference:
// sort.SliceStable of the standard library), ties and fewer values than
// asked included.
func TestLargestAbs(t *testing.T) {
	rng := rand.New(rand.NewPCG(49, 49))
	for trial := 0; trial < 500; trial++ {
		v := make([]float64, rng.IntN(40))
		for i := range v {
			v[i] = float64(rng.IntN(9)-4) / 2 // many ties, both signs
			if trial%2 == 0 {
				v[i] = rng.NormFloat64()
			}
		}
		k := rng.IntN(12)
		order := make([]int, len(v))
		for i := range order {
			order[i] = i
		}
		sortBy(order, func(i int) float64 { return -math.Abs(v[i]) })
		if got, want := largestAbs(v, k), order[:min(k, len(order))]; !slices.Equal(got, want) {
			t.Fatalf("values %v, k %d: %v, the stable sort gives %v", v, k, got, want)
		}
	}
}

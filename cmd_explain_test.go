package main

import (
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"telltale/explain"
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

// TestKeptDownNamesWordWeights: the kept-down list's header says, for a
// model with word weights, that the measured change also removes the
// bracketed tokens' word weights (the estimate is the filter's alone, see
// explain.KeptDownWindow.Effect); without them the header is as before.
func TestKeptDownNamesWordWeights(t *testing.T) {
	e := &explain.Explanation{Label: "a", Labels: []string{"a", "b"}, RunnerUp: 1,
		Tokens:   []explain.TokenSpan{{Text: "no"}, {Text: "ferry"}, {Text: "today"}},
		KeptDown: []explain.KeptDownWindow{{Filter: 3, Width: 2, Start: 0, By: []int{0}, Effect: 0.5, LogOdds: 1.25, Drop: 0.1}}}
	e.LogOdds.Value = 1
	for _, wide := range []bool{false, true} {
		if wide {
			e.LogOdds.Words = []float64{0.1, 0.2, 0.3}
		}
		var b strings.Builder
		writeKeptDown(&b, e)
		out := b.String()
		if !strings.Contains(out, `"[no] ferry"  estimate +0.500, measured +0.250`) {
			t.Errorf("wide %v: the window's line is missing:\n%s", wide, out)
		}
		if got := strings.Contains(out, "their word weights removed too"); got != wide {
			t.Errorf("wide %v: the header names the word weights: %v\n%s", wide, got, out)
		}
	}
}

package main

import (
	"slices"
	"testing"

	"telltale/cnn"
)

// crossFitted is the mean of the two scores of the choice made on one
// half, on the other. Candidate 0 is right on all of half 0 and on 6 of
// the 10 texts of half 1; candidate 1 on 8 of half 0 and all of half 1.
// Half 0 chooses candidate 0 and half 1 candidate 1, so the score is the
// mean of candidate 0's on half 1 and candidate 1's on half 0, below the
// 1 that either would claim on the half that chose it. The halves are
// fixed by the seed and split the texts evenly.
func TestCrossFitted(t *testing.T) {
	const n = 20
	h := halves(n)
	if len(h[0]) != n/2 || len(h[1]) != n/2 {
		t.Fatalf("halves of %d and %d texts", len(h[0]), len(h[1]))
	}
	all := slices.Concat(h[0], h[1])
	slices.Sort(all)
	for i, x := range all {
		if x != i {
			t.Fatalf("the halves are not a partition of the %d texts: %v", n, h)
		}
	}
	labels := []string{"a", "b"}
	gold := make([]int, n)
	for i := range gold {
		gold[i] = i % 2
	}
	// rightOn returns predictions right on the first k texts of each half
	// (k[0] of half 0, k[1] of half 1) and wrong on the rest.
	rightOn := func(k [2]int) []int {
		pred := make([]int, n)
		for half, idx := range h {
			for j, i := range idx {
				pred[i] = 1 - gold[i]
				if j < k[half] {
					pred[i] = gold[i]
				}
			}
		}
		return pred
	}
	preds := [][]int{rightOn([2]int{10, 6}), rightOn([2]int{8, 10})}
	onHalf := func(pred []int, half int) float64 {
		g, p := make([]int, 0, n/2), make([]int, 0, n/2)
		for _, i := range h[half] {
			g, p = append(g, gold[i]), append(p, pred[i])
		}
		return cnn.ComputeMetrics(labels, g, p, nil, 0).MacroF1
	}
	want := (onHalf(preds[0], 1) + onHalf(preds[1], 0)) / 2
	if want >= 1 || want <= 0 {
		t.Fatalf("the worked example's score %g: it must lie strictly between 0 and 1", want)
	}
	if got := crossFitted(labels, gold, preds); got != want {
		t.Errorf("cross-fitted macro-F1 %g, want %g", got, want)
	}
}

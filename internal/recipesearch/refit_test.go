package main

import (
	"slices"
	"testing"

	"telltale/cnn"
	"telltale/linear"
)

// TestRefitRecipeFixesTheChoices: the refit trains for the first fit's
// kept epoch count and fits the baseline at its chosen C alone, without
// changing the recipe it was made from (the baseline's settings are
// shared by pointer).
func TestRefitRecipeFixesTheChoices(t *testing.T) {
	r := cnn.DefaultRecipe()
	cs := slices.Clone(r.Baseline.Cs)
	first := &cnn.Model{Baseline: &linear.Model{Classifier: &linear.Classifier{C: 10}}}
	got := refitRecipe(r, first, 7)
	if got.Train.Epochs != 7 {
		t.Errorf("refit epochs %d, want the kept epoch 7", got.Train.Epochs)
	}
	if !slices.Equal(got.Baseline.Cs, []float64{10}) {
		t.Errorf("refit Cs %v, want the chosen C alone", got.Baseline.Cs)
	}
	if r.Train.Epochs != cnn.DefaultRecipe().Train.Epochs || !slices.Equal(r.Baseline.Cs, cs) {
		t.Errorf("the first recipe changed: epochs %d, Cs %v", r.Train.Epochs, r.Baseline.Cs)
	}
}

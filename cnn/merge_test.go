package cnn

import (
	"math/rand/v2"
	"testing"
)

// The merged model's logits are the mean of its members' logits (Merge's
// identity), on the direct forward pass and on the fast path, for members
// of different dimensions; bad inputs are refused.
func TestMergeMeansLogits(t *testing.T) {
	const vocab, classes = 30, 3
	widths := []int{1, 3, 4}
	var ms []*Model
	for i, dim := range []int{5, 8, 3} {
		ms = append(ms, randModel(uint64(i+1), vocab, dim, widths, 4, classes))
	}
	mm, err := Merge(ms)
	if err != nil {
		t.Fatal(err)
	}
	if mm.Config.Dim != 16 || mm.Config.Filters != 12 || mm.Info.Notes["merged"] != "3" {
		t.Fatalf("merged dim %d, maps %d, notes %v", mm.Config.Dim, mm.Config.Filters, mm.Info.Notes)
	}
	texts := randTexts(rand.New(rand.NewPCG(9, 9)), 40, 12, vocab)
	fast := mm.Probabilities(texts, 2)
	for i, ids := range texts {
		want := make([]float32, classes)
		for _, m := range ms {
			for c, z := range m.Forward(ids).Logits {
				want[c] += z / float32(len(ms))
			}
		}
		got := mm.Forward(ids).Logits
		p := make([]float32, classes)
		Softmax(want, p)
		for c := range want {
			// Sums of the same products in another order, in float32.
			if !close32(got[c], want[c], 1e-5, 1e-6) {
				t.Errorf("text %d class %d: merged logit %g, mean of the members' %g", i, c, got[c], want[c])
			}
			if !close32(fast[i][c], p[c], 1e-5, 1e-6) {
				t.Errorf("text %d class %d: merged probability %g, softmax of the mean logit %g", i, c, fast[i][c], p[c])
			}
		}
	}
	other := randModel(4, vocab, 5, []int{2, 3}, 4, classes)
	if _, err := Merge([]*Model{ms[0], other}); err == nil {
		t.Error("members with other widths merged")
	}
	masked := ms[1].Clone()
	masked.Masked = make([]bool, masked.Config.NumFilters())
	masked.Masked[2] = true
	if _, err := Merge([]*Model{ms[0], masked}); err == nil {
		t.Error("a member with a masked filter merged")
	}
	if _, err := Merge(nil); err == nil {
		t.Error("no members merged")
	}
}

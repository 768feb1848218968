package cnn

import (
	"context"
	"math/rand/v2"
	"testing"

	"telltale/corpus"
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

// TrainText with Members 2 keeps the merge of the two models it trains
// with the seeds Seed and Seed+memberSeedStride: its probabilities are the
// softmax of the mean of theirs' logits, and its dev record is its own.
func TestTrainTextMembers(t *testing.T) {
	train, dev := ferryTexts(60), ferryTexts(20)
	r := Recipe{Tokenizer: corpus.TokenizerConfig{Lower: true}, Model: Config{Dim: 6, Widths: []int{2, 3}, Filters: 3, Dropout: 0.5},
		Train: TrainConfig{Epochs: 3, Seed: 5, Threads: 1, EmbedInit: InitPPMI}}
	one := func(seed uint64, members int) *Model {
		rr := r
		rr.Train.Seed, rr.Members = seed, members
		tr, err := TrainText(context.Background(), train, dev, rr, nil)
		if err != nil {
			t.Fatal(err)
		}
		return tr.Model
	}
	merged, a, b := one(5, 2), one(5, 1), one(5+memberSeedStride, 1)
	if merged.Config.Dim != 12 || merged.Config.Filters != 6 {
		t.Fatalf("merged model of dim %d with %d maps, want 12 and 6", merged.Config.Dim, merged.Config.Filters)
	}
	d := mustEncode(t, merged, dev)
	got := merged.Probabilities(d.IDs, 1)
	for i, ids := range d.IDs {
		za, zb := a.Forward(ids).Logits, b.Forward(ids).Logits
		mean := make([]float32, len(za))
		for c := range za {
			mean[c] = (za[c] + zb[c]) / 2
		}
		want := make([]float32, len(mean))
		Softmax(mean, want)
		for c := range want {
			if !close32(got[i][c], want[c], 1e-5, 1e-6) {
				t.Fatalf("text %d class %d: %g, softmax of the members' mean logit %g", i, c, got[i][c], want[c])
			}
		}
	}
	mt, _, err := Evaluate(merged, d, 1)
	if err != nil {
		t.Fatal(err)
	}
	if merged.Info.Dev == nil || merged.Info.Dev.Accuracy != mt.Accuracy {
		t.Errorf("merged dev record %+v, evaluated accuracy %g", merged.Info.Dev, mt.Accuracy)
	}
}

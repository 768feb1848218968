package audit

import (
	"math/rand/v2"
	"testing"

	"telltale/cnn"
	"telltale/internal/testref"
)

// bigramModel is a random model with the word-weight path and bigram
// weights (cnn.Config.WideBigrams): every pair of word ids of texts is in
// the set, word and bigram weights normal with sd 2.
func bigramModel(t *testing.T, rng *rand.Rand, texts [][]int32) *cnn.Model {
	t.Helper()
	cfg := cnn.Config{VocabSize: 30, Dim: 5, Widths: []int{2, 3}, Filters: 3, Classes: 3, Wide: true}
	m, err := cnn.New(cfg, nil, []string{"a", "b", "c"}, 7)
	if err != nil {
		t.Fatal(err)
	}
	if err := m.SetBigrams(cnn.CollectBigrams(texts)); err != nil {
		t.Fatal(err)
	}
	for i := cfg.Classes; i < len(m.Wide); i++ {
		m.Wide[i] = float32(rng.NormFloat64() * 2)
	}
	for i := range m.WideBigram {
		m.WideBigram[i] = float32(rng.NormFloat64() * 2)
	}
	return m
}

// On a model with bigram weights, the word part of a cue's words
// (wordPartOn, Filters.WordPart) is what reading them as the unknown word
// (cnn.Model.MaskedWordsCopy, reference forward pass cnn.Model.Forward)
// takes off the centred logit of the cue's label, averaged over the texts:
// their word rows and the rows of every found pair holding one of them.
// Float32 logits: within 1e-4 (common practice, no source).
func TestWordPartBigrams(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 21))
	d := Data{IDs: make([][]int32, 60)}
	for i := range d.IDs {
		ids := make([]int32, 1+rng.IntN(12))
		for j := range ids {
			ids[j] = int32(2 + rng.IntN(8)) // few words: many repeated pairs
			if rng.IntN(8) == 0 {
				ids[j] = int32(rng.IntN(2)) // PAD or UNK
			}
		}
		d.IDs[i] = ids
	}
	m := bigramModel(t, rng, d.IDs[:30])
	a := &auditor{m: m, opt: Options{Bootstrap: 200, Seed: 3}}
	occ := make([]span, len(d.IDs))
	for i := range occ {
		occ[i] = span{text: int32(i)}
	}
	for trial, ws := range [][]int32{{2}, {3, 5}, {4, 6, 9}} {
		c := &Candidate{Class: trial % 3}
		rem, err := m.MaskedWordsCopy(nil, ws)
		if err != nil {
			t.Fatal(err)
		}
		centred := func(z []float32) float64 {
			var mean float64
			for _, v := range z {
				mean += float64(v) / float64(len(z))
			}
			return float64(z[c.Class]) - mean
		}
		var sum float64
		for _, x := range d.IDs {
			sum += centred(m.Forward(x).Logits) - centred(rem.Forward(x).Logits)
		}
		got := a.wordPartOn(d, occ, c, ws, "test")
		if want := sum / float64(len(d.IDs)); !testref.Close(got.Estimate, want, 1e-4, 0) {
			t.Errorf("words %v: word part %.6f, reading them as the unknown word takes off %.6f", ws, got.Estimate, want)
		}
	}
}

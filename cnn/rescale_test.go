package cnn

import (
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// A positive rescale of filters moves no prediction and no winning window,
// while the rescaled filters' pooled values move by their factor: the
// filters' scale is not pinned down by the data (common practice, no
// source: positive homogeneity of ReLU and max pooling).
func TestWithFiltersRescaled(t *testing.T) {
	m := reparamModel(t)
	ks := map[int]float32{0: 250, 3: 0.004, 6: 7}
	s := m.WithFiltersRescaled(ks)
	rng := rand.New(rand.NewPCG(3, 3))
	for range 200 {
		ids := randomIDs(rng, len(m.Vocab))
		a, b := m.Forward(ids), s.Forward(ids)
		sameProbs(t, ids, a.Probs, b.Probs)
		for g := range a.Pooled {
			k := float32(1)
			if v, ok := ks[g]; ok {
				k = v
			}
			if a.Argmax[g] != b.Argmax[g] {
				t.Fatalf("%v: filter %d wins at %d, then at %d", ids, g, a.Argmax[g], b.Argmax[g])
			}
			if !scalar.EqualWithinAbsOrRel(float64(k*a.Pooled[g]), float64(b.Pooled[g]), 1e-6, 1e-4) {
				t.Fatalf("%v: filter %d pooled %g, rescaled by %g gives %g", ids, g, a.Pooled[g], k, b.Pooled[g])
			}
		}
	}
	if &m.OutW[0] == &s.OutW[0] || m.OutW[0] == s.OutW[0] {
		t.Fatal("the copy shares or keeps filter 0's output weights")
	}
}

// Adding a constant to a filter's output weights across the classes moves
// every logit alike, so no probability moves, while the raw weights do:
// only a column's differences are identified (common practice, no source:
// the softmax is invariant to a shift shared by every logit).
func TestWithVotesShifted(t *testing.T) {
	m := reparamModel(t)
	ds := map[int]float32{0: 2.5, 3: -4, 6: 0.75}
	s := m.WithVotesShifted(ds)
	rng := rand.New(rand.NewPCG(4, 4))
	for range 200 {
		ids := randomIDs(rng, len(m.Vocab))
		a, b := m.Forward(ids), s.Forward(ids)
		sameProbs(t, ids, a.Probs, b.Probs)
	}
	nf := m.Config.NumFilters()
	for g, d := range ds {
		for c := range m.Config.Classes {
			if s.OutW[c*nf+g] != m.OutW[c*nf+g]+d {
				t.Fatalf("filter %d class %d: %g, want %g + %g", g, c, s.OutW[c*nf+g], m.OutW[c*nf+g], d)
			}
		}
	}
}

// reparamModel is a small random model (10 words, widths 2 and 3, three
// classes) for the reparametrisation tests.
func reparamModel(t *testing.T) *Model {
	t.Helper()
	vocab := []string{"<pad>", "<unk>", "a", "b", "c", "d", "e", "f", "g", "h"}
	m, err := New(Config{VocabSize: len(vocab), Dim: 6, Widths: []int{2, 3}, Filters: 4, Classes: 3}, vocab, []string{"x", "y", "z"}, 3)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// randomIDs is a text of 1 to 12 word ids drawn from a vocabulary of size
// words, padding left out.
func randomIDs(rng *rand.Rand, words int) []int32 {
	ids := make([]int32, 1+rng.IntN(12))
	for i := range ids {
		ids[i] = int32(1 + rng.IntN(words-1))
	}
	return ids
}

// sameProbs fails t unless the probabilities a and b of text ids agree to
// float32 rounding.
func sameProbs(t *testing.T, ids []int32, a, b []float32) {
	t.Helper()
	for c := range a {
		if !scalar.EqualWithinAbsOrRel(float64(a[c]), float64(b[c]), 1e-5, 1e-4) {
			t.Fatalf("%v: p[%d] %g becomes %g", ids, c, a[c], b[c])
		}
	}
}

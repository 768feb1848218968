package cnn

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The fast path must reproduce the reference direct convolution (Forward) on
// many random models and texts, including texts shorter than the widest
// filter, empty texts, PAD inside a text and texts split into segments.
func TestPredictMatchesForward(t *testing.T) {
	shapes := []struct {
		dim     int
		widths  []int
		filters int
		classes int
	}{
		{8, []int{3, 4, 5}, 6, 2},
		{5, []int{1, 2}, 3, 3},
		{16, []int{7}, 4, 4},
		{3, []int{2, 5, 3}, 2, 2},
	}
	for si, sh := range shapes {
		for seed := uint64(1); seed <= 5; seed++ {
			m := randModel(seed*31+uint64(si), 40, sh.dim, sh.widths, sh.filters, sh.classes)
			if seed%2 == 0 {
				m.Masked = make([]bool, m.Config.NumFilters())
				m.Masked[int(seed)%len(m.Masked)] = true
			}
			rng := rand.New(rand.NewPCG(seed, uint64(si)))
			texts := randTexts(rng, 30, 60, 40)
			for _, maxTok := range []int{0, 9, 23} {
				p := m.NewPredictor()
				p.maxTokens = maxTok
				outs := make([]Output, len(texts))
				p.Run(texts, outs)
				for i, ids := range texts {
					if maxTok == 0 {
						compareOutput(t, m, ids, outs[i], m.Forward(ids))
					} else {
						compareSegmented(t, m, ids, outs[i], m.Forward(ids))
					}
				}
			}
			batch := m.PredictBatch(texts, 3)
			probs := m.Probabilities(texts, 2)
			for i, ids := range texts {
				want := m.Forward(ids)
				compareOutput(t, m, ids, batch[i], want)
				single := m.Predict(ids)
				compareOutput(t, m, ids, single, want)
				for c, v := range probs[i] {
					if !close32(v, want.Probs[c], 1e-5, 1e-7) {
						t.Fatalf("Probabilities text %d class %d: %g, Forward %g", i, c, v, want.Probs[c])
					}
				}
			}
		}
	}
}

// compareSegmented is compareOutput for texts split into segments, where a
// tie between windows in different segments is broken within float32
// rounding: the chosen window must be a maximum up to rounding.
func compareSegmented(t *testing.T, m *Model, ids []int32, got, want Output) {
	t.Helper()
	for g := range want.Argmax {
		if got.Argmax[g] != want.Argmax[g] {
			v := windowValue(m, ids, g, got.Argmax[g])
			if math.Abs(v-float64(want.Pre[g])) > 1e-5*math.Abs(v)+1e-6 {
				t.Fatalf("text %v filter %d: window %d (value %g) chosen, Forward's maximum is %g at %d", ids, g, got.Argmax[g], v, want.Pre[g], want.Argmax[g])
			}
			got.Argmax[g] = want.Argmax[g]
		}
	}
	compareOutput(t, m, ids, got, want)
}

// windowValue is the pre-activation of filter g at window t, in float64.
func windowValue(m *Model, ids []int32, g, t int) float64 {
	x := Padded(ids, m.Config.MaxWidth())
	w := m.FilterWidth(g)
	v := float64(m.FilterBias(g))
	for s := 0; s < w; s++ {
		for k, a := range m.FilterSlot(g, s) {
			v += float64(a) * float64(m.Row(x[t+s])[k])
		}
	}
	return v
}

func compareOutput(t *testing.T, m *Model, ids []int32, got, want Output) {
	t.Helper()
	if got.Len != want.Len {
		t.Fatalf("text %v: Len %d, want %d", ids, got.Len, want.Len)
	}
	for g := range want.Pre {
		if !close32(got.Pre[g], want.Pre[g], 1e-5, 1e-6) || got.Argmax[g] != want.Argmax[g] ||
			!close32(got.Pooled[g], want.Pooled[g], 1e-5, 1e-6) {
			t.Fatalf("text %v filter %d: pre %g at %d pooled %g, Forward %g at %d pooled %g",
				ids, g, got.Pre[g], got.Argmax[g], got.Pooled[g], want.Pre[g], want.Argmax[g], want.Pooled[g])
		}
	}
	for c := range want.Logits {
		if !close32(got.Logits[c], want.Logits[c], 1e-5, 1e-6) || !close32(got.Probs[c], want.Probs[c], 1e-5, 1e-7) {
			t.Fatalf("text %v class %d: logit %g prob %g, Forward %g %g", ids, c, got.Logits[c], got.Probs[c], want.Logits[c], want.Probs[c])
		}
	}
}

// Steady-state inference with reused outputs does not allocate.
func TestPredictorNoAlloc(t *testing.T) {
	m := randModel(3, 50, 8, []int{3, 4, 5}, 5, 3)
	texts := randTexts(rand.New(rand.NewPCG(1, 2)), 20, 40, 50)
	p := m.NewPredictor()
	outs := make([]Output, len(texts))
	probs := make([]float32, len(texts)*3)
	p.Run(texts, outs)
	p.Probs(texts, probs)
	if a := testing.AllocsPerRun(20, func() { p.Run(texts, outs) }); a != 0 {
		t.Errorf("Predictor.Run: %v allocations per call, want 0", a)
	}
	if a := testing.AllocsPerRun(20, func() { p.Probs(texts, probs) }); a != 0 {
		t.Errorf("Predictor.Probs: %v allocations per call, want 0", a)
	}
}

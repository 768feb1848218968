package cnn

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// The persistent table must give what the per-call tables give (and what
// Forward gives) when it holds all words, some words or none, also for texts
// split into segments, and must follow the weights after Invalidate, Train
// and replaced weight slices.
func TestPersistentTable(t *testing.T) {
	m := randModel(11, 60, 8, []int{3, 4, 5}, 20, 3)
	rng := rand.New(rand.NewPCG(4, 4))
	texts := randTexts(rng, 25, 70, 60)
	for _, cw := range []int{-1, 1, 7, 30, 0} {
		for _, maxTok := range []int{0, 12} {
			p := m.NewPredictor()
			p.cacheWords, p.maxTokens = cw, maxTok
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
	}
	// In-place change + Invalidate.
	m.Probabilities(texts, 2)
	for i := range m.Emb[m.Config.Dim:] {
		m.Emb[m.Config.Dim+i] *= -1.5
	}
	m.Invalidate()
	for i, out := range m.PredictBatch(texts, 2) {
		compareOutput(t, m, texts[i], out, m.Forward(texts[i]))
	}
	// A copy with its own weight slices does not use the original's table.
	c := m.Clone()
	for i := range c.Convs[0].W {
		c.Convs[0].W[i] = -c.Convs[0].W[i]
	}
	for i, out := range c.PredictBatch(texts, 1) {
		compareOutput(t, c, texts[i], out, c.Forward(texts[i]))
	}
	pm := *m
	pm.Emb = append([]float32(nil), m.Emb...)
	pm.Emb[2*m.Config.Dim] += 3
	for i, out := range pm.PredictBatch(texts, 1) {
		compareOutput(t, &pm, texts[i], out, pm.Forward(texts[i]))
	}
}

// Every row is computed alone (f32.StableRows), so the outputs are the same
// bit for bit whether the persistent table is empty, partly or wholly
// filled, bounded to a few words or absent, and whatever the threads and
// batches: each text's probabilities must not depend on its neighbours.
func TestPersistentTableBitForBit(t *testing.T) {
	m := randModel(12, 80, 8, []int{3, 4, 5}, 20, 3)
	texts := randTexts(rand.New(rand.NewPCG(5, 5)), 60, 50, 80)
	want := m.probabilities(texts, 1, false) // per-call tables only
	same := func(what string, i int, got []float32) {
		t.Helper()
		for c := range want[i] {
			if math.Float32bits(got[c]) != math.Float32bits(want[i][c]) {
				t.Fatalf("%s: text %d class %d: %g, per-call tables %g", what, i, c, got[c], want[i][c])
			}
		}
	}
	check := func(what string, got [][]float32) {
		t.Helper()
		for i := range want {
			same(what, i, got[i])
		}
	}
	m.Invalidate()
	check("empty table, 3 threads", m.Probabilities(texts, 3))
	check("filled table, 1 thread", m.Probabilities(texts, 1))
	m.Invalidate()
	for j := len(texts) - 1; j >= 0; j-- { // one text at a time, in reverse: other rows first
		same("alone", j, m.Probabilities(texts[j:j+1], 1)[0])
	}
	for _, bound := range []int{1, 7} {
		m.Invalidate()
		p := m.NewPredictor()
		p.cacheWords = bound
		got := make([]float32, len(texts)*3)
		for range 2 { // filling the table, then with it full
			p.Probs(texts, got)
			for i := range texts {
				same(fmt.Sprintf("table of %d rows", bound), i, got[3*i:3*i+3])
			}
		}
	}
}

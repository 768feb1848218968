package cnn

import (
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

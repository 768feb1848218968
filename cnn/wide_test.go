package cnn

import (
	"context"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// withWide turns the wide path of m on with a table of random values
// (uniform in ±scale, the PAD row zero), so that its term is not zero.
func withWide(m *Model, seed uint64, scale float64) *Model {
	m.Config.Wide = true
	m.Wide = make([]float32, m.Config.VocabSize*m.Config.Classes)
	rng := rand.New(rand.NewPCG(seed, 11))
	for i := m.Config.Classes; i < len(m.Wide); i++ {
		m.Wide[i] = float32((2*rng.Float64() - 1) * scale)
	}
	return m
}

// The fast path (Predictor, PredictBatch, Probabilities) reproduces Forward
// with the wide path on, including texts with PAD inside, empty texts and
// texts split into segments; and Forward's wide term is the mean of the
// non-PAD words' rows, written out from its definition (wide64).
func TestWidePredictMatchesForward(t *testing.T) {
	for seed := uint64(1); seed <= 4; seed++ {
		m := withWide(randModel(seed, 40, 6, []int{2, 3}, 4, 3), seed, 2)
		if seed%2 == 0 {
			m.Masked = make([]bool, m.Config.NumFilters())
			m.Masked[1] = true
		}
		texts := randTexts(rand.New(rand.NewPCG(seed, 5)), 30, 50, 40)
		texts = append(texts, []int32{0, 0, 0}, []int32{0, 9, 0})
		plain := m.Clone()
		plain.Config.Wide, plain.Wide = false, nil
		for _, maxTok := range []int{0, 9} {
			p := m.NewPredictor()
			p.maxTokens = maxTok
			outs := make([]Output, len(texts))
			p.Run(texts, outs)
			for i, ids := range texts {
				want := m.Forward(ids)
				if maxTok == 0 {
					compareOutput(t, m, ids, outs[i], want)
				} else {
					compareSegmented(t, m, ids, outs[i], want)
				}
			}
		}
		probs := m.Probabilities(texts, 2)
		for i, ids := range texts {
			want := m.Forward(ids)
			compareOutput(t, m, ids, m.PredictBatch(texts[i:i+1], 1)[0], want)
			for c, v := range probs[i] {
				if !close32(v, want.Probs[c], 1e-5, 1e-7) {
					t.Fatalf("seed %d text %d class %d: Probabilities %g, Forward %g", seed, i, c, v, want.Probs[c])
				}
			}
			base := plain.Forward(ids)
			for c := range want.Logits {
				got := float64(want.Logits[c]) - float64(base.Logits[c])
				if w := wide64(m, ids, c); !close32(float32(got), float32(w), 1e-5, 1e-6) {
					t.Fatalf("seed %d text %v class %d: wide term %g, definition %g", seed, ids, c, got, w)
				}
			}
		}
	}
}

// With the wide table all zero (as New starts it) every logit is
// bit-identical to the same model's without the path: adding +0 is exact.
func TestWideZeroTableChangesNothing(t *testing.T) {
	m := randModel(3, 30, 5, []int{1, 3}, 3, 2)
	cfg := m.Config
	cfg.Wide = true
	w, err := New(cfg, m.Vocab, m.Labels, 3)
	if err != nil {
		t.Fatal(err)
	}
	if len(w.Wide) != cfg.VocabSize*cfg.Classes || slices.ContainsFunc(w.Wide, func(v float32) bool { return v != 0 }) {
		t.Fatalf("New: wide table of %d values, not all zero; want %d zeros", len(w.Wide), cfg.VocabSize*cfg.Classes)
	}
	for _, ids := range randTexts(rand.New(rand.NewPCG(1, 1)), 20, 30, 30) {
		a, b := m.Forward(ids), w.Forward(ids)
		if !slices.Equal(a.Logits, b.Logits) {
			t.Fatalf("text %v: logits %v with a zero wide table, %v without", ids, b.Logits, a.Logits)
		}
	}
}

// Training with the wide path on learns the toy task (the settings of
// TestTrainLearnsToyTask), trains the table
// (not its PAD row), keeps it through Clone and the kept-epoch copy, and is
// deterministic for a seed; a learning-rate factor changes the result.
func TestWideTrains(t *testing.T) {
	run := func(wideLR float64) *Model {
		m := randModel(1, 30, 8, []int{2, 3}, 4, 2)
		m.Config.Dropout = 0.3
		m = withWide(m, 1, 0)
		train, dev := toyData(1, 300, 30), toyData(2, 100, 30)
		if _, err := Train(context.Background(), m, train, dev, TrainConfig{Epochs: 12, Batch: 10, Seed: 3, Threads: 2,
			Patience: 6, WideLR: wideLR}, nil); err != nil {
			t.Fatal(err)
		}
		mt, _, err := Evaluate(m, dev, 1)
		if err != nil {
			t.Fatal(err)
		}
		if mt.Accuracy < 0.95 {
			t.Errorf("wide, factor %g: dev accuracy %.3f, want ≥ 0.95 on a task one word decides", wideLR, mt.Accuracy)
		}
		return m
	}
	a, b := run(0), run(0)
	C := a.Config.Classes
	if slices.ContainsFunc(a.Wide[:C], func(v float32) bool { return v != 0 }) {
		t.Errorf("the PAD row of the wide table changed: %v", a.Wide[:C])
	}
	// Word 2 decides the class: its weight for class 1 must exceed class 0's.
	if a.Wide[2*C+1] <= a.Wide[2*C] {
		t.Errorf("cue word's wide weights %v: want class 1 above class 0", a.Wide[2*C:3*C])
	}
	if !slices.Equal(a.Wide, b.Wide) || !slices.Equal(a.OutW, b.OutW) {
		t.Error("two runs with the same seed differ")
	}
	if c := a.Clone(); !slices.Equal(c.Wide, a.Wide) || &c.Wide[0] == &a.Wide[0] {
		t.Error("Clone does not deep-copy the wide table")
	}
	if c := run(10); slices.Equal(c.Wide, a.Wide) {
		t.Error("a wide learning-rate factor of 10 gave the same table as 1")
	}
}

// Models with the wide path are refused, with a clear error, where they
// are not supported yet: merging, and ensembles in TrainText; a table of
// the wrong shape is refused by training.
func TestWideRefusedWhereUnsupported(t *testing.T) {
	m := withWide(randModel(2, 20, 4, []int{2}, 2, 2), 2, 1)
	if _, err := Merge([]*Model{m, m.Clone()}); err == nil || !strings.Contains(err.Error(), "wide") {
		t.Errorf("Merge: error %v, want one naming the wide path", err)
	}
	bad := m.Clone()
	bad.Wide = bad.Wide[:len(bad.Wide)-1]
	if _, err := Train(context.Background(), bad, toyData(1, 20, 20), Data{}, TrainConfig{Epochs: 1}, nil); err == nil {
		t.Error("Train accepted a wide table of the wrong shape")
	}
	if _, err := (TrainConfig{WideLR: -1}).WithDefaults(); err == nil {
		t.Error("a negative wide learning-rate factor was accepted")
	}
}

// A training step with the wide path allocates nothing once its buffers
// have grown, as without it (TestTrainStepNoAlloc).
func TestWideStepNoAlloc(t *testing.T) {
	m := withWide(randModel(6, 40, 8, []int{2, 3}, 4, 3), 6, 0)
	d := toyData(9, 100, 40)
	tc, err := TrainConfig{Seed: 1, Threads: 2, TokenDropout: 0.25, WideLR: 10}.WithDefaults()
	if err != nil {
		t.Fatal(err)
	}
	tr := newTrainer(m, tc)
	defer tr.close()
	tr.prepare(d)
	batches := makeBatches(rand.New(rand.NewPCG(1, 1)), d.IDs, 10, make([]int, d.Len()), nil)
	for _, b := range batches {
		tr.step(d, b)
	}
	i := 0
	if a := testing.AllocsPerRun(20, func() { tr.step(d, batches[i%len(batches)]); i++ }); a != 0 {
		t.Errorf("%v allocations per training step, want 0", a)
	}
}

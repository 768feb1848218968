package cnn

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// toyData is a deterministic two-class task: class 1 texts contain word 2
// ("cue") somewhere, class 0 texts never do; the other words are noise.
func toyData(seed uint64, n, vocab int) Data {
	rng := rand.New(rand.NewPCG(seed, 7))
	d := Data{IDs: make([][]int32, n), Labels: make([]int, n)}
	for i := range d.IDs {
		l := 3 + rng.IntN(12)
		t := make([]int32, l)
		for j := range t {
			t[j] = int32(3 + rng.IntN(vocab-3))
		}
		if i%2 == 1 {
			t[rng.IntN(l)] = 2
			d.Labels[i] = 1
		}
		d.IDs[i] = t
	}
	return d
}

func TestTrainLearnsToyTask(t *testing.T) {
	for _, opt := range []string{"adam", "adadelta"} {
		m := randModel(1, 30, 8, []int{2, 3}, 4, 2)
		m.Config.Dropout = 0.3
		m.Config.MaxNorm = 3
		train, dev := toyData(1, 300, 30), toyData(2, 100, 30)
		var reports []Progress
		res, err := Train(context.Background(), m, train, dev, TrainConfig{Epochs: 12, Batch: 10, Optimizer: opt, Seed: 3, Threads: 2, Patience: 6},
			func(p Progress) { reports = append(reports, p) })
		if err != nil {
			t.Fatal(err)
		}
		mt, _, err := Evaluate(m, dev, 1)
		if err != nil {
			t.Fatal(err)
		}
		if mt.Accuracy < 0.95 {
			t.Errorf("%s: dev accuracy %.3f after training, want ≥ 0.95 on a task a single filter solves", opt, mt.Accuracy)
		}
		best := res.Epochs[res.BestEpoch-1].Dev
		if best.MacroF1 != mt.MacroF1 {
			t.Errorf("%s: model holds weights with macro-F1 %g, best epoch %d had %g", opt, mt.MacroF1, res.BestEpoch, best.MacroF1)
		}
		for _, e := range res.Epochs {
			if e.Dev.MacroF1 > best.MacroF1 {
				t.Errorf("%s: epoch %d beat the kept epoch %d", opt, e.Epoch, res.BestEpoch)
			}
		}
		if reports[len(reports)-1].Phase != "done" || res.ExamplesPerSec <= 0 {
			t.Errorf("%s: last report %+v, examples/s %g", opt, reports[len(reports)-1], res.ExamplesPerSec)
		}
		for r := 0; r < m.Config.Classes; r++ {
			var ss float64
			for _, v := range m.OutW[r*8 : (r+1)*8] {
				ss += float64(v) * float64(v)
			}
			if ss > 9*(1+1e-5) {
				t.Errorf("%s: output row %d has squared norm %g > 9 with max-norm 3", opt, r, ss)
			}
		}
		for _, v := range m.Emb[:m.Config.Dim] {
			if v != 0 {
				t.Fatalf("%s: PAD row changed by training", opt)
			}
		}
	}
}

// Same seed and thread count: bit-identical weights; different seed: not.
func TestTrainDeterministic(t *testing.T) {
	run := func(seed uint64, threads int) *Model {
		m := randModel(5, 30, 6, []int{1, 3}, 3, 3)
		m.Config.Dropout = 0.5
		d := toyData(4, 120, 30)
		for i := range d.Labels {
			d.Labels[i] = (i * 7) % 3
		}
		if _, err := Train(context.Background(), m, d, Data{}, TrainConfig{Epochs: 2, Batch: 7, Seed: seed, Threads: threads}, nil); err != nil {
			t.Fatal(err)
		}
		return m
	}
	for _, th := range []int{1, 3} {
		a, b := run(9, th), run(9, th)
		if !slices.Equal(a.Emb, b.Emb) || !slices.Equal(a.OutW, b.OutW) || !slices.Equal(a.Convs[1].W, b.Convs[1].W) {
			t.Errorf("threads %d: two runs with the same seed differ", th)
		}
		if c := run(10, th); slices.Equal(a.OutW, c.OutW) {
			t.Errorf("threads %d: a different seed gave identical weights", th)
		}
	}
}

// Cancelling keeps the best completed epoch's weights.
func TestTrainCancel(t *testing.T) {
	m := randModel(2, 30, 6, []int{2}, 3, 2)
	train, dev := toyData(5, 200, 30), toyData(6, 40, 30)
	ctx, cancel := context.WithCancel(context.Background())
	res, err := Train(ctx, m, train, dev, TrainConfig{Epochs: 50, Batch: 10, Seed: 1, Patience: -1}, func(p Progress) {
		if p.Phase == "epoch" && p.Epoch == 2 {
			cancel()
		}
	})
	if err != nil {
		t.Fatal(err)
	}
	if !res.Cancelled || len(res.Epochs) != 2 {
		t.Fatalf("cancelled %v after %d epochs, want true after 2", res.Cancelled, len(res.Epochs))
	}
	mt, _, _ := Evaluate(m, dev, 1)
	if mt.MacroF1 != res.Epochs[res.BestEpoch-1].Dev.MacroF1 {
		t.Errorf("after cancel the model's macro-F1 is %g, best epoch's %g", mt.MacroF1, res.Epochs[res.BestEpoch-1].Dev.MacroF1)
	}
}

// With a dev split whose labels are unrelated to the texts, macro-F1 stops
// improving and training ends Patience epochs after the best one.
func TestTrainEarlyStopping(t *testing.T) {
	m := randModel(3, 30, 6, []int{2}, 3, 2)
	train, dev := toyData(7, 100, 30), toyData(8, 40, 30)
	for i := range dev.Labels {
		dev.Labels[i] = 0
	}
	res, err := Train(context.Background(), m, train, dev, TrainConfig{Epochs: 40, Batch: 10, Seed: 1, Patience: 2}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !res.StoppedEarly || len(res.Epochs) != res.BestEpoch+2 {
		t.Errorf("stopped early %v after %d epochs with best epoch %d, want stop 2 epochs after the best", res.StoppedEarly, len(res.Epochs), res.BestEpoch)
	}
}

// A training step allocates nothing once its buffers have grown.
func TestTrainStepNoAlloc(t *testing.T) {
	m := randModel(6, 40, 8, []int{2, 3}, 4, 3)
	m.Config.Dropout, m.Config.MaxNorm = 0.5, 3
	d := toyData(9, 100, 40)
	for _, opt := range []string{"adam", "adadelta"} {
		tc, _ := TrainConfig{Seed: 1, Threads: 2, Optimizer: opt, TokenDropout: 0.25, WordDropout: 0.25, ClassWeight: "balanced"}.WithDefaults()
		tr := newTrainer(m, tc)
		tr.prepare(d)
		batches := makeBatches(rand.New(rand.NewPCG(1, 1)), d.IDs, 10, make([]int, d.Len()), nil)
		for _, b := range batches {
			tr.step(d, b)
		}
		i := 0
		if a := testing.AllocsPerRun(20, func() { tr.step(d, batches[i%len(batches)]); i++ }); a != 0 {
			t.Errorf("%s: %v allocations per training step, want 0", opt, a)
		}
		tr.close()
	}
}

// TestTrainStopsWhenDiverging: with a learning rate far too large, the loss
// overflows float32 within a few batches (Adam's first step moves every
// weight by about the learning rate; Kingma & Ba 2015, section 2.1). Train
// must stop at once, in the first epoch, and keep no epoch.
func TestTrainStopsWhenDiverging(t *testing.T) {
	train, dev := toyData(1, 300, 30), toyData(2, 100, 30)
	m := randModel(1, 30, 8, []int{2, 3}, 4, 2)
	res, err := Train(context.Background(), m, train, dev, TrainConfig{Epochs: 5, Batch: 10, Seed: 3, Threads: 1, LR: 1e30}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if res.Diverged == nil {
		t.Fatalf("no divergence reported at learning rate 1e30; epochs %+v", res.Epochs)
	}
	if res.Diverged.Epoch != 1 || res.Diverged.Batch < 1 || len(res.Epochs) != 0 || res.BestEpoch != 0 {
		t.Errorf("diverged %+v after %d epochs (best %d): want a stop in a batch of the first epoch with no epoch kept",
			res.Diverged, len(res.Epochs), res.BestEpoch)
	}
}

// TestTrainKeepsBestEpochWhenDivergingLater: a run whose loss turns NaN
// after good epochs stops in the next batch and keeps the best of them. A
// NaN is put into an output bias when epoch 2 ends (through the progress
// callback, the only way in from outside); the weights handed back must be
// finite and score on dev exactly as the best epoch did.
func TestTrainKeepsBestEpochWhenDivergingLater(t *testing.T) {
	train, dev := toyData(1, 300, 30), toyData(2, 100, 30)
	m := randModel(1, 30, 8, []int{2, 3}, 4, 2)
	tc := TrainConfig{Epochs: 6, Batch: 10, Seed: 3, Threads: 1, Patience: -1}
	res, err := Train(context.Background(), m, train, dev, tc, func(p Progress) {
		if p.Phase == "epoch" && p.Epoch == 2 {
			m.OutB[0] = float32(math.NaN())
		}
	})
	if err != nil {
		t.Fatal(err)
	}
	if d := res.Diverged; d == nil || d.Epoch != 3 || d.Batch != 1 || d.Value != "NaN" {
		t.Fatalf("diverged %+v, want the first batch of epoch 3 with loss NaN", res.Diverged)
	}
	if len(res.Epochs) != 2 || res.BestEpoch < 1 {
		t.Fatalf("%d epochs recorded, best %d; want 2 and one of them", len(res.Epochs), res.BestEpoch)
	}
	if !finiteWeights(m) {
		t.Fatal("the kept weights are not finite")
	}
	mt, _, err := Evaluate(m, dev, 1)
	if err != nil {
		t.Fatal(err)
	}
	if want := res.Epochs[res.BestEpoch-1].Dev.MacroF1; mt.MacroF1 != want {
		t.Errorf("kept weights score macro-F1 %g, best epoch %d had %g", mt.MacroF1, res.BestEpoch, want)
	}
}

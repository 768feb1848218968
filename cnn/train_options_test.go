package cnn

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// With embedding dropout, the loss and the gradients of every parameter
// (the character layer's included) agree with the float64 reference loss
// and its central finite differences, the reference given the mask the
// step drew, one row per word of the batch (common practice, no source;
// the tolerance of TestGradientFiniteDifferences).
func TestEmbedDropoutGradientFiniteDifferences(t *testing.T) {
	const h, p = 1e-3, 0.4
	for seed := uint64(1); seed <= 4; seed++ {
		var m *Model
		if seed%2 == 0 {
			m = randCharModel(seed, 12, 3, []int{1, 2, 3}, 3, 3, CharConfig{Filters: 3, Width: 2, Dim: 3, MaxChars: 5})
			for i := range m.Char.W {
				m.Char.W[i] *= 2
			}
			m.FillChars()
		} else {
			m = randModel(seed, 12, 4, []int{1, 2, 3}, 3, 3)
		}
		for i := range m.OutW {
			m.OutW[i] *= 3
		}
		rng := rand.New(rand.NewPCG(seed, 98))
		texts := randTexts(rng, 5, 8, 12)
		labels := make([]int, len(texts))
		for i := range labels {
			labels[i] = rng.IntN(3)
		}
		tr := newTrainer(m, TrainConfig{Threads: 1 + int(seed%2), EmbedDropout: p, Seed: seed})
		tr.texts, tr.labels = texts, labels
		loss := tr.forwardBackward()
		tr.close()
		d := m.Config.Dim
		scale := map[int32][]float32{}
		zeros := 0
		for i, id := range tr.ws.words {
			row := tr.embDrop[i*d : (i+1)*d]
			for _, v := range row {
				switch {
				case v == 0:
					zeros++
				case math.Abs(float64(v)-1/(1-p)) > 1e-6:
					t.Fatalf("seed %d: mask value %g, want 0 or 1/(1−p)", seed, v)
				}
			}
			scale[id] = slices.Clone(row)
		}
		if n := len(tr.ws.words) * d; zeros == 0 || zeros == n {
			t.Fatalf("seed %d: %d of %d values dropped: the check needs both kinds", seed, zeros, n)
		}
		ref, _ := ref64Scaled(m, texts, labels, nil, scale)
		if math.Abs(loss-ref) > 1e-5*math.Abs(ref) {
			t.Fatalf("seed %d: loss %g, float64 reference %g", seed, loss, ref)
		}
		wd := m.Config.WordDim()
		var fd fdTally
		for _, pr := range gradParams(m, tr) {
			for i := range pr.p {
				if pr.name == "Emb" && (scale[int32(i/d)] == nil || i < d || i%d >= wd) {
					continue // not in the batch, PAD, or a character column
				}
				if pr.name == "CharEmb" && i < m.Config.Chars.Dim {
					continue // the zero character
				}
				fd.compare(t, fmt.Sprintf("seed %d %s[%d]", seed, pr.name, i), pr.p, pr.g, i, h,
					func() (float64, []int) { return ref64Scaled(m, texts, labels, nil, scale) })
			}
		}
		fd.enough(t, seed)
	}
}

// firstAdamStep reports whether every value of after that moved moved by
// lr (to 1% relative, room for ε beside small gradients and float32
// rounding): Adam's first step of a parameter is lr·g/(|g|+ε) after bias
// correction (Kingma & Ba 2015, Algorithm 1). A step that counted the
// warm-up's steps too would be about 0.64·lr here (the third step's bias
// corrections with a zero state). It also reports how many values moved.
func firstAdamStep(before, after []float32, lr float64) (bool, int) {
	moved := 0
	for i := range before {
		if d := math.Abs(float64(after[i]) - float64(before[i])); d != 0 {
			moved++
			if math.Abs(d-lr) > 1e-2*lr {
				return false, moved
			}
		}
	}
	return true, moved
}

// During the head warm-up only the output layer moves; in the first epoch
// after it the embeddings and filters take Adam's first step, of the full
// learning rate; LRDecay makes epoch e's step LR·γ^(e−1).
func TestHeadWarmupAndLRDecay(t *testing.T) {
	const lr = 0.01
	d := toyData(3, 40, 30)
	idx := []int{0, 1, 2, 3, 4, 5, 6, 7}
	m := randModel(2, 30, 6, []int{2, 3}, 4, 2)
	tc, err := TrainConfig{LR: lr, Seed: 1, Threads: 2, HeadWarmup: 2, LRDecay: 0.5}.WithDefaults()
	if err != nil {
		t.Fatal(err)
	}
	tr := newTrainer(m, tc)
	defer tr.close()
	tr.prepare(d)
	emb, conv, outW := slices.Clone(m.Emb), slices.Clone(m.Convs[1].W), slices.Clone(m.OutW)
	for epoch := 1; epoch <= 2; epoch++ {
		tr.setEpoch(epoch)
		tr.step(d, idx)
	}
	if !slices.Equal(emb, m.Emb) || !slices.Equal(conv, m.Convs[1].W) {
		t.Fatal("the embeddings or filters moved during the head warm-up")
	}
	if slices.Equal(outW, m.OutW) {
		t.Fatal("the output layer did not move during the head warm-up")
	}
	tr.setEpoch(3)
	if want := lr * 0.25; math.Abs(tr.lr-want) > 1e-15 {
		t.Fatalf("epoch 3 learning rate %g, want %g", tr.lr, want)
	}
	tr.step(d, idx)
	for name, pair := range map[string][2][]float32{"filters": {conv, m.Convs[1].W}, "embeddings": {emb, m.Emb}} {
		if ok, moved := firstAdamStep(pair[0], pair[1], tr.lr); !ok || moved == 0 {
			t.Errorf("%s after the warm-up: %d values moved, first Adam step of %g each: %v", name, moved, tr.lr, ok)
		}
	}
}

// With the three options on, training is still deterministic for a seed
// and learns the toy task (with them off, the optimizer steps' checks
// against PyTorch stand unchanged).
func TestTrainOptionsDeterministicAndLearn(t *testing.T) {
	run := func() (*Model, *TrainResult) {
		m := randModel(1, 30, 8, []int{2, 3}, 4, 2)
		m.Config.Dropout = 0.3
		train, dev := toyData(1, 300, 30), toyData(2, 100, 30)
		res, err := Train(context.Background(), m, train, dev, TrainConfig{Epochs: 20, Batch: 10, Seed: 3, Threads: 2, Patience: 6,
			EmbedDropout: 0.25, HeadWarmup: 1, LRDecay: 0.9}, nil)
		if err != nil {
			t.Fatal(err)
		}
		return m, res
	}
	a, res := run()
	b, _ := run()
	if !slices.Equal(a.Emb, b.Emb) || !slices.Equal(a.OutW, b.OutW) || !slices.Equal(a.Convs[0].W, b.Convs[0].W) {
		t.Error("two runs with the same seed differ")
	}
	if acc := res.Epochs[res.BestEpoch-1].Dev.Accuracy; acc < 0.95 {
		t.Errorf("dev accuracy %.3f, want ≥ 0.95 on a task a single filter solves", acc)
	}
}

// Invalid settings of the three options are refused with their name.
func TestTrainOptionsValidation(t *testing.T) {
	for _, c := range []struct {
		tc   TrainConfig
		want string
	}{
		{TrainConfig{EmbedDropout: 1}, "embedding dropout"},
		{TrainConfig{EmbedDropout: -0.1}, "embedding dropout"},
		{TrainConfig{EmbedDropout: math.NaN()}, "embedding dropout"},
		{TrainConfig{HeadWarmup: -1}, "head warm-up"},
		{TrainConfig{Epochs: 3, HeadWarmup: 3}, "head warm-up"},
		{TrainConfig{LRDecay: 1.5}, "learning-rate decay"},
		{TrainConfig{KeepFrom: -1}, "keep from"},
		{TrainConfig{LRDecay: -0.5}, "learning-rate decay"},
	} {
		if _, err := c.tc.WithDefaults(); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want one naming the %s", c.tc, err, c.want)
		}
	}
	if _, err := (TrainConfig{EmbedDropout: 0.5, HeadWarmup: 9, LRDecay: 1}).WithDefaults(); err != nil {
		t.Errorf("valid settings refused: %v", err)
	}
}

// Early stopping never ends a run inside the head warm-up: with a warm-up
// longer than the patience, the whole network still trains for at least
// the patience's epochs after it (common practice, no source).
func TestHeadWarmupOutlastsPatience(t *testing.T) {
	for seed := uint64(1); seed <= 4; seed++ {
		m := randModel(seed, 30, 8, []int{2, 3}, 4, 2)
		w0 := slices.Clone(m.Convs[0].W)
		train, dev := toyData(1, 300, 30), toyData(2, 100, 30)
		const warm, patience = 6, 2
		res, err := Train(context.Background(), m, train, dev, TrainConfig{Epochs: 20, Batch: 10, Seed: seed, Threads: 2,
			Patience: patience, HeadWarmup: warm}, nil)
		if err != nil {
			t.Fatal(err)
		}
		if len(res.Epochs) < warm+patience {
			t.Errorf("seed %d: %d epochs run with a %d-epoch warm-up and patience %d, want at least %d",
				seed, len(res.Epochs), warm, patience, warm+patience)
		}
		if slices.Equal(w0, m.Convs[0].W) {
			t.Errorf("seed %d: the filters never trained", seed)
		}
	}
}

// KeepFrom: the kept epoch is the first best dev macro-F1 among the epochs
// from KeepFrom on, and the run goes on at least until KeepFrom plus the
// patience (or its last epoch); the training itself is that of the run
// without it, epoch for epoch, as only the choice of the kept epoch
// changes (an identity). A run cancelled before KeepFrom still keeps its
// best epoch so far, and a run of fewer epochs than KeepFrom keeps its
// last. The dev split's labels are the task's swapped, so
// that the more the model learns the worse it scores there and a run
// without KeepFrom keeps an early epoch.
func TestKeepFrom(t *testing.T) {
	const keepFrom, patience, epochs = 5, 2, 12
	train, dev := toyData(1, 300, 30), toyData(2, 100, 30)
	for i, y := range dev.Labels {
		dev.Labels[i] = 1 - y
	}
	for seed := uint64(1); seed <= 3; seed++ {
		run := func(ctx context.Context, keep, epochs int, progress func(Progress)) *TrainResult {
			m := randModel(seed, 30, 8, []int{2, 3}, 4, 2)
			res, err := Train(ctx, m, train, dev, TrainConfig{Epochs: epochs, Batch: 10, Seed: seed, Threads: 2,
				Patience: patience, KeepFrom: keep}, progress)
			if err != nil {
				t.Fatal(err)
			}
			return res
		}
		free, kept := run(t.Context(), 0, epochs, nil), run(t.Context(), keepFrom, epochs, nil)
		if free.BestEpoch >= keepFrom {
			t.Fatalf("seed %d: without KeepFrom the run kept epoch %d: the test needs an earlier one", seed, free.BestEpoch)
		}
		if kept.BestEpoch < keepFrom {
			t.Fatalf("seed %d: kept epoch %d, before KeepFrom %d", seed, kept.BestEpoch, keepFrom)
		}
		best := keepFrom
		for e := keepFrom; e <= len(kept.Epochs); e++ {
			if kept.Epochs[e-1].Dev.MacroF1 > kept.Epochs[best-1].Dev.MacroF1 {
				best = e
			}
		}
		if kept.BestEpoch != best {
			t.Errorf("seed %d: kept epoch %d, want %d (the first best dev macro-F1 from epoch %d)", seed, kept.BestEpoch, best, keepFrom)
		}
		if len(kept.Epochs) < min(epochs, keepFrom+patience) {
			t.Errorf("seed %d: stopped after %d epochs, before KeepFrom %d plus patience %d", seed, len(kept.Epochs), keepFrom, patience)
		}
		for e := range min(len(free.Epochs), len(kept.Epochs)) {
			if free.Epochs[e].Loss != kept.Epochs[e].Loss {
				t.Fatalf("seed %d, epoch %d: training loss %g with KeepFrom, %g without", seed, e+1, kept.Epochs[e].Loss, free.Epochs[e].Loss)
			}
		}
		ctx, cancel := context.WithCancel(t.Context())
		early := run(ctx, keepFrom, epochs, func(p Progress) {
			if p.Phase == "epoch" && p.Epoch == 2 {
				cancel()
			}
		})
		cancel()
		if !early.Cancelled || early.BestEpoch < 1 || early.BestEpoch > 2 {
			t.Errorf("seed %d: cancelled after epoch 2: cancelled %v, kept epoch %d, want one of the first two", seed, early.Cancelled, early.BestEpoch)
		}
		if short := run(t.Context(), keepFrom, keepFrom-1, nil); short.BestEpoch != keepFrom-1 {
			t.Errorf("seed %d: %d epochs with KeepFrom %d kept epoch %d, want the last", seed, keepFrom-1, keepFrom, short.BestEpoch)
		}
	}
}

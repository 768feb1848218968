package cnn

import (
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"testing"

	"telltale/internal/testref"
)

// flatWeights lists every trainable weight of m.
func flatWeights(m *Model) []float32 {
	out := append([]float32(nil), m.Emb...)
	for _, c := range m.Convs {
		out = append(append(out, c.W...), c.B...)
	}
	return append(append(out, m.OutW...), m.OutB...)
}

// With AverageLast 3 and no dev split the kept model is the element-wise
// mean of the weights at the ends of the last three epochs (checkpoint
// averaging, Vaswani et al. 2017), recorded here at each epoch's end.
func TestTrainAverageLast(t *testing.T) {
	m := randModel(4, 30, 6, []int{2, 3}, 3, 2)
	m.Config.Dropout = 0.5
	var ends [][]float32
	_, err := Train(context.Background(), m, toyData(3, 80, 30), Data{},
		TrainConfig{Epochs: 5, Batch: 8, Seed: 2, Threads: 2, AverageLast: 3},
		func(p Progress) {
			if p.Phase == "epoch" {
				ends = append(ends, flatWeights(m)) // m holds the running weights here
			}
		})
	if err != nil {
		t.Fatal(err)
	}
	got := flatWeights(m)
	for i := range got {
		var want float64
		for _, e := range ends[2:] {
			want += float64(e[i]) / 3
		}
		// Sums of three float32 values in another order.
		if !close32(got[i], float32(want), 1e-6, 1e-7) {
			t.Fatalf("weight %d: %g, mean of the last three epochs %g", i, got[i], want)
		}
	}
	// The last epoch alone differs from the mean: the test sees the average.
	if last := ends[len(ends)-1]; close32(last[len(last)-1], got[len(got)-1], 1e-6, 0) && close32(last[0+m.Config.Dim], got[m.Config.Dim], 1e-6, 0) {
		t.Error("the kept weights equal the last epoch's: nothing was averaged")
	}
}

// With a dev split and AverageLast, each epoch's dev metrics are those of
// the averaged model, and the kept model is the best of them.
func TestTrainAverageLastDev(t *testing.T) {
	m := randModel(5, 30, 6, []int{2}, 3, 2)
	train, dev := toyData(5, 120, 30), toyData(6, 60, 30)
	res, err := Train(context.Background(), m, train, dev,
		TrainConfig{Epochs: 4, Batch: 10, Seed: 1, Patience: -1, AverageLast: 2}, nil)
	if err != nil {
		t.Fatal(err)
	}
	checkKeptIsBest(t, m, dev, res)
}

// checkKeptIsBest checks that m, the model a run kept, scores on dev what
// its kept epoch recorded, and that no epoch recorded a higher macro-F1.
func checkKeptIsBest(t *testing.T, m *Model, dev Data, res *TrainResult) {
	t.Helper()
	mt, _, err := Evaluate(m, dev, 1)
	if err != nil {
		t.Fatal(err)
	}
	if kept := res.Epochs[res.BestEpoch-1].Dev; kept.MacroF1 != mt.MacroF1 || kept.Accuracy != mt.Accuracy {
		t.Errorf("kept model: macro-F1 %g accuracy %g; epoch %d recorded %g and %g", mt.MacroF1, mt.Accuracy, res.BestEpoch, kept.MacroF1, kept.Accuracy)
	}
	for _, e := range res.Epochs {
		if e.Dev.MacroF1 > mt.MacroF1 {
			t.Errorf("epoch %d (%g) beat the kept epoch %d (%g)", e.Epoch, e.Dev.MacroF1, res.BestEpoch, mt.MacroF1)
		}
	}
}

// StopOn "loss" keeps the epoch of the lowest dev cross-entropy, computed
// here from the model's probabilities at each epoch's end.
func TestTrainStopOnLoss(t *testing.T) {
	m := randModel(6, 30, 6, []int{2, 3}, 3, 2)
	m.Config.Dropout = 0.5
	train, dev := toyData(9, 100, 30), toyData(10, 60, 30)
	for i := range dev.Labels[:20] {
		dev.Labels[i] = 1 - dev.Labels[i] // label noise: the dev loss turns up late
	}
	var losses []float64
	res, err := Train(context.Background(), m, train, dev,
		TrainConfig{Epochs: 15, Batch: 10, Seed: 4, LR: 0.03, Patience: -1, StopOn: StopLoss},
		func(p Progress) {
			if p.Phase == "epoch" {
				var s float64
				for i, pr := range m.Probabilities(dev.IDs, 1) {
					s -= math.Log(float64(pr[dev.Labels[i]]))
				}
				losses = append(losses, s/float64(dev.Len()))
			}
		})
	if err != nil {
		t.Fatal(err)
	}
	best := 0
	for e, l := range losses {
		if l < losses[best] {
			best = e
		}
	}
	if res.BestEpoch != best+1 {
		t.Errorf("kept epoch %d, lowest dev loss in epoch %d (losses %.4f)", res.BestEpoch, best+1, losses)
	} else {
		t.Logf("kept epoch %d of %d, dev losses %.4f", res.BestEpoch, len(losses), losses)
	}
	if best+1 == len(losses) {
		t.Errorf("the lowest dev loss is in the last epoch (%.4f): the test cannot tell the rule from keeping the last", losses)
	}
}

// StopOn "macro-f1,loss" keeps the epoch of the highest dev macro-F1 and,
// of the epochs tied on it, the one of the lowest dev cross-entropy,
// computed here from the model's probabilities at each epoch's end. The
// toy task is easy, so several epochs score a dev macro-F1 of 1.
func TestTrainStopOnMacroF1ThenLoss(t *testing.T) {
	m := randModel(6, 30, 6, []int{2, 3}, 3, 2)
	train, dev := toyData(9, 100, 30), toyData(10, 60, 30)
	var f1s, losses []float64
	res, err := Train(context.Background(), m, train, dev,
		TrainConfig{Epochs: 12, Batch: 10, Seed: 4, LR: 0.03, Patience: -1, StopOn: StopMacroF1Loss},
		func(p Progress) {
			if p.Phase != "epoch" {
				return
			}
			var s float64
			for i, pr := range m.Probabilities(dev.IDs, 1) {
				s -= math.Log(float64(pr[dev.Labels[i]]))
			}
			mt, _, err := Evaluate(m, dev, 1)
			if err != nil {
				t.Fatal(err)
			}
			losses = append(losses, s/float64(dev.Len()))
			f1s = append(f1s, mt.MacroF1)
		})
	if err != nil {
		t.Fatal(err)
	}
	best, firstBest := 0, 0
	for e := range f1s {
		if f1s[e] > f1s[best] || f1s[e] == f1s[best] && losses[e] < losses[best] {
			best = e
		}
		if f1s[e] > f1s[firstBest] {
			firstBest = e
		}
	}
	if res.BestEpoch != best+1 {
		t.Errorf("kept epoch %d; best by macro-F1 then loss is epoch %d (macro-F1 %.4f, losses %.4f)", res.BestEpoch, best+1, f1s, losses)
	}
	if firstBest == best {
		t.Errorf("no tie on macro-F1 that the loss breaks (macro-F1 %.4f, losses %.4f): the test cannot tell the rule from macro-F1 alone", f1s, losses)
	}
}

func TestTrainConfigNewChecks(t *testing.T) {
	for _, tc := range []TrainConfig{
		{EmbedInit: "glove"}, {WeightDecay: -1}, {WeightDecay: 2000}, {AverageLast: -1}, {StopOn: "accuracy"},
	} {
		if _, err := tc.WithDefaults(); err == nil {
			t.Errorf("%+v accepted", tc)
		}
	}
	for _, tc := range []TrainConfig{{EmbedInit: InitPPMI}, {WeightDecay: 0.1}, {AverageLast: 3}, {StopOn: StopLoss}, {StopOn: StopMacroF1}, {StopOn: StopMacroF1Loss}} {
		if _, err := tc.WithDefaults(); err != nil {
			t.Errorf("%+v: %v", tc, err)
		}
	}
}

// Three optimizer steps with WeightDecay agree with torch.optim.AdamW
// (Debian's python3-torch, cnn/testdata/adamw_check.py) on every weight:
// decay on the embeddings, filters and output weights, none on the biases.
// Tolerance 1e-6 absolute, as for the parameters in
// TestKernelAdamStepPyTorch: PyTorch forms 1−β₂ before rounding it to
// float32, a relative difference of 1.3e-5 in v, which moves each step by
// up to about 1e-5 of the learning rate (3 steps of 0.01: 3e-7). The decay
// itself moves a weight by LR·WeightDecay·|w| ≈ 5e-4 per step here.
func TestWeightDecayAgainstAdamW(t *testing.T) {
	requirePython(t, "torch")
	m := randModel(8, 12, 4, []int{2, 3}, 2, 3)
	tc, err := TrainConfig{LR: 0.01, WeightDecay: 0.5, Threads: 1}.WithDefaults()
	if err != nil {
		t.Fatal(err)
	}
	tr := newTrainer(m, tc)
	defer tr.close()
	rng := rand.New(rand.NewPCG(8, 8))
	in := struct {
		Params [][]float32   `json:"params"`
		Decay  []bool        `json:"decay"`
		Grads  [][][]float32 `json:"grads"`
		LR     float64       `json:"lr"`
		WD     float64       `json:"weight_decay"`
	}{LR: tc.LR, WD: tc.WeightDecay}
	for _, g := range tr.groups {
		in.Params = append(in.Params, append([]float32(nil), g.p...))
		in.Decay = append(in.Decay, g.decay)
	}
	for range 3 {
		var step [][]float32
		for _, g := range tr.groups {
			for i := range g.g {
				g.g[i] = float32(rng.NormFloat64())
			}
			step = append(step, append([]float32(nil), g.g...))
		}
		in.Grads = append(in.Grads, step)
		tr.update()
	}
	js, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	out := testref.RunScript(t, "adamw_check.py", js)
	var ref struct {
		Params [][]float64 `json:"params"`
		Torch  string      `json:"torch"`
	}
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatal(err)
	}
	for gi, g := range tr.groups {
		for i, v := range g.p {
			if !testref.Close(float64(v), ref.Params[gi][i], 1e-6, 0) {
				t.Errorf("group %d (decay %v) weight %d: %.9g, AdamW %.9g", gi, g.decay, i, v, ref.Params[gi][i])
			}
		}
	}
	t.Logf("compared with torch %s", ref.Torch)
}

package cnn

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"strings"
	"testing"

	"telltale/internal/testref"
)

// Four training steps with TrainConfig.WideDecay agree with the same
// network in PyTorch (Debian's python3-torch, script
// cnn/testdata/wide_decay_check.py) trained by torch.optim.AdamW, the word
// and bigram tables in a parameter group of their own at LR·WideLR with
// weight_decay WeightDecay+WideDecay, the embeddings, filters and output
// weights at LR with WeightDecay, the biases without decay: every weight of
// the model. The wide decay shrinks the tables by 1 − 0.1·0.35 a step here,
// about 13% of each weight (up to 0.5) in four steps, far beyond the
// tolerance, so the check fails if the option is ignored. Tolerance as
// TestWideSparseAgainstTorch's, for the same reasons.
func TestWideDecayAgainstTorch(t *testing.T) {
	testref.RequirePython(t, "torch")
	m := sparseModel(t)
	C, D := m.Config.Classes, m.Config.Dim
	for i := range C {
		if m.Wide[i] != 0 {
			t.Fatal("the word weights' PAD row is not zero: AdamW would shrink it, the trainer never trains it")
		}
	}
	for i := range D {
		if m.Emb[i] != 0 {
			t.Fatal("the embeddings' PAD row is not zero: AdamW would shrink it, the trainer never trains it")
		}
	}
	d := sparseTexts()
	batches := [][]int{{0, 1, 2}, {3, 4, 5}, {1, 2, 4}, {3, 1}}
	tc, err := TrainConfig{LR: 0.01, WideLR: 2, WeightDecay: 0.05, WideDecay: 1.5, Threads: 2}.WithDefaults()
	if err != nil {
		t.Fatal(err)
	}
	js := torchStepInput(t, m, d, batches, tc, map[string]any{"weight_decay": tc.WeightDecay, "wide_decay": tc.WideDecay})
	tr := newTrainer(m, tc)
	defer tr.close()
	for _, b := range batches {
		tr.step(d, b)
	}
	compareWithTorch(t, m, "wide_decay_check.py", js)
}

// A row with no gradient in any step (no moments, so Adam's step on it is
// exactly zero) is only shrunk by the decoupled decay: each step multiplies
// it by 1 − LR·WideLR·(WeightDecay+WideDecay) in the word and bigram
// tables and by 1 − LR·WeightDecay in the embeddings (Loshchilov & Hutter
// 2019, Algorithm 2; torch.optim.AdamW's documented update), exactly in
// float32. Words 20–22 and the pair (20, 21) occur only in texts 0 and
// none, which no batch holds. With WideDecay 0.1 the table rows shrink by
// 1.5% a step against 0.5% without, so the check fails if the option is
// ignored, or if it reaches the embeddings.
func TestWideDecayShrinksRowsWithoutGradient(t *testing.T) {
	d := sparseTexts()
	for _, wdec := range []float64{0, 0.1} {
		m := sparseModel(t)
		C, D := m.Config.Classes, m.Config.Dim
		pair := m.bigramRow(20, 21)
		if pair < 0 {
			t.Fatal("the pair (20, 21) is not in the model's bigram set")
		}
		tc, err := TrainConfig{WideLR: 100, WeightDecay: 0.05, WideDecay: wdec, Threads: 1}.WithDefaults()
		if err != nil {
			t.Fatal(err)
		}
		kWide := float32(1 - tc.LR*tc.WideLR*(tc.WeightDecay+wdec))
		kEmb := float32(1 - tc.LR*tc.WeightDecay)
		type row struct {
			what  string
			tab   []float32
			r, n  int
			k     float32
			start []float32
		}
		rows := []row{{what: "pair (20, 21)", tab: m.WideBigram, r: pair, n: C, k: kWide}, {what: "embedding 22", tab: m.Emb, r: 22, n: D, k: kEmb}}
		for _, w := range []int{20, 21, 22} {
			rows = append(rows, row{what: fmt.Sprintf("word weights %d", w), tab: m.Wide, r: w, n: C, k: kWide})
		}
		for i := range rows {
			rows[i].start = wideRow(rows[i].tab, rows[i].r, rows[i].n)
		}
		tr := newTrainer(m, tc)
		batches := [][]int{{1, 2, 3}, {2, 3}, {1}}
		for _, b := range batches {
			tr.step(d, b)
		}
		tr.close()
		for _, rw := range rows {
			got := wideRow(rw.tab, rw.r, rw.n)
			for i, v := range rw.start {
				want := v
				for range batches {
					want *= rw.k
				}
				if got[i] != want || v == 0 {
					t.Errorf("wide decay %g: %s[%d]: %.9g from %.9g, want %.9g (×%.7g a step)", wdec, rw.what, i, got[i], v, want, rw.k)
				}
			}
		}
	}
}

// WideDecay refuses a negative, NaN or infinite value, one whose shrink
// factor with WeightDecay reaches 0 (LR·WideLR·(WeightDecay+WideDecay) ≥ 1,
// WideLR 0 counting as 1), and the sparse update; it accepts a factor just
// above 0.
func TestWideDecayRefusals(t *testing.T) {
	for _, tc := range []TrainConfig{{WideDecay: -0.1}, {WideDecay: math.NaN()}, {WideDecay: math.Inf(1)},
		{WideLR: 100, WideDecay: 10}, {WideLR: 100, WeightDecay: 5, WideDecay: 5}, {WideDecay: 1000},
		{WideSparse: true, WideDecay: 0.1}} {
		if _, err := tc.WithDefaults(); err == nil || !strings.Contains(err.Error(), "wide weight decay") {
			t.Errorf("%+v: error %v, want one naming the wide weight decay", tc, err)
		}
	}
	for _, tc := range []TrainConfig{{WideLR: 100, WideDecay: 9.99}, {WideDecay: 999}, {WideLR: 100, WideDecay: 0.1}} {
		if _, err := tc.WithDefaults(); err != nil {
			t.Errorf("%+v: %v", tc, err)
		}
	}
}

// Train refuses WideDecay on a model without word or bigram weights, where
// it would change nothing, before any step.
func TestWideDecayNeedsWideTables(t *testing.T) {
	m := randModel(3, 30, 5, []int{2, 3}, 3, 3)
	_, err := Train(context.Background(), m, sparseTexts(), Data{}, TrainConfig{Epochs: 1, WideDecay: 0.1, Threads: 1}, nil)
	if err == nil || !strings.Contains(err.Error(), "without word or bigram weights") {
		t.Errorf("Train with wide decay on a model without word weights: error %v", err)
	}
}

// The model file records WideDecay in its recipe and reads it back; a
// recipe without it (as files written before the option) writes no
// "wide_decay" member and reads back as 0.
func TestWideDecayModelFile(t *testing.T) {
	for _, wdec := range []float64{0.03, 0} {
		m, _ := savedModel(t)
		m.Info.Recipe = &TrainConfig{Epochs: 10, LR: 1e-3, WideLR: 100, WeightDecay: 0.01, WideDecay: wdec}
		if has := bytes.Contains(encodedParts(t, m).header, []byte(`"wide_decay"`)); has != (wdec != 0) {
			t.Errorf("wide decay %g: the header has a \"wide_decay\" member: %v", wdec, has)
		}
		got, err := decode(encodedFile(t, m), true)
		if err != nil {
			t.Fatal(err)
		}
		if got.Info.Recipe == nil || got.Info.Recipe.WideDecay != wdec || got.Info.Recipe.WeightDecay != 0.01 {
			t.Errorf("wide decay %g: the file's recipe reads back as %+v", wdec, got.Info.Recipe)
		}
	}
}

package cnn

import (
	"encoding/json"
	"slices"
	"strings"
	"testing"

	"telltale/corpus"
	"telltale/internal/testref"
)

// sparseTexts is a tiny training set for the row-sparse checks (ids over a
// vocabulary of 30, PAD 0 and UNK 1): word 20 and the pair (20, 21) occur
// only in text 0, word 22 in no text, text 4 has no word (UNK's row scores
// it), and text 5 holds UNK itself.
func sparseTexts() Data {
	return Data{
		IDs: [][]int32{
			{20, 21, 5, 6, 7},
			{5, 6, 8, 9},
			{3, 4, 5, 6, 10, 11},
			{8, 9, 3, 4},
			{},
			{12, 1, 5, 6, 0, 13},
		},
		Labels: []int{0, 1, 2, 1, 0, 2},
	}
}

// sparseModel is a small model with word and bigram weights over the pairs
// of sparseTexts, no dropout.
func sparseModel(t *testing.T) *Model {
	m := randModel(3, 30, 5, []int{2, 3}, 3, 3)
	return withBigrams(t, m, sparseTexts().IDs, 3, 0.5)
}

// Four training steps with TrainConfig.WideSparse agree with the same
// network in PyTorch (Debian's python3-torch, script
// cnn/testdata/sparse_adam_check.py) whose word and bigram tables are looked
// up with F.embedding(sparse=True) and trained by torch.optim.SparseAdam,
// the other weights by torch.optim.Adam, on every weight of the model. The
// batches leave rows out after they had gradient (word 20 and the pair
// (20, 21) in steps 2–4, UNK's row in steps 1 and 4), so dense Adam on the
// tables would move them on their momentum and disagree; every batch finds
// a pair, so SparseAdam counts every step on both tables as the trainer
// does. Tolerance 2e-6 absolute plus 1e-4 relative: PyTorch rounds its
// float32 sums in another order (the gradients agree within 1e-4 relative,
// TestTorchCrossCheck), and Adam's steps are about the learning rate
// whatever the gradient's size.
func TestWideSparseAgainstTorch(t *testing.T) {
	testref.RequirePython(t, "torch")
	m := sparseModel(t)
	d := sparseTexts()
	batches := [][]int{{0, 1, 2}, {3, 4, 5}, {1, 2, 4}, {3, 1}}
	tc, err := TrainConfig{LR: 0.01, WideLR: 10, WideSparse: true, Threads: 2}.WithDefaults()
	if err != nil {
		t.Fatal(err)
	}
	js := torchStepInput(t, m, d, batches, tc, nil) // the starting weights, before the steps change them
	tr := newTrainer(m, tc)
	defer tr.close()
	for _, b := range batches {
		tr.step(d, b)
	}
	compareWithTorch(t, m, "sparse_adam_check.py", js)
}

// torchStepInput returns the JSON input of sparse_adam_check.py and
// wide_decay_check.py: m's weights, d, the batches, tc's learning rate and
// wide factor, and the members of extra. m must have word and bigram
// weights.
func torchStepInput(t *testing.T, m *Model, d Data, batches [][]int, tc TrainConfig, extra map[string]any) []byte {
	t.Helper()
	cfg := m.Config
	in := map[string]any{"vocab": cfg.VocabSize, "dim": cfg.Dim, "filters": cfg.Filters, "classes": cfg.Classes,
		"widths": cfg.Widths, "emb": m.Emb, "out_w": m.OutW, "out_b": m.OutB, "wide": m.Wide,
		"wide_bigram": m.WideBigram, "bigram_keys": m.Bigrams, "texts": d.IDs, "labels": d.Labels,
		"batches": batches, "lr": tc.LR, "wide_lr": tc.WideLR}
	var convW, convB [][]float32
	for _, c := range m.Convs {
		convW, convB = append(convW, c.W), append(convB, c.B)
	}
	in["conv_w"], in["conv_b"] = convW, convB
	for k, v := range extra {
		in[k] = v
	}
	js, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	return js
}

// compareWithTorch runs script on the input js and compares every weight
// of m (trained by the same steps) with the script's, within 2e-6 absolute
// plus 1e-4 relative (see TestWideSparseAgainstTorch).
func compareWithTorch(t *testing.T, m *Model, script string, js []byte) {
	t.Helper()
	out := testref.RunScript(t, script, js)
	var ref struct {
		Emb, OutW, OutB, Wide, Big []float64
		ConvW, ConvB               [][]float64
		Torch                      string
	}
	var raw map[string]json.RawMessage
	if err := json.Unmarshal(out, &raw); err != nil {
		t.Fatal(err)
	}
	for k, v := range map[string]any{"emb": &ref.Emb, "out_w": &ref.OutW, "out_b": &ref.OutB, "wide": &ref.Wide,
		"wide_bigram": &ref.Big, "conv_w": &ref.ConvW, "conv_b": &ref.ConvB, "torch": &ref.Torch} {
		if err := json.Unmarshal(raw[k], v); err != nil {
			t.Fatalf("%s's %s: %v", script, k, err)
		}
	}
	cmp := func(what string, got []float32, want []float64) {
		t.Helper()
		if len(got) != len(want) {
			t.Fatalf("%s: %d values, torch %d", what, len(got), len(want))
		}
		for i := range want {
			if !testref.Close(float64(got[i]), want[i], 2e-6, 1e-4) {
				t.Errorf("%s[%d]: %.9g, torch %.9g", what, i, got[i], want[i])
			}
		}
	}
	cmp("Emb", m.Emb, ref.Emb)
	for b, c := range m.Convs {
		cmp("conv W", c.W, ref.ConvW[b])
		cmp("conv B", c.B, ref.ConvB[b])
	}
	cmp("OutW", m.OutW, ref.OutW)
	cmp("OutB", m.OutB, ref.OutB)
	cmp("Wide", m.Wide, ref.Wide)
	cmp("WideBigram", m.WideBigram, ref.Big)
	t.Logf("compared with torch %s", ref.Torch)
}

// wideRow returns a copy of row r (C values) of a table.
func wideRow(tab []float32, r, C int) []float32 {
	return slices.Clone(tab[r*C : (r+1)*C])
}

// With TrainConfig.WideSparse a row of the word or bigram weights that a
// step does not touch keeps its value exactly (the definition of the lazy
// update, torch.optim.SparseAdam): word 20 and the pair (20, 21), seen only
// in the first batch, and UNK's row, touched only by the first batch's
// wordless text, do not move in three later steps; word 22, in no batch,
// keeps its starting value. Under dense Adam the same rows move on their
// momentum after their one gradient, so this check fails if the option is
// ignored.
func TestWideSparseLeavesUntouchedRows(t *testing.T) {
	d := sparseTexts()
	C := 3
	for _, lazy := range []bool{true, false} {
		m := sparseModel(t)
		pair := m.bigramRow(20, 21)
		if pair < 0 {
			t.Fatal("the pair (20, 21) is not in the model's bigram set")
		}
		tc, err := TrainConfig{WideLR: 100, WideSparse: lazy, Threads: 1}.WithDefaults()
		if err != nil {
			t.Fatal(err)
		}
		tr := newTrainer(m, tc)
		start22 := wideRow(m.Wide, 22, C)
		startUNK := wideRow(m.Wide, int(corpus.UNK), C)
		start20 := wideRow(m.Wide, 20, C)
		tr.step(d, []int{0, 4, 1})
		if slices.Equal(wideRow(m.Wide, 20, C), start20) || slices.Equal(wideRow(m.Wide, int(corpus.UNK), C), startUNK) {
			t.Fatalf("lazy %v: the first step left word 20's or UNK's row as it was", lazy)
		}
		w20, unk, big := wideRow(m.Wide, 20, C), wideRow(m.Wide, int(corpus.UNK), C), wideRow(m.WideBigram, pair, C)
		for _, b := range [][]int{{1, 2}, {3}, {2, 1, 3}} {
			tr.step(d, b)
		}
		tr.close()
		kept := slices.Equal(wideRow(m.Wide, 20, C), w20) && slices.Equal(wideRow(m.Wide, int(corpus.UNK), C), unk) &&
			slices.Equal(wideRow(m.WideBigram, pair, C), big)
		if kept != lazy {
			t.Errorf("lazy %v: rows without gradient in the last three steps kept their values: %v, want %v", lazy, kept, lazy)
		}
		if !slices.Equal(wideRow(m.Wide, 22, C), start22) {
			t.Errorf("lazy %v: word 22, in no batch, moved from %v to %v", lazy, start22, wideRow(m.Wide, 22, C))
		}
	}
}

// WideSparse refuses the settings it has no update for: another optimizer
// than Adam, and weight decay (torch.optim.SparseAdam has none).
func TestWideSparseRefusals(t *testing.T) {
	for _, tc := range []TrainConfig{{WideSparse: true, Optimizer: "adadelta"}, {WideSparse: true, WeightDecay: 0.1}} {
		if _, err := tc.WithDefaults(); err == nil || !strings.Contains(err.Error(), "sparse") {
			t.Errorf("%+v: error %v, want one naming the sparse update", tc, err)
		}
	}
	if _, err := (TrainConfig{WideSparse: true}).WithDefaults(); err != nil {
		t.Errorf("WideSparse with Adam: %v", err)
	}
}

package report

import (
	"context"
	"path/filepath"
	"slices"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
)

// TestReportReadsUnseenWords: for a model with a character layer the
// report's evaluation and explained texts read the test split's unseen
// words as telltale eval and predict do, with vectors of their own
// (cnn.Model.WithUnseen), not as the unknown word: its metrics are
// cnn.Evaluate's on that reading and every explained text's probabilities
// the forward pass of the text's own WithUnseen model. The unknown word's
// reading is computed beside them, so the test fails when the report
// falls back to it.
func TestReportReadsUnseenWords(t *testing.T) {
	root := repoRoot()
	train, _, err := corpus.Load(filepath.Join(root, "testdata", "demo", "train.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	test, _, err := corpus.Load(filepath.Join(root, "testdata", "demo", "test.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	train, test = keep(train, 600), keep(test, 150)
	r := cnn.DefaultRecipe()
	r.Tokenizer.MinCount = 2 // words seen once stay out of the vocabulary: the test split has unseen words
	r.Model.Chars = &cnn.CharConfig{Filters: 6, Width: 2, Dim: cnn.DefaultCharDim, MaxChars: cnn.DefaultMaxChars}
	r.Model.Dim, r.Model.Widths, r.Model.Filters = 16+6, []int{2, 3}, 8
	r.Train.Epochs, r.Train.Threads, r.Train.Patience = 3, 2, -1
	trained, err := cnn.TrainText(context.Background(), train, nil, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	m := trained.Model
	in, err := Gather(context.Background(), m, train, test, Options{SkipAudit: true, Threads: 2}, nil)
	if err != nil {
		t.Fatal(err)
	}

	metricsOf := func(m *cnn.Model, enc *corpus.Encoder) cnn.Metrics {
		d, err := cnn.EncodeDataset(enc, test, m.Labels, 2)
		if err != nil {
			t.Fatal(err)
		}
		met, _, err := cnn.Evaluate(m, d, 2)
		if err != nil {
			t.Fatal(err)
		}
		return met
	}
	mu, encU, err := m.WithUnseen(nil, test.Texts())
	if err != nil || mu == m {
		t.Fatalf("the test split has no unseen words (%v)", err)
	}
	want, asUnknown := metricsOf(mu, encU), metricsOf(m, trained.Encoder)
	if want.ECE == asUnknown.ECE {
		t.Fatalf("the ECE is %g on both readings: the check cannot tell them apart", want.ECE)
	}
	got := in.Metrics
	if got.Accuracy != want.Accuracy || !slices.EqualFunc(got.Confusion, want.Confusion, slices.Equal) ||
		!testref.Close(got.ECE, want.ECE, 1e-9, 1e-9) {
		t.Errorf("the report's metrics: accuracy %g, ECE %g; eval's reading %g, %g; the unknown word's %g, %g",
			got.Accuracy, got.ECE, want.Accuracy, want.ECE, asUnknown.Accuracy, asUnknown.ECE)
	}
	if in.Baseline == nil || in.Baseline.CNN.ECE != got.ECE {
		t.Errorf("the baseline comparison's CNN is not the evaluated one: %+v", in.Baseline)
	}

	unseen := 0
	for _, ex := range in.Examples {
		mt, enc, err := m.WithUnseen(nil, []string{ex.Text})
		if err != nil {
			t.Fatal(err)
		}
		_, ids := enc.Encode(ex.Text)
		p := mt.Forward(ids).Probs
		_, idsK := trained.Encoder.Encode(ex.Text)
		pK := m.Forward(idsK).Probs
		for c := range p {
			// float32 forward passes of the same rows and filters.
			if !testref.Close(ex.Explanation.Probabilities[c], float64(p[c]), 1e-6, 1e-6) {
				t.Errorf("%q: p(%s) = %g in the report, %g as predict reads it (%g as the unknown word)",
					ex.Text, m.Labels[c], ex.Explanation.Probabilities[c], p[c], pK[c])
			}
		}
		if mt != m && !slices.Equal(p, pK) {
			unseen++
		}
	}
	if unseen == 0 {
		t.Errorf("none of the %d explained texts reads differently with its unseen words: the check cannot fail", len(in.Examples))
	}
}

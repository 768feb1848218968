package explain

import (
	"context"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
)

// auditRecipe is a small, fast training recipe for the audit tests.
type auditRecipe struct {
	dim, filters int
	widths       []int
	epochs       int
	maxLen       int
	minCount     int
	seed         uint64
}

// trainForAudit builds a lower-casing tokenizer and vocabulary on train,
// trains a model with recipe r and returns it with both splits as
// AuditData (texts cut to r.maxLen tokens).
func trainForAudit(t testing.TB, train, held *corpus.Dataset, r auditRecipe) (*cnn.Model, AuditData, AuditData) {
	t.Helper()
	tok, err := corpus.NewTokenizer(corpus.TokenizerConfig{Lower: true, MinCount: r.minCount})
	if err != nil {
		t.Fatal(err)
	}
	v := corpus.BuildVocab(tok, train.Texts(), r.minCount, 0)
	cfg := cnn.Config{VocabSize: v.Len(), Dim: r.dim, Widths: r.widths, Filters: r.filters,
		Classes: len(train.Labels), Dropout: 0.5}
	m, err := cnn.New(cfg, v.Words, train.Labels, r.seed)
	if err != nil {
		t.Fatal(err)
	}
	m.Tokenizer = tok.Config()
	tr, err := NewAuditData(m, train, r.maxLen, 0)
	if err != nil {
		t.Fatal(err)
	}
	ho, err := NewAuditData(m, held, r.maxLen, 0)
	if err != nil {
		t.Fatal(err)
	}
	_, err = cnn.Train(context.Background(), m, cnn.Data{IDs: tr.IDs, Labels: tr.Gold}, cnn.Data{},
		cnn.TrainConfig{Epochs: r.epochs, Seed: r.seed, Patience: -1}, nil)
	if err != nil {
		t.Fatal(err)
	}
	return m, tr, ho
}

// corpusRoot returns the path of a corpus under testdata/ of the module,
// skipping the test loudly when it is missing (failing when CI=true).
func corpusRoot(t testing.TB, name, probe string) string {
	t.Helper()
	root := filepath.Join("..", "testdata", name)
	if _, err := os.Stat(filepath.Join(root, probe)); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("corpus missing at %s (CI=true): %v", root, err)
		}
		t.Skipf("SKIPPING: corpus missing at %s (%v); see the Makefile for how to fetch it", root, err)
	}
	return root
}

// accuracy of m on d (by the model's own fast path).
func auditAccuracy(t testing.TB, m *cnn.Model, d AuditData) float64 {
	t.Helper()
	mt, _, err := cnn.Evaluate(m, cnn.Data{IDs: d.IDs, Labels: d.Gold}, 0)
	if err != nil {
		t.Fatal(err)
	}
	return mt.Accuracy
}

// keyedOn reports whether suspect s is keyed on one of words: the word is
// one of its cues, or it lies in at least 30% of the filter's windows at or
// above its purity threshold.
func keyedOn(s Suspect, words ...string) bool {
	for _, c := range append(slices.Clone(s.Cues), s.Words...) {
		if slices.Contains(words, c.Token) && (c.WindowShare >= 0.3 || slices.ContainsFunc(s.Cues, func(x Cue) bool { return x.ID == c.ID })) {
			return true
		}
	}
	return false
}

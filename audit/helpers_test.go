package audit

import (
	"context"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
)

// loadCSV reads a labeled file of the module's testdata.
func loadCSV(t testing.TB, dir, name string) *corpus.Dataset {
	t.Helper()
	root := testref.Corpus(t, dir, name)
	d, _, err := corpus.Load(filepath.Join(root, name), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// trainText trains recipe r (seeded) on train with dev for early stopping.
func trainText(t testing.TB, train, dev *corpus.Dataset, r cnn.Recipe, seed uint64) *cnn.Model {
	t.Helper()
	r.Train.Seed = seed
	tr, err := cnn.TrainText(context.Background(), train, dev, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	return tr.Model
}

// data reads ds for m.
func data(t testing.TB, m *cnn.Model, ds *corpus.Dataset) Data {
	t.Helper()
	d, err := NewData(m, ds, 0)
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// run audits and logs the whole text.
func run(t testing.TB, m *cnn.Model, train, held Data, opt Options) *Result {
	t.Helper()
	res, err := Run(context.Background(), m, train, held, opt, nil)
	if err != nil {
		t.Fatal(err)
	}
	var sb strings.Builder
	if err := res.WriteText(&sb); err != nil {
		t.Fatal(err)
	}
	t.Log("\n" + sb.String())
	return res
}

// hasWord reports whether the cue's words hold one of words.
func hasWord(c Candidate, words ...string) bool {
	return slices.ContainsFunc(c.Words, func(w string) bool { return slices.Contains(words, w) })
}

func acted(res *Result) []Candidate {
	var out []Candidate
	for _, c := range res.Ranked {
		if c.Verdict == VerdictActed {
			out = append(out, c)
		}
	}
	return out
}

package report

import (
	"context"
	"path/filepath"
	"runtime"
	"sync"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/linear"
)

// demoFixture is a small model trained on a slice of the demo corpus, with
// the train and test slices it was made from.
type demoFixture struct {
	model       *cnn.Model
	train, test *corpus.Dataset
	report      *Report
	input       Input
}

var (
	demoOnce sync.Once
	demo     demoFixture
	demoErr  error
)

func repoRoot() string {
	_, file, _, _ := runtime.Caller(0)
	return filepath.Dir(filepath.Dir(file))
}

// keep returns the first n examples of d.
func keep(d *corpus.Dataset, n int) *corpus.Dataset {
	i := 0
	return d.Filter(func(corpus.Example) bool { i++; return i <= n })
}

// loadDemo trains a tiny model (8 filters of widths 2 and 3 over 24-d
// vectors, 5 epochs) on the first 1,200 demo training texts and gathers a
// report of it on the first 300 test texts; it runs once per test binary.
func loadDemo(t *testing.T) demoFixture {
	t.Helper()
	demoOnce.Do(func() {
		demoErr = func() error {
			root := repoRoot()
			train, _, err := corpus.Load(filepath.Join(root, "testdata", "demo", "train.csv"), corpus.Options{})
			if err != nil {
				return err
			}
			test, _, err := corpus.Load(filepath.Join(root, "testdata", "demo", "test.csv"), corpus.Options{})
			if err != nil {
				return err
			}
			train, test = keep(train, 1200), keep(test, 300)
			tok, err := corpus.NewTokenizer(corpus.TokenizerConfig{Lower: true})
			if err != nil {
				return err
			}
			v := corpus.BuildVocab(tok, train.Texts(), 2, 0)
			cfg := cnn.Config{VocabSize: v.Len(), Dim: 24, Widths: []int{2, 3}, Filters: 8, Classes: len(train.Labels), Dropout: 0.3}
			m, err := cnn.New(cfg, v.Words, train.Labels, 7)
			if err != nil {
				return err
			}
			m.Tokenizer = tok.Config()
			enc := func(d *corpus.Dataset) (cnn.Data, error) {
				gold, err := d.LabelIndex(m.Labels)
				if err != nil {
					return cnn.Data{}, err
				}
				out := cnn.Data{Labels: gold}
				for _, e := range d.Examples {
					out.IDs = append(out.IDs, v.Encode(tok.TokenizeFor(v, e.Text)))
				}
				return out, nil
			}
			trd, err := enc(train)
			if err != nil {
				return err
			}
			tc := cnn.TrainConfig{Epochs: 5, LR: 0.005, Seed: 3, Threads: 2, Patience: -1}
			res, err := cnn.Train(context.Background(), m, trd, cnn.Data{}, tc, nil)
			if err != nil {
				return err
			}
			rec, _ := tc.WithDefaults()
			m.Info = cnn.Info{Created: "2025-01-01T00:00:00Z", Recipe: &rec, Epochs: res.Epochs, BestEpoch: res.BestEpoch, ExamplesPerSec: res.ExamplesPerSec}
			// The linear baseline beside it, on the tokenizer's words (as
			// cnn.TrainText fits it; without a dev split, the grid's middle C).
			var docs [][]string
			for _, e := range train.Examples {
				var words []string
				for _, tk := range tok.Tokenize(e.Text) {
					words = append(words, tk.Text)
				}
				docs = append(docs, words)
			}
			if m.Baseline, err = linear.Fit(context.Background(), linear.Split{Docs: docs, Labels: trd.Labels}, linear.Split{}, m.Labels,
				linear.DefaultConfig(), nil, nil); err != nil {
				return err
			}
			in, err := Gather(context.Background(), m, train, test, Options{Title: "Ferry desk demo", ModelPath: "demo.model", Threads: 2}, nil)
			if err != nil {
				return err
			}
			r, err := New(in)
			if err != nil {
				return err
			}
			demo = demoFixture{model: m, train: train, test: test, report: r, input: in}
			return nil
		}()
	})
	if demoErr != nil {
		t.Fatalf("building the demo fixture: %v", demoErr)
	}
	return demo
}

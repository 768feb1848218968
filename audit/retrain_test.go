package audit

import (
	"context"
	"encoding/json"
	"math"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
)

// TestRetrainKeepsTheBaseline: a model retrained with the recipe rebuilt
// from a model file (which keeps the baseline's configuration in the
// baseline, not in the recipe) carries a linear baseline of the same
// configuration, fitted on the masked training text: the masked word is
// among the audited model's baseline features and in none of the retrained
// one's. (An identity of Retrain; the demo corpus is only the material:
// every fourth of its texts, 1,000, fit both baselines in a quarter of the
// time and hold the word as often as it needs, once.)
func TestRetrainKeepsTheBaseline(t *testing.T) {
	if testing.Short() {
		t.Skip("SKIPPED in -short mode (the race pass): fits the linear baseline twice, ten times slower under the race detector; the full run keeps it")
	}
	n := 0
	all := loadCSV(t, "demo-equal", "train.csv").Filter(func(corpus.Example) bool { n++; return n%4 == 1 })
	train, dev := all.Split(cnn.DefaultDevFrac, 1)
	r := cnn.DefaultRecipe()
	r.Model.Dim, r.Model.Filters, r.Train.Epochs = 8, 4, 1
	m := trainText(t, train, dev, r, 1)
	if m.Baseline == nil {
		t.Fatal("the default recipe fitted no baseline")
	}
	const word = "ticket"
	if !slices.Contains(m.Baseline.Vectorizer.Features, word) {
		t.Fatalf("the audited model's baseline has no feature %q: choose another word", word)
	}
	fromFile := cnn.Recipe{Tokenizer: m.Tokenizer, Model: m.Config, Train: *m.Info.Recipe}
	fromFile.Tokenizer.SubwordPieces = nil
	fromFile.Model.VocabSize, fromFile.Model.Classes = 0, 0
	rt, err := Retrain(context.Background(), m, []string{word}, train, dev, dev, nil, fromFile, nil)
	if err != nil {
		t.Fatal(err)
	}
	b := rt.Model.Baseline
	if b == nil {
		t.Fatal("the retrained model carries no linear baseline")
	}
	if b.Config.Features != m.Baseline.Config.Features || !slices.Equal(b.Config.Cs, m.Baseline.Config.Cs) ||
		b.Config.ClassWeight != m.Baseline.Config.ClassWeight {
		t.Errorf("baseline configuration %+v, the audited model's %+v", b.Config, m.Baseline.Config)
	}
	for _, f := range b.Vectorizer.Features {
		if slices.Contains(strings.Fields(f), word) {
			t.Errorf("the retrained baseline has the feature %q: it was not fitted on the masked text", f)
		}
	}
	if rt.Removed == 0 {
		t.Error("the pattern took nothing out of the training text")
	}
}

// TestRetrainCountsWhatTheCuesRemoved: when the recipe's own pattern takes
// out a span a cue would match too ("/tkref-[0-9]+/" and "tkref" in
// "tkref-12 … tkref"), Removed counts what the cue took out of the training
// text left by the recipe's pattern, as training removes them (the
// recipe's patterns first): one match a text here, not the two the cue
// finds in the unmasked text. An identity of Retrain and corpus.CueMasker.
func TestRetrainCountsWhatTheCuesRemoved(t *testing.T) {
	ds := &corpus.Dataset{Path: "tiny.csv", Labels: []string{"a", "b"}}
	withCue := 0
	for i := range 40 {
		e := corpus.Example{Label: "b", Text: "beta words over there now", Line: i + 2}
		if i%2 == 0 {
			e.Label, e.Text = "a", "tkref-12 alpha words tkref here"
		}
		ds.Examples = append(ds.Examples, e)
	}
	train, dev := ds.Split(0.25, 1)
	for _, e := range train.Examples {
		if e.Label == "a" {
			withCue++
		}
	}
	r := cnn.DefaultRecipe()
	r.Model.Dim, r.Model.Filters, r.Train.Epochs, r.Baseline = 8, 4, 1, nil
	r.Train.MaskTokens = []string{"/tkref-[0-9]+/"}
	m := trainText(t, train, dev, r, 1)
	rt, err := Retrain(context.Background(), m, []string{"tkref"}, train, dev, dev, nil, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	if withCue == 0 || rt.Removed != withCue {
		t.Errorf("removed %d matches, want %d (one a text that holds the cue)", rt.Removed, withCue)
	}
	if !slices.Equal(rt.Model.Info.Recipe.MaskTokens, []string{"/tkref-[0-9]+/", "tkref"}) {
		t.Errorf("the retrained model's mask %q", rt.Model.Info.Recipe.MaskTokens)
	}
}

// The verdict of a retraining (ModelPair.Direction) at RetrainAlpha, on
// paired predictions built to the counts: the two-sided exact McNemar p of
// pair() against SciPy 1.10 (Debian's python3-scipy), run live:
// scipy.stats.binomtest(only before, only before + only after, 0.5).pvalue
// (relative tolerance 1e-9, both sum the same binomial terms); the
// direction worked by hand: the retrained model's accuracy differs from the
// audited one's by (only after − only before) / texts, and counts only as
// a difference when p < 0.05 (3 against 12 gives p = 2·576/2^15 ≈ 0.035,
// 4 against 12 gives 2·2517/2^16 ≈ 0.077, from the binomial sums).
func TestModelPairDirection(t *testing.T) {
	cases := []struct {
		onlyBefore, onlyAfter, both int
		want                        Direction
	}{
		{5, 30, 300, Higher},
		{30, 5, 300, Lower},
		{16, 26, 350, NotClearlyDifferent},
		{3, 12, 50, Higher},
		{12, 3, 50, Lower},
		{4, 12, 50, NotClearlyDifferent},
		{12, 4, 50, NotClearlyDifferent},
		{7, 7, 100, NotClearlyDifferent},
	}
	var ref []refCase
	for _, c := range cases {
		ref = append(ref, refCase{"sign-two", []any{c.onlyBefore, c.onlyAfter}})
	}
	want := scipyRef(t, ref)
	for i, c := range cases {
		// gold all 0; a model is right where it says 0.
		var before, after, gold []int
		add := func(n, b, a int) {
			for range n {
				before, after, gold = append(before, b), append(after, a), append(gold, 0)
			}
		}
		add(c.onlyBefore, 0, 1)
		add(c.onlyAfter, 1, 0)
		add(c.both, 0, 0)
		add(10, 1, 1) // both wrong
		mp := pair(before, after, gold)
		var p float64
		if err := json.Unmarshal(want[i], &p); err != nil {
			t.Fatal(err)
		}
		if mp.OnlyBefore != c.onlyBefore || mp.OnlyAfter != c.onlyAfter || !testref.Close(mp.P, p, 1e-300, 1e-9) {
			t.Errorf("%d only before, %d only after: counted %d, %d, p %.17g; SciPy p %.17g", c.onlyBefore, c.onlyAfter, mp.OnlyBefore, mp.OnlyAfter, mp.P, p)
		}
		if got := mp.Direction(RetrainAlpha); got != c.want {
			t.Errorf("%d only before, %d only after (p %.3g): %v, want %v", c.onlyBefore, c.onlyAfter, mp.P, got, c.want)
		}
		if d := mp.After.Estimate - mp.Before.Estimate; (c.want == Higher && d <= 0) || (c.want == Lower && d >= 0) {
			t.Errorf("%d only before, %d only after: %v, but the accuracies differ by %v", c.onlyBefore, c.onlyAfter, c.want, d)
		}
	}
	// At the level itself, or with no figure, there is no difference; the
	// level is the one asked.
	for _, c := range []struct {
		mp    ModelPair
		alpha float64
		want  Direction
	}{
		{ModelPair{OnlyBefore: 16, OnlyAfter: 26, P: 0.05}, 0.05, NotClearlyDifferent},
		{ModelPair{OnlyBefore: 16, OnlyAfter: 26, P: 0.0499}, 0.05, Higher},
		{ModelPair{OnlyBefore: 26, OnlyAfter: 16, P: 0.03}, 0.01, NotClearlyDifferent},
		{ModelPair{OnlyBefore: 26, OnlyAfter: 16, P: math.NaN()}, 0.05, NotClearlyDifferent},
		{ModelPair{P: 1}, 0.05, NotClearlyDifferent},
	} {
		if got := c.mp.Direction(c.alpha); got != c.want {
			t.Errorf("%+v at %v: %v, want %v", c.mp, c.alpha, got, c.want)
		}
	}
	if RetrainAlpha != 0.05 {
		t.Errorf("RetrainAlpha %v: the accuracies' intervals beside it are 95%%", RetrainAlpha)
	}
}

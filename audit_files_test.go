package main

import (
	"encoding/csv"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
)

// smallTestFileModel trains a small model on the demo's training file with
// its test file (800 texts; testdata/demo/README.md), the way the README's
// tour trains, with extra options. It fits no linear baseline
// (--baseline=false): its tests look at the audit's files and refusals, not
// at the baseline, whose fit on the 4,000 texts (and again when the audit
// retrains) would be most of their time.
func smallTestFileModel(t *testing.T, dir, name string, extra ...string) string {
	t.Helper()
	model := filepath.Join(dir, name)
	args := append([]string{"train", "--data", "testdata/demo/train.csv", "--test", "testdata/demo/test.csv", "--out", model,
		"--epochs", "1", "--dim", "16", "--maps", "8", "--baseline=false", "--quiet"}, extra...)
	if code, _, stderr := tt(t, args...); code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	return model
}

// TestAuditHeldoutFilesAndMarks: on a model trained with a test file, the
// audit given only --data names that file as the source of its held-out
// texts; the model --retrain-out writes records the model's splits, so
// eval finds its test split again; --unmark of a cue that has no mark is
// refused and writes nothing; --models of another recipe is refused.
func TestAuditHeldoutFilesAndMarks(t *testing.T) {
	if testing.Short() {
		t.Skip("trains models; skipped with -short")
	}
	dir := t.TempDir()
	model := smallTestFileModel(t, dir, "m.tt")
	testAbs, _ := filepath.Abs("testdata/demo/test.csv")
	base := []string{"audit", "--model", model, "--data", "testdata/demo/train.csv", "--threads", "1"}

	t.Run("held-out source", func(t *testing.T) {
		code, out, stderr := tt(t, append(base, "--quiet")...)
		if code != 0 {
			t.Fatalf("audit: exit %d: %s", code, stderr)
		}
		first, _, _ := strings.Cut(out, "\n")
		if !strings.Contains(first, "800 texts of the test file the model was trained with, "+testAbs) || strings.Contains(first, "held out of") {
			t.Errorf("the audit's first line does not name the test file %s:\n%s", testAbs, first)
		}
		var res auditOut
		jsonOf(t, &res, append(base, "--json", "--quiet")...)
		if res.HeldoutFile != testAbs || res.HeldoutSplit != "test" {
			t.Errorf("heldout_file %q, heldout_split %q; want %q and test", res.HeldoutFile, res.HeldoutSplit, testAbs)
		}
	})

	t.Run("retrained model keeps the splits", func(t *testing.T) {
		// The file the story would suggest training into without
		// --retrain-out: with it, the story must not suggest replacing it.
		retrained := filepath.Join(dir, "m-without.tt")
		marks := filepath.Join(dir, "retrain.marks")
		confirming := filepath.Join(dir, "confirming.csv")
		var res auditOut
		jsonOf(t, &res, append(base, "--marks", marks, "--mark-artifact", "tkref - <number>", "--retrain", "--retrain-out", retrained,
			"--confirming-out", confirming, "--json", "--quiet")...)
		if !strings.Contains(res.Story, "What to do:") {
			t.Fatalf("the story has no advice to check:\n%s", res.Story)
		}
		if strings.Contains(res.Story, "--out "+retrained) || !strings.Contains(res.Story, "into "+retrained+" (--retrain-out)") {
			t.Errorf("the story suggests training into %s, which --retrain-out wrote, or does not name it:\n%s", retrained, res.Story)
		}
		checkConfirmingFile(t, confirming, res.ConfirmationTexts)
		before, err := cnn.Load(model)
		if err != nil {
			t.Fatal(err)
		}
		after, err := cnn.Load(retrained)
		if err != nil {
			t.Fatal(err)
		}
		if after.Info.Splits == nil || !reflect.DeepEqual(*after.Info.Splits, *before.Info.Splits) {
			t.Errorf("the retrained model's splits %+v, the audited model's %+v", after.Info.Splits, before.Info.Splits)
		}
		var ev evalOutput
		jsonOf(t, &ev, "eval", "--model", retrained, "--data", "testdata/demo/train.csv", "--json", "--quiet")
		if ev.Split != "test" || ev.N != 800 {
			t.Errorf("eval of the retrained model with --data: split %q on %d texts; want the test file's 800 texts (%s)", ev.Split, ev.N, ev.SplitNote)
		}
	})

	t.Run("unmark a cue with no mark", func(t *testing.T) {
		marks := filepath.Join(dir, "none.marks")
		code, _, stderr := tt(t, "audit", "--model", model, "--marks", marks, "--unmark", "ferry")
		if code != 2 || !strings.Contains(stderr, `--unmark "ferry": no cue of that name is marked in `+marks+" (it does not exist yet); nothing was written") {
			t.Errorf("exit %d, stderr %q", code, stderr)
		}
		if _, err := os.Stat(marks); !os.IsNotExist(err) {
			t.Errorf("%s was written (%v)", marks, err)
		}
		if code, _, stderr := tt(t, "audit", "--model", model, "--marks", marks, "--mark-task", "ferry", "--quiet"); code != 0 {
			t.Fatalf("--mark-task: exit %d: %s", code, stderr)
		}
		was := sha(t, marks)
		code, _, stderr = tt(t, "audit", "--model", model, "--marks", marks, "--unmark", "the")
		if code != 2 || !strings.Contains(stderr, `the marked cues: "ferry" (task)`) {
			t.Errorf("exit %d, stderr %q; want 2 and the marks that exist", code, stderr)
		}
		if sha(t, marks) != was {
			t.Errorf("%s changed", marks)
		}
	})

	t.Run("models of another recipe", func(t *testing.T) {
		other := smallTestFileModel(t, t.TempDir(), "kim.tt", "--wide=false")
		code, _, stderr := tt(t, append(base, "--models", other)...)
		noCrash(t, "audit", stderr)
		if code != 2 || !strings.Contains(stderr, "--models "+other+" was not trained with the recipe of --model (wide true for --model, false for it)") {
			t.Errorf("exit %d, stderr %q", code, stderr)
		}
	})
}

// TestRecipeDifference: models that differ only in their seed and thread
// count are of one recipe; a difference in the network, the tokenizer, the
// vocabulary, the masked filters or a recorded training setting is named.
// A token mask of the same patterns in another order is the same mask
// (training takes out every match of any pattern): audit --retrain and the
// story's train --mask-tokens line made models with one mask.
func TestRecipeDifference(t *testing.T) {
	m, err := cnn.Load(tinyModel(t))
	if err != nil {
		t.Fatal(err)
	}
	vary := func(change func(*cnn.Model)) *cnn.Model {
		o := m.Clone()
		rec := *m.Info.Recipe
		o.Info.Recipe = &rec
		o.Config.Widths = append([]int(nil), m.Config.Widths...)
		o.Vocab = append([]string(nil), m.Vocab...)
		change(o)
		return o
	}
	for _, c := range []struct {
		name   string
		change func(*cnn.Model)
		want   string
	}{
		{"seed and threads", func(o *cnn.Model) { o.Info.Recipe.Seed += 3; o.Info.Recipe.Threads = 7 }, ""},
		{"epochs", func(o *cnn.Model) { o.Info.Recipe.Epochs++ }, "epochs 1 for --model, 2 for it"},
		{"widths", func(o *cnn.Model) { o.Config.Widths[0]++ }, "widths"},
		{"chars", func(o *cnn.Model) { o.Config.Chars = &cnn.CharConfig{Filters: 4, Width: 3} }, "chars none for --model"},
		{"lower", func(o *cnn.Model) { o.Tokenizer.Lower = !o.Tokenizer.Lower }, "tokenizer lower"},
		{"tokenizer file read from elsewhere", func(o *cnn.Model) { o.Tokenizer.File = "/dev/fd/63" }, ""},
		{"another tokenizer file", func(o *cnn.Model) { o.Tokenizer.FileJSON = []byte(`{"model": {}}`) }, "tokenizer"},
		{"vocabulary", func(o *cnn.Model) { o.Vocab[len(o.Vocab)-1] += "x" }, "vocabulary"},
		{"no recipe", func(o *cnn.Model) { o.Info.Recipe = nil }, "training recipe recorded: true for --model, false for it"},
		{"masked", func(o *cnn.Model) { o.Masked = make([]bool, o.Config.NumFilters()); o.Masked[0] = true }, "masked filters"},
		{"token mask", func(o *cnn.Model) { o.Info.Recipe.MaskTokens = []string{"tkref"} }, "mask_tokens"},
	} {
		got := recipeDifference(m, vary(c.change))
		if (c.want == "") != (got == "") || !strings.Contains(got, c.want) {
			t.Errorf("%s: %q, want %q", c.name, got, c.want)
		}
	}
	a := vary(func(o *cnn.Model) { o.Info.Recipe.MaskTokens = []string{"/x/", "tkref", "/x/"} })
	b := vary(func(o *cnn.Model) { o.Info.Recipe.MaskTokens = []string{"tkref", "/x/"} })
	if got := recipeDifference(a, b); got != "" {
		t.Errorf("one mask in two orders: %q", got)
	}
	if a.Info.Recipe.MaskTokens[0] != "/x/" || b.Info.Recipe.MaskTokens[0] != "tkref" {
		t.Errorf("the comparison reordered the models' masks: %q, %q", a.Info.Recipe.MaskTokens, b.Info.Recipe.MaskTokens)
	}
}

// checkConfirmingFile checks the file --confirming-out wrote: n records
// (the audit's confirming half), each a text of the demo's test file with
// its label there, none twice more often than there; both files read with
// encoding/csv, RFC 4180, not the project's reader.
func checkConfirmingFile(t *testing.T, path string, n int) {
	t.Helper()
	read := func(p string) [][]string {
		f, err := os.Open(p)
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		recs, err := csv.NewReader(f).ReadAll()
		if err != nil {
			t.Fatalf("%s: %v", p, err)
		}
		return recs
	}
	test, got := read("testdata/demo/test.csv"), read(path)
	ti, li := slices.Index(test[0], "text"), slices.Index(test[0], "label")
	if ti < 0 || li < 0 || !slices.Equal(got[0], []string{"text", "label"}) {
		t.Fatalf("headers %q (test file) and %q (%s)", test[0], got[0], path)
	}
	left := map[[2]string]int{}
	for _, r := range test[1:] {
		left[[2]string{r[ti], r[li]}]++
	}
	if len(got)-1 != n || n < len(test[1:])/3 {
		t.Fatalf("%s holds %d texts; the confirming half has %d of the test file's %d", path, len(got)-1, n, len(test)-1)
	}
	for _, r := range got[1:] {
		k := [2]string{r[0], r[1]}
		if left[k] == 0 {
			t.Fatalf("%s: %q labelled %q is not a text of the test file (or is there fewer times)", path, r[0], r[1])
		}
		left[k]--
	}
}

package main

import (
	"os"
	"path/filepath"
	"reflect"
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
		retrained := filepath.Join(dir, "without.tt")
		marks := filepath.Join(dir, "retrain.marks")
		code, _, stderr := tt(t, append(base, "--marks", marks, "--mark-artifact", "tkref - <number>", "--retrain", "--retrain-out", retrained, "--quiet")...)
		if code != 0 {
			t.Fatalf("audit --retrain: exit %d: %s", code, stderr)
		}
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
		{"vocabulary", func(o *cnn.Model) { o.Vocab[len(o.Vocab)-1] += "x" }, "vocabulary"},
		{"no recipe", func(o *cnn.Model) { o.Info.Recipe = nil }, "training recipe recorded: true for --model, false for it"},
		{"masked", func(o *cnn.Model) { o.Masked = make([]bool, o.Config.NumFilters()); o.Masked[0] = true }, "masked filters"},
	} {
		got := recipeDifference(m, vary(c.change))
		if (c.want == "") != (got == "") || !strings.Contains(got, c.want) {
			t.Errorf("%s: %q, want %q", c.name, got, c.want)
		}
	}
}

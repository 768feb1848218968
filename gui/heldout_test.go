package gui

import (
	"context"
	"encoding/csv"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"fyne.io/fyne/v2/test"

	"telltale/cnn"
	"telltale/corpus"
)

// TestOpenModelWarnsOfAChangedTestFile: a model trained with a test file
// records its fingerprint; the window, opening the model on that data and
// that test file, evaluates it on the file and, when the file has changed
// since training, gives the command line's warning (heldout.Changed), in
// the evaluation and the model's caption above the views; an unchanged
// file gives none. Fact of
// the trade, no outside source: figures on another file are not the ones
// train reported.
func TestOpenModelWarnsOfAChangedTestFile(t *testing.T) {
	dir := t.TempDir()
	tr, te := demoBytes(t)
	data, testFile := filepath.Join(dir, "train.csv"), filepath.Join(dir, "test.csv")
	for path, b := range map[string][]byte{data: tr, testFile: te} {
		if err := os.WriteFile(path, b, 0o600); err != nil {
			t.Fatal(err)
		}
	}
	// open opens a window on the data and the test file, and in it the
	// model at path; it returns the window's state once the model is
	// evaluated.
	open := func(path string) *State {
		a := test.NewTempApp(t)
		q := &queue{}
		_, st := newWindow(a, Options{DataPath: data, TestPath: testFile}, q.post)
		t.Cleanup(st.cancelAll)
		q.waitFor(t, "the data", func() bool { return itemGet(st.data) != nil })
		if path != "" {
			st.openModel(path, nil)
			q.waitFor(t, "the opened model", func() bool { ms := itemGet(st.model); return ms != nil && ms.Eval != nil })
		}
		return st
	}

	// A small model with the record train writes for these splits.
	cs := itemGet(open("").data)
	r := cnn.DefaultRecipe()
	r.Baseline = nil
	r.Model.Dim, r.Model.Widths, r.Model.Filters = 8, []int{2, 3}, 4
	r.Train.Epochs, r.Train.Threads, r.Train.Patience = 1, 2, -1
	trained, err := cnn.TrainText(context.Background(), cs.Train, nil, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	m := trained.Model
	rec := cs.Record
	if rec.TestFile != testFile || rec.TestFingerprint == "" {
		t.Fatalf("the window's record %+v does not name the test file %s with its fingerprint", rec, testFile)
	}
	m.Info.Splits = &rec
	model := filepath.Join(dir, "m.tt")
	if err := m.Save(model); err != nil {
		t.Fatal(err)
	}

	st := open(model)
	if ms := itemGet(st.model); len(ms.Eval.Warnings) != 0 || strings.Contains(ms.caption(), "Warning") {
		t.Errorf("the unchanged test file gives warnings %q, caption %q", ms.Eval.Warnings, ms.caption())
	}

	// The test file overwritten with half its texts.
	held, _, err := corpus.Load(testFile, corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	f, err := os.Create(testFile)
	if err != nil {
		t.Fatal(err)
	}
	w := csv.NewWriter(f)
	w.Write([]string{"text", "label"})
	for _, e := range held.Examples[:len(held.Examples)/2] {
		w.Write([]string{e.Text, e.Label})
	}
	w.Flush()
	if err := f.Close(); err != nil || w.Error() != nil {
		t.Fatal(err, w.Error())
	}

	st = open(model)
	want := testFile + ", the test file the model was trained with, has changed since training"
	ms := itemGet(st.model)
	ev := ms.Eval
	if ev.Metrics.N != len(held.Examples)/2 || len(ev.Warnings) != 1 || !strings.HasPrefix(ev.Warnings[0], want) ||
		!strings.Contains(ms.caption(), "Warning: "+want) {
		t.Errorf("after the test file changed: %d texts evaluated, warnings %q, caption %q", ev.Metrics.N, ev.Warnings, ms.caption())
	}
}

// TestHeldOutWarningsSeedsJoined: the window's warning of texts that chose
// a model's cues sends its reader to the confirming half when one seed
// chose on them, and, when audits with different seeds did (a retrained
// model audited again with another --seed), to a test file no audit chose
// on instead: each seed's confirming half holds texts the other chose on.
func TestHeldOutWarningsSeedsJoined(t *testing.T) {
	test := &corpus.Dataset{Path: "t.csv", Labels: []string{"a", "b"}}
	for i := range 10 {
		test.Examples = append(test.Examples, corpus.Example{Text: strings.Repeat("w ", i+1), Label: []string{"a", "b"}[i%2], Line: i + 2})
	}
	cs := &corpusState{Test: test}
	choice := func(seed uint64, texts ...int) cnn.CueChoice {
		return cnn.CueChoice{Half: "selection", For: cnn.ChoseRetrain, Heldout: "test", Of: 10, Fingerprint: test.Fingerprint(), Seed: seed, Texts: texts}
	}
	for _, c := range []struct {
		name      string
		seeds     []uint64
		want, not string
	}{
		{"one seed", []uint64{1, 1}, "compare the models on the confirming half", "no confirming half"},
		{"two seeds", []uint64{1, 2}, "audits run with --seed 1 and --seed 2 chose on different halves of these texts, so no confirming half took no part: " +
			"for held-out figures, open a test file that no audit chose on", "compare the models on the confirming half"},
	} {
		m := &cnn.Model{}
		for i, s := range c.seeds {
			m.Info.ChoseCues(choice(s, i, i+4))
		}
		ws := heldOutWarnings(m, cs)
		if len(ws) != 1 || !strings.Contains(ws[0], c.want) || strings.Contains(ws[0], c.not) {
			t.Errorf("%s: %q, want one warning with %q and without %q", c.name, ws, c.want, c.not)
		}
	}
}

// TestHeldOutWarningsCopies: a model trained on the open data with the
// open plan, whose test split holds a copy of a training text (one
// upper-cased with a mark added: corpus.CopyKey), is warned of as the
// command line warns; the same splits without the copy, or with another
// plan, are not. (An identity of the rule; the texts are invented.)
func TestHeldOutWarningsCopies(t *testing.T) {
	mk := func(texts ...string) *corpus.Dataset {
		d := &corpus.Dataset{Path: "d.csv", Labels: []string{"a", "b"}}
		for i, s := range texts {
			d.Examples = append(d.Examples, corpus.Example{Text: s, Label: []string{"a", "b"}[i%2], Line: i + 2})
		}
		return d
	}
	all := mk("one two three", "four five six", "seven eight", "ONE TWO THREE!")
	plan := splitPlan{DevFrac: 0.1, TestFrac: 0.2, Seed: 1}
	m := &cnn.Model{Info: cnn.Info{Splits: &cnn.SplitRecord{Examples: len(all.Examples), Fingerprint: all.Fingerprint(),
		DevFrac: plan.DevFrac, TestFrac: plan.TestFrac, Seed: plan.Seed}}}
	for _, c := range []struct {
		name string
		test *corpus.Dataset
		plan splitPlan
		want bool
	}{
		{"a copy", mk("ONE TWO THREE!"), plan, true},
		{"no copy", mk("nine ten"), plan, false},
		{"another plan", mk("ONE TWO THREE!"), splitPlan{DevFrac: 0.2, TestFrac: 0.2, Seed: 1}, false},
	} {
		cs := &corpusState{All: all, Train: mk("one two three", "four five six"), Test: c.test, Plan: c.plan}
		ws := heldOutWarnings(m, cs)
		got := slices.ContainsFunc(ws, func(w string) bool {
			return strings.Contains(w, "1 of the test split's 1 text are texts of the training split")
		})
		if got != c.want {
			t.Errorf("%s: warnings %q, want the copy warned of: %v", c.name, ws, c.want)
		}
	}
}

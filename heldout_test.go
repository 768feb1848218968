package main

import (
	"encoding/csv"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
)

// The held-out texts a saved model is evaluated on: a test file that
// changed since training, training texts given as the test texts, and an
// empty test split. Facts of the trade, no outside source: figures on
// training texts are not held-out figures, and figures on no texts are
// none at all.

// writeExamples writes exs as a text,label CSV file at path.
func writeExamples(t *testing.T, path string, exs []corpus.Example) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := csv.NewWriter(f)
	w.Write([]string{"text", "label"})
	for _, e := range exs {
		w.Write([]string{e.Text, e.Label})
	}
	w.Flush()
	if err := w.Error(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
}

// loadExamples reads a labeled file as the commands read it.
func loadExamples(t *testing.T, path string) *corpus.Dataset {
	t.Helper()
	ds, _, err := corpus.Load(path, corpus.Options{ReplaceInvalidUTF8: true})
	if err != nil {
		t.Fatal(err)
	}
	return ds
}

// trainSmall trains a small model on data (with extra options) and loads it.
func trainSmall(t *testing.T, data, model string, extra ...string) *cnn.Model {
	t.Helper()
	args := append([]string{"train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--quiet"}, extra...)
	if code, _, stderr := tt(t, args...); code != 0 {
		t.Fatalf("%q: exit %d: %s", args, code, stderr)
	}
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// TestEvalSplitWarnsOfAChangedTestFile: the model records the fingerprint
// of its test file; when the file is overwritten (here with training
// rows), eval given the same --data still reads it but warns that it
// changed since training, as text and in its JSON.
func TestEvalSplitWarnsOfAChangedTestFile(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	test := filepath.Join(dir, "test.csv")
	heldout := loadExamples(t, filepath.Join("testdata", "demo", "test.csv"))
	writeExamples(t, test, heldout.Examples[:200])
	model := filepath.Join(dir, "m.tt")
	m := trainSmall(t, data, model, "--test", test)
	if rec := m.Info.Splits; rec.TestFingerprint != loadExamples(t, test).Fingerprint() || rec.DevFingerprint != "" {
		t.Fatalf("record %+v: want the test file's fingerprint and no dev fingerprint", rec)
	}

	var ev evalOutput
	stderr := jsonOf(t, &ev, "eval", "--model", model, "--data", data, "--json")
	if len(ev.Warnings) != 0 || strings.Contains(stderr, "warning:") {
		t.Errorf("the unchanged test file gives warnings %q, stderr %q", ev.Warnings, stderr)
	}

	writeExamples(t, test, loadExamples(t, data).Examples[:100])
	ev = evalOutput{}
	stderr = jsonOf(t, &ev, "eval", "--model", model, "--data", data, "--json")
	const changed = "has changed since training"
	if ev.N != 100 || !strings.Contains(stderr, "warning: "+test) || !strings.Contains(stderr, changed) ||
		len(ev.Warnings) != 1 || !strings.Contains(ev.Warnings[0], changed) {
		t.Errorf("eval on the overwritten test file: %d texts, warnings %q, stderr %q", ev.N, ev.Warnings, stderr)
	}
	// Named with --test, the recorded file is checked too.
	stderr = jsonOf(t, &ev, "eval", "--model", model, "--test", test, "--json")
	if !strings.Contains(stderr, changed) {
		t.Errorf("eval --test on the overwritten test file: stderr %q", stderr)
	}
}

// TestEvalSplitWarnsOfTrainingTexts: --test pointed at the model's own
// training data, or at a file holding texts of its training split, gets
// the "may include texts the model was trained on" warning that other
// --data gets.
func TestEvalSplitWarnsOfTrainingTexts(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	model := filepath.Join(dir, "m.tt")
	m := trainSmall(t, data, model)

	var ev evalOutput
	stderr := jsonOf(t, &ev, "eval", "--model", model, "--test", data, "--json")
	if !strings.Contains(stderr, "warning: "+data+" is the data the model was trained on") ||
		len(ev.Warnings) != 1 || !strings.Contains(ev.Warnings[0], mayHoldTraining) {
		t.Errorf("eval --test on the training data: warnings %q, stderr %q", ev.Warnings, stderr)
	}

	// The same texts in reverse order: another fingerprint, but every text
	// of the training split is among them.
	all := loadExamples(t, data)
	reversed := slices.Clone(all.Examples)
	slices.Reverse(reversed)
	mixed := filepath.Join(dir, "mixed.csv")
	writeExamples(t, mixed, reversed)
	ev = evalOutput{}
	stderr = jsonOf(t, &ev, "eval", "--model", model, "--data", data, "--test", mixed, "--json")
	train, _, _ := all.SplitThree(m.Info.Splits.DevFrac, m.Info.Splits.TestFrac, m.Info.Splits.Seed)
	if n := inTraining(&corpus.Dataset{Examples: reversed}, train); n < len(train.Examples) {
		t.Fatalf("%d texts of the file counted as training texts, fewer than the %d of the training split", n, len(train.Examples))
	}
	if len(ev.Warnings) != 1 || !strings.Contains(ev.Warnings[0], "are texts of the model's training split") ||
		!strings.Contains(stderr, mayHoldTraining) {
		t.Errorf("eval --test on reordered training data: warnings %q, stderr %q", ev.Warnings, stderr)
	}

	// Held-out texts alone give no such warning.
	ev = evalOutput{}
	stderr = jsonOf(t, &ev, "eval", "--model", model, "--test", filepath.Join("testdata", "demo", "test.csv"), "--json")
	if len(ev.Warnings) != 0 {
		t.Errorf("eval on a held-out file: warnings %q, stderr %q", ev.Warnings, stderr)
	}
}

// TestEvalSplitRefusesAnEmptyTestSplit: a model trained with a --test-frac
// too small to hold out any text has an empty test split; eval, compare
// and mask given its data refuse with exit 2, naming the data and the fix,
// instead of reporting figures over 0 texts.
func TestEvalSplitRefusesAnEmptyTestSplit(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 200)
	model := filepath.Join(dir, "m.tt")
	m := trainSmall(t, data, model, "--test-frac", "0.001")
	if m.Info.Splits.Test != 0 {
		t.Fatalf("the test split holds %d texts, want none", m.Info.Splits.Test)
	}
	for _, args := range [][]string{
		{"eval", "--model", model, "--data", data},
		{"compare", "--models", model + "," + model, "--data", data},
		{"mask", "--model", model, "--filters", "1", "--out", filepath.Join(dir, "masked.tt"), "--data", data},
	} {
		code, out, stderr := tt(t, args...)
		if code != 2 || !strings.Contains(stderr, "the test split train held out of "+data+" is empty") ||
			!strings.Contains(stderr, "--test-frac") || strings.Contains(out, "accuracy") {
			t.Errorf("%s on an empty test split: exit %d, stdout %q, stderr %q", args[0], code, out, stderr)
		}
	}
}

// TestEvalSplitWarnsOfAChangedDevFile: the model records the fingerprint
// of its dev file too; the commands that find the model's splits warn
// when it changed since training.
func TestEvalSplitWarnsOfAChangedDevFile(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	dev := filepath.Join(dir, "dev.csv")
	heldout := loadExamples(t, filepath.Join("testdata", "demo", "test.csv"))
	writeExamples(t, dev, heldout.Examples[:100])
	model := filepath.Join(dir, "m.tt")
	m := trainSmall(t, data, model, "--dev", dev)
	if rec := m.Info.Splits; rec.DevFingerprint != loadExamples(t, dev).Fingerprint() || rec.TestFingerprint != "" {
		t.Fatalf("record %+v: want the dev file's fingerprint and no test fingerprint", rec)
	}
	var ev evalOutput
	jsonOf(t, &ev, "eval", "--model", model, "--data", data, "--json")
	if len(ev.Warnings) != 0 {
		t.Errorf("the unchanged dev file gives warnings %q", ev.Warnings)
	}
	writeExamples(t, dev, heldout.Examples[100:150])
	ev = evalOutput{}
	stderr := jsonOf(t, &ev, "eval", "--model", model, "--data", data, "--json")
	if len(ev.Warnings) != 1 || !strings.Contains(ev.Warnings[0], dev+", the dev file the model was trained with, has changed since training") ||
		!strings.Contains(stderr, "warning: ") {
		t.Errorf("eval after the dev file changed: warnings %q, stderr %q", ev.Warnings, stderr)
	}
}

// TestReportShowsTheDevSplit: the report's Data section shows the dev
// split beside the training and test splits, with the sizes train
// recorded, and counts dev leaks with test leaks, as telltale data does;
// its Evaluation section says where the texts come from once.
func TestReportShowsTheDevSplit(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	model := filepath.Join(dir, "m.tt")
	m := trainSmall(t, data, model)
	out := filepath.Join(dir, "r.html")
	if code, _, stderr := tt(t, "report", "--model", model, "--data", data, "--out", out, "--no-audit", "--quiet"); code != 0 {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	b, err := os.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	page := string(b)
	rec := m.Info.Splits
	for _, sp := range []struct {
		name string
		n    int
	}{{"train", rec.Train}, {"dev", rec.Dev}, {"test", rec.Test}} {
		row := fmt.Sprintf(`<tr><td>%s<div class="small">%s</div></td><td class="num">%d</td>`, sp.name, data, sp.n)
		if !strings.Contains(page, row) {
			t.Errorf("the Data section lacks the row %q", row)
		}
	}
	// The evaluation's lead gives the count once; where the texts come
	// from is a sentence of its own.
	lead := fmt.Sprintf("On the test split (%d texts): accuracy", rec.Test)
	from := "The texts: evaluating on the test split that train held out of " + data
	if !strings.Contains(page, lead) || !strings.Contains(page, from) || strings.Contains(page, "texts, evaluating on") {
		t.Errorf("the Evaluation section lacks %q or %q, or nests the note in the lead", lead, from)
	}
	var sum corpus.Summary
	jsonOf(t, &sum, "data", "--data", data, "--json")
	if leaks := fmt.Sprintf(`<tr><th>Dev or test texts also in training (leaks)</th><td class="num">%d</td></tr>`, sum.Leaks); !strings.Contains(page, leaks) {
		t.Errorf("the Data section lacks %q (telltale data's count)", leaks)
	}
}

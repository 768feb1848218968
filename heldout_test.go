package main

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/heldout"
)

// The held-out texts a saved model is evaluated on: a test file that
// changed since training, training texts given as the test texts, and an
// empty test split. Facts of the trade, no outside source: figures on
// training texts are not held-out figures, and figures on no texts are
// none at all.

// writeExamples writes exs as a text,label CSV file at path.
func writeExamples(t *testing.T, path string, exs []corpus.Example) {
	t.Helper()
	recs := [][]string{{"text", "label"}}
	for _, e := range exs {
		recs = append(recs, []string{e.Text, e.Label})
	}
	writeRecords(t, path, recs)
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

// trainWithSplitFile trains a small model on 400 demo training rows with
// the first n rows of the demo's test file as its --dev or --test file
// (which), and checks that the model records that file's fingerprint and
// no other. It returns the training data, that file, the model file and
// the demo's test rows.
func trainWithSplitFile(t *testing.T, which string, n int) (data, file, model string, heldout *corpus.Dataset) {
	t.Helper()
	dir := t.TempDir()
	data = demoPart(t, dir, 400)
	file = filepath.Join(dir, which+".csv")
	heldout = loadExamples(t, filepath.Join("testdata", "demo", "test.csv"))
	writeExamples(t, file, heldout.Examples[:n])
	model = filepath.Join(dir, "m.tt")
	rec := trainSmall(t, data, model, "--"+which, file).Info.Splits
	got, other := rec.TestFingerprint, rec.DevFingerprint
	if which == "dev" {
		got, other = other, got
	}
	if got != loadExamples(t, file).Fingerprint() || other != "" {
		t.Fatalf("record %+v: want the %s file's fingerprint and no other", rec, which)
	}
	return data, file, model, heldout
}

// TestEvalSplitWarnsOfAChangedTestFile: the model records the fingerprint
// of its test file; when the file is overwritten (here with training
// rows), eval given the same --data still reads it but warns that it
// changed since training, as text and in its JSON.
func TestEvalSplitWarnsOfAChangedTestFile(t *testing.T) {
	data, test, model, _ := trainWithSplitFile(t, "test", 200)
	var ev evalOutput
	stderr := jsonOf(t, &ev, "eval", "--model", model, "--data", data, "--json")
	if len(ev.Warnings) != 0 || strings.Contains(stderr, "warning:") {
		t.Errorf("the unchanged test file gives warnings %q, stderr %q", ev.Warnings, stderr)
	}

	all := loadExamples(t, data)
	writeExamples(t, test, all.Examples[:100])
	ev = evalOutput{}
	stderr = jsonOf(t, &ev, "eval", "--model", model, "--data", data, "--json")
	const changed = "has changed since training"
	// The rows written over it are rows of --data: those of the training
	// split are warned of too, with their count.
	rec := loadModelFile(t, model).Info.Splits
	train, _, _ := all.SplitThree(rec.DevFrac, rec.TestFrac, rec.Seed)
	n := heldout.Copies(&corpus.Dataset{Examples: all.Examples[:100]}, train)
	inTrain := fmt.Sprintf("%s %s: %d of its 100 texts are texts of the model's training split", test, mayHoldTraining, n)
	if n == 0 || ev.N != 100 || !strings.Contains(stderr, "warning: "+test) || !strings.Contains(stderr, changed) ||
		len(ev.Warnings) != 2 || !strings.Contains(ev.Warnings[0], changed) || !strings.HasPrefix(ev.Warnings[1], inTrain) {
		t.Errorf("eval on the overwritten test file: %d texts, warnings %q (want %q), stderr %q", ev.N, ev.Warnings, inTrain, stderr)
	}
	// Named with --test, the recorded file is checked too.
	stderr = jsonOf(t, &ev, "eval", "--model", model, "--test", test, "--json")
	if !strings.Contains(stderr, changed) {
		t.Errorf("eval --test on the overwritten test file: stderr %q", stderr)
	}
}

// loadModelFile loads the model file at path.
func loadModelFile(t *testing.T, path string) *cnn.Model {
	t.Helper()
	m, err := cnn.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// TestEvalSplitWarnsOfTrainingTexts: --test pointed at the model's own
// training data, or at a file holding texts of its training split, gets
// the "may include texts the model was trained on" warning that other
// --data gets, after the note that names those texts.
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
	// The note that names the texts comes before the warnings about them.
	if note, warn := strings.Index(stderr, "note: evaluating on the test file "+data), strings.Index(stderr, "warning: "); note < 0 || note > warn {
		t.Errorf("eval --test on the training data: the note should precede the warning, stderr %q", stderr)
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
	if n := heldout.Copies(&corpus.Dataset{Examples: reversed}, train); n < len(train.Examples) {
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
	data, dev, model, heldout := trainWithSplitFile(t, "dev", 100)
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

// TestMaskRefusalWritesNoModel: mask finds the held-out texts before it
// writes the masked model, so that when it refuses them (an empty test
// split, exit 2) no model file is left at --out.
func TestMaskRefusalWritesNoModel(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 200)
	model := filepath.Join(dir, "m.tt")
	trainSmall(t, data, model, "--test-frac", "0.001")
	out := filepath.Join(dir, "masked.tt")
	code, _, stderr := tt(t, "mask", "--model", model, "--filters", "1", "--out", out, "--data", data)
	if code != 2 || !strings.Contains(stderr, "is empty") {
		t.Fatalf("mask on an empty test split: exit %d, stderr %q", code, stderr)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Errorf("mask refused the texts but left %s behind (stat: %v)", out, err)
	}
}

// TestHeldOutWarningsInJSON: the warnings eval writes into its JSON (here:
// the model's test file changed since training) are in the JSON of
// compare (every row), mask (every row) and faithfulness too, under the
// key eval uses and README names; with an unchanged file there are none.
func TestHeldOutWarningsInJSON(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	test := filepath.Join(dir, "test.csv")
	heldout := loadExamples(t, filepath.Join("testdata", "demo", "test.csv"))
	writeExamples(t, test, heldout.Examples[:60])
	model := filepath.Join(dir, "m.tt")
	trainSmall(t, data, model, "--test", test)
	runs := [][]string{
		{"compare", "--models", model + "," + model, "--data", data, "--json"},
		{"mask", "--model", model, "--filters", "1", "--out", filepath.Join(dir, "masked.tt"), "--data", data, "--json"},
		{"faithfulness", "--model", model, "--data", data, "--limit", "10", "--json"},
	}
	// rowsOf decodes a command's JSON into its objects: the rows of
	// compare and mask, faithfulness's one object.
	rowsOf := func(args []string) ([]map[string]any, string) {
		code, out, stderr := tt(t, args...)
		if code != 0 {
			t.Fatalf("%q: exit %d: %s", args, code, stderr)
		}
		var rows []map[string]any
		if args[0] == "faithfulness" {
			rows = make([]map[string]any, 1)
			if err := json.Unmarshal([]byte(out), &rows[0]); err != nil {
				t.Fatalf("%s: %v", args[0], err)
			}
			checkKeysDocumented(t, args[0], []byte(out), "### The JSON of the other commands")
		} else if err := json.Unmarshal([]byte(out), &rows); err != nil || len(rows) != 2 {
			t.Fatalf("%s: %d rows, %v", args[0], len(rows), err)
		}
		if args[0] == "compare" {
			checkKeysDocumented(t, args[0], []byte(out), "### The JSON of train, eval and compare", "probabilities")
		}
		return rows, stderr
	}
	for _, args := range runs {
		rows, _ := rowsOf(args)
		for _, r := range rows {
			if w, ok := r["warnings"]; ok {
				t.Errorf("%s on the unchanged test file: warnings %v", args[0], w)
			}
		}
	}
	writeExamples(t, test, heldout.Examples[60:100])
	const changed = "has changed since training"
	for _, args := range runs {
		rows, stderr := rowsOf(args)
		for i, r := range rows {
			ws, _ := r["warnings"].([]any)
			if len(ws) != 1 || !strings.Contains(fmt.Sprint(ws[0]), test+", the test file the model was trained with, "+changed) {
				t.Errorf("%s, object %d, after the test file changed: warnings %v (stderr %q)", args[0], i, r["warnings"], stderr)
			}
		}
	}
}

// TestFiguresSayNotHeldOut: eval's and compare's text say under the
// figures, even with --quiet (which drops the warnings), that texts the
// warnings are about are not all held-out texts; held-out texts get no
// such line.
func TestFiguresSayNotHeldOut(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	model := filepath.Join(dir, "m.tt")
	trainSmall(t, data, model)
	held := filepath.Join("testdata", "demo", "test.csv")
	for _, c := range []struct {
		args []string
		want bool
	}{
		{[]string{"eval", "--model", model, "--test", data, "--quiet"}, true},
		{[]string{"eval", "--model", model, "--test", held, "--quiet"}, false},
		{[]string{"compare", "--models", model + "," + model, "--test", data, "--quiet"}, true},
		{[]string{"compare", "--models", model + "," + model, "--test", held, "--quiet"}, false},
	} {
		code, out, stderr := tt(t, c.args...)
		if code != 0 {
			t.Fatalf("%q: exit %d: %s", c.args, code, stderr)
		}
		if got := strings.Contains(out, notHeldOut); got != c.want {
			t.Errorf("%q: the line %q shown %v, want %v:\n%s", c.args, notHeldOut, got, c.want, out)
		}
	}
	// Without --quiet, compare notes that a model file is given twice.
	if _, _, stderr := tt(t, "compare", "--models", model+","+model, "--test", held); !strings.Contains(stderr, "model 2 ("+model+") is the file of model 1 again") {
		t.Errorf("compare of a model with itself: stderr %q", stderr)
	}
}

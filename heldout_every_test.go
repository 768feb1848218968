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
	"telltale/internal/wording"
)

// The held-out checks wherever figures are given: for every model of
// compare, without --data (in the data file the model records), and in the
// machine-readable outputs and the report, with --quiet too. Facts of the
// trade, no outside source: figures on texts a model was trained on are not
// held-out figures. The counts wanted are counted here, from the files
// written here and the splits the model file records.

// trainedOn trains a small model on data (with extra options) into dir
// and returns its file and its training split, made again from data as the
// model's split record says.
func trainedOn(t *testing.T, dir, name, data string, extra ...string) (string, *corpus.Dataset) {
	t.Helper()
	model := filepath.Join(dir, name)
	rec := trainSmall(t, data, model, extra...).Info.Splits
	train, _, _ := loadExamples(t, data).SplitThree(rec.DevFrac, rec.TestFrac, rec.Seed)
	return model, train
}

// TestCompareChecksEveryModel: compare makes eval's checks for each model
// on the texts found for the first, whichever comes first, and gives each
// model its own warnings, in --json (with --quiet) and on stderr.
func TestCompareChecksEveryModel(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	held := filepath.Join(dir, "held.csv")
	writeExamples(t, held, loadExamples(t, filepath.Join("testdata", "demo", "test.csv")).Examples[:200])
	a, aTrain := trainedOn(t, dir, "a.tt", data)
	b, _ := trainedOn(t, dir, "b.tt", held)                     // trained on the --test file itself
	c, cTrain := trainedOn(t, dir, "c.tt", data, "--seed", "7") // the same data, other splits

	// a's test split, as compare --data finds it for a, and the texts of it
	// that are in c's training split.
	all := loadExamples(t, data)
	rec := loadModelFile(t, a).Info.Splits
	_, _, aTest := all.SplitThree(rec.DevFrac, rec.TestFrac, rec.Seed)
	inC := heldout.Copies(aTest, cTrain)
	if inC == 0 || heldout.Copies(&corpus.Dataset{Examples: loadExamples(t, held).Examples}, aTrain) != 0 {
		t.Fatalf("the files made here do not make the cases: %d texts of a's test split in c's training split", inC)
	}
	trainedOnIt := held + " is the data the model was trained on"
	inCWarning := fmt.Sprintf("the test split of %s (that of %s) %s: %d of its %s are texts of the model's training split",
		data, a, mayHoldTraining, inC, wording.Texts(len(aTest.Examples)))
	cases := []struct {
		name   string
		models []string
		eval   []string
		want   []string // the start of each model's one warning; "" for none
	}{
		{"the held-out model first", []string{a, b}, []string{"--test", held}, []string{"", trainedOnIt}},
		{"the trained-on model first", []string{b, a}, []string{"--test", held}, []string{trainedOnIt, ""}},
		{"--data, other splits second", []string{a, c}, []string{"--data", data}, []string{"", inCWarning}},
	}
	for _, tc := range cases {
		args := append([]string{"compare", "--models", strings.Join(tc.models, ",")}, tc.eval...)
		var rows []compareRow
		jsonOf(t, &rows, append(args, "--json", "--quiet")...)
		code, _, stderr := tt(t, args...)
		if code != 0 || len(rows) != len(tc.want) {
			t.Fatalf("%s: exit %d, %d rows: %s", tc.name, code, len(rows), stderr)
		}
		for i, want := range tc.want {
			ws := rows[i].Warnings
			if want == "" {
				if len(ws) != 0 {
					t.Errorf("%s: model %d: warnings %q, want none", tc.name, i+1, ws)
				}
				continue
			}
			if len(ws) != 1 || !strings.HasPrefix(ws[0], want) {
				t.Errorf("%s: model %d: warnings %q, want one starting %q", tc.name, i+1, ws, want)
			}
			if !strings.Contains(stderr, "warning: "+tc.models[i]+": "+want) {
				t.Errorf("%s: model %d: the warning %q is not on stderr:\n%s", tc.name, i+1, want, stderr)
			}
		}
	}
}

// TestEvalChecksTheRecordedData: eval --test without --data finds the
// model's training split in the data file the model records; with the
// file changed or gone, the note says that this cannot be checked. A
// modified copy of the training data given as --data gets the same
// warning, not only a note.
func TestEvalChecksTheRecordedData(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	model, train := trainedOn(t, dir, "m.tt", data)
	all := loadExamples(t, data)
	changed := filepath.Join(dir, "changed.csv")
	writeExamples(t, changed, append(all.Examples, corpus.Example{Text: "A brand new sentence about ferries.", Label: all.Examples[0].Label}))
	inTrain := fmt.Sprintf("%s %s: %d of its %s are texts of the model's training split",
		changed, mayHoldTraining, len(train.Examples), wording.Texts(len(all.Examples)+1))
	const unchecked = "whether they hold texts of the model's training split cannot be checked"
	cases := []struct {
		name    string
		prepare func() // changes the recorded data file before the run
		args    []string
		warning string // the start of the one warning wanted; "" for none
		note    string // a part of the note wanted
	}{
		{"--test, the data file there", func() {}, []string{"--test", changed}, inTrain, "evaluating on the test file"},
		{"--data, a changed copy", func() {}, []string{"--data", changed}, inTrain, "is not the data the model was trained on"},
		{"--test, the data file changed", func() { writeExamples(t, data, all.Examples[:300]) }, []string{"--test", changed}, "",
			unchecked + ": " + data + ", the data the model was trained on, no longer holds what train read there"},
		{"--test, the data file gone", func() { os.Remove(data) }, []string{"--test", changed}, "",
			unchecked + ": " + data + ", the data the model was trained on, is not there any more"},
	}
	for _, tc := range cases {
		tc.prepare()
		var ev evalOutput
		stderr := jsonOf(t, &ev, append([]string{"eval", "--model", model, "--json"}, tc.args...)...)
		var quiet evalOutput
		jsonOf(t, &quiet, append([]string{"eval", "--model", model, "--json", "--quiet"}, tc.args...)...)
		if !strings.Contains(ev.SplitNote, tc.note) {
			t.Errorf("%s: split_note %q, want it to hold %q", tc.name, ev.SplitNote, tc.note)
		}
		if tc.warning == "" {
			if len(ev.Warnings) != 0 || strings.Contains(stderr, "warning:") {
				t.Errorf("%s: warnings %q, stderr %q: want none", tc.name, ev.Warnings, stderr)
			}
			continue
		}
		if len(ev.Warnings) != 1 || !strings.HasPrefix(ev.Warnings[0], tc.warning) || !strings.Contains(stderr, "warning: "+tc.warning) {
			t.Errorf("%s: warnings %q, stderr %q: want one starting %q", tc.name, ev.Warnings, stderr, tc.warning)
		}
		if strings.Join(quiet.Warnings, "\n") != strings.Join(ev.Warnings, "\n") {
			t.Errorf("%s: with --quiet the JSON's warnings are %q, without %q", tc.name, quiet.Warnings, ev.Warnings)
		}
	}
}

// TestWarningsReachEveryOutput: a model trained with its own data as its
// test file: train --json and its text, audit --json and its text, and the
// report all carry the warning, with --quiet too; train's text no longer
// says that the test split was used for nothing else.
func TestWarningsReachEveryOutput(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 300)
	model := filepath.Join(dir, "m.tt")
	small := []string{"--epochs", "1", "--dim", "8", "--maps", "4"}
	var ts trainSummary
	jsonOf(t, &ts, append([]string{"train", "--data", data, "--test", data, "--out", model, "--json", "--quiet"}, small...)...)
	if ts.Splits == nil || len(ts.Warnings) != 1 {
		t.Fatalf("train --json --quiet: splits %v, warnings %q: want one warning", ts.Splits, ts.Warnings)
	}
	trainWarn := fmt.Sprintf("--test %s: %d of its %s are texts of the training split", data, ts.Splits.Train, wording.Texts(ts.Splits.Examples))
	if !strings.HasPrefix(ts.Warnings[0], trainWarn) || strings.Contains(ts.DevNote, "the test split's do not") {
		t.Errorf("train --json: warnings %q (want %q), dev_note %q", ts.Warnings, trainWarn, ts.DevNote)
	}
	code, out, stderr := tt(t, append([]string{"train", "--data", data, "--test", data, "--out", model}, small...)...)
	if code != 0 || strings.Contains(out, "used for nothing else") || !strings.Contains(out, fmt.Sprintf("%d of them texts of the training split", ts.Splits.Train)) {
		t.Errorf("train: exit %d, stdout:\n%s\nstderr:\n%s", code, out, stderr)
	}

	// The model's test file is its data: every later command says so.
	evalWarn := data + " is the data the model was trained on"
	var au auditJSON
	jsonOf(t, &au, "audit", "--model", model, "--data", data, "--json", "--quiet")
	if len(au.Warnings) != 1 || !strings.HasPrefix(au.Warnings[0], evalWarn) {
		t.Errorf("audit --json --quiet: warnings %q, want one starting %q", au.Warnings, evalWarn)
	}
	if code, out, _ := tt(t, "audit", "--model", model, "--data", data, "--quiet"); code != 0 || !strings.Contains(out, "Warning: "+evalWarn) {
		t.Errorf("audit --quiet: exit %d, its text does not warn %q:\n%s", code, evalWarn, out)
	}
	html := filepath.Join(dir, "r.html")
	if code, _, stderr := tt(t, "report", "--model", model, "--data", data, "--out", html, "--no-audit", "--quiet"); code != 0 {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	b, err := os.ReadFile(html)
	if err != nil {
		t.Fatal(err)
	}
	page := string(b)
	if top, glance := strings.Index(page, `<p class="warning" role="alert">`), strings.Index(page, `<ul class="glance">`); top < glance || glance < 0 {
		t.Errorf("the report's figures at a glance are not followed by a warning (glance at %d, warning at %d)", glance, top)
	}
	warn, figures := strings.Index(page, `<div class="warning"`), strings.Index(page, `<table class="figures">`)
	if warn < 0 || figures < 0 || warn > figures || !strings.Contains(page[warn:figures], evalWarn) {
		t.Errorf("the report does not warn %q above its figures (warning at %d, figures at %d)", evalWarn, warn, figures)
	}
	var raw map[string]json.RawMessage
	jsonOf(t, &raw, "audit", "--model", model, "--data", data, "--json", "--quiet")
	checkKeysDocumented(t, "audit", mustMarshal(t, raw), "### The audit's JSON")
	checkKeysDocumented(t, "train", mustMarshal(t, ts), "### The JSON of train, eval and compare")
}

// mustMarshal is v as JSON.
func mustMarshal(t *testing.T, v any) []byte {
	t.Helper()
	b, err := json.Marshal(v)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// TestCompareChangedRecordedTestFile: with --data alone, compare reads the
// test file the first model recorded; a second model recorded with the same
// file, on other splits (another seed), is warned that it changed since
// training too, and its warnings name that file, whichever model is first.
func TestCompareChangedRecordedTestFile(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	test := filepath.Join(dir, "t.csv")
	held := loadExamples(t, filepath.Join("testdata", "demo", "test.csv")).Examples
	writeExamples(t, test, held[:300])
	a, _ := trainedOn(t, dir, "a.tt", data, "--test", test)
	b, _ := trainedOn(t, dir, "b.tt", data, "--test", test, "--seed", "7")
	writeExamples(t, test, held[:200]) // changed since training
	for _, models := range [][]string{{a, b}, {b, a}} {
		var rows []compareRow
		jsonOf(t, &rows, "compare", "--models", strings.Join(models, ","), "--data", data, "--json", "--quiet")
		if len(rows) != 2 {
			t.Fatalf("compare %q: %d rows", models, len(rows))
		}
		for i, r := range rows {
			if !slices.ContainsFunc(r.Warnings, func(w string) bool { return strings.Contains(w, test) && strings.Contains(w, "changed since training") }) {
				t.Errorf("compare %q: model %d warnings %q, want one that %s changed since training", models, i+1, r.Warnings, test)
			}
		}
	}
}

// TestEvalNotesAnUncheckableTestFile: a model file that records no splits
// (as import writes) cannot say which texts it was trained on; eval on a
// --test file says so in its note, as it does for --data, and compare
// --json in the note of each model.
func TestEvalNotesAnUncheckableTestFile(t *testing.T) {
	dir := t.TempDir()
	m, err := cnn.New(cnn.Config{VocabSize: 4, Dim: 2, Widths: []int{1}, Filters: 1, Classes: 2}, []string{"<pad>", "<unk>", "lost", "bag"}, []string{"lost-property", "praise"}, 1)
	if err != nil {
		t.Fatal(err)
	}
	model := filepath.Join(dir, "m.tt")
	if err := m.Save(model); err != nil {
		t.Fatal(err)
	}
	test := filepath.Join(dir, "t.csv")
	writeExamples(t, test, []corpus.Example{{Text: "lost bag", Label: "lost-property"}, {Text: "bag", Label: "praise"}})
	var ev struct {
		Note string `json:"split_note"`
	}
	jsonOf(t, &ev, "eval", "--model", model, "--test", test, "--json", "--quiet")
	if !strings.Contains(ev.Note, "does not record how its splits were made") {
		t.Errorf("eval --test on a model without splits: note %q, want that it cannot be checked", ev.Note)
	}
	// compare --json gives every model its own note: the first, which
	// records no splits, the note of the texts; a model after it, that
	// they cannot be checked against its training split.
	var rows []compareRow
	jsonOf(t, &rows, "compare", "--models", model+","+model, "--test", test, "--json", "--quiet")
	if len(rows) != 2 || !strings.Contains(rows[0].Note, "does not record how its splits were made") || !strings.Contains(rows[1].Note, "cannot be checked") {
		t.Errorf("compare --json: rows %+v, want each model's note that the texts cannot be checked", rows)
	}
}

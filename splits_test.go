package main

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/version"
)

// jsonOf runs a command that prints JSON and decodes it into v.
func jsonOf(t *testing.T, v any, args ...string) string {
	t.Helper()
	code, out, stderr := tt(t, args...)
	if code != 0 {
		t.Fatalf("%q: exit %d: %s", args, code, stderr)
	}
	if err := json.Unmarshal([]byte(out), v); err != nil {
		t.Fatalf("%q: %v\n%s", args, err, out)
	}
	return stderr
}

// TestTheTestSplitIsFoundAgain: train holds the dev and test shares out of
// --data and records how in the model file; every command that evaluates
// the model, given the same data (by its examples, wherever the file is)
// and no --test, evaluates on exactly that test split and says so; given
// other data, on all of it with a note. The record's sizes, eval's
// figures and train's own test figures must agree exactly.
func TestTheTestSplitIsFoundAgain(t *testing.T) {
	dir := t.TempDir()
	// 753 texts: a test split of 75, which the audit halves (at least 30
	// texts each).
	data := demoPart(t, dir, 1000)
	model := filepath.Join(dir, "m.tt")
	var ts trainSummary
	jsonOf(t, &ts, "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--json", "--quiet")
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	rec := m.Info.Splits
	if rec == nil || rec.DevFrac != cnn.DefaultDevFrac || rec.TestFrac != cnn.DefaultTestFrac || rec.Seed != 1 || rec.DataAbs != data ||
		rec.Train+rec.Dev+rec.Test != rec.Examples || rec.Test == 0 || rec.Dev == 0 {
		t.Fatalf("split record %+v", rec)
	}
	if m.Info.Version != version.String() {
		t.Errorf("the model file records version %q, want %q", m.Info.Version, version.String())
	}
	if m.Info.Test == nil || m.Info.Test.N != rec.Test || ts.Test == nil || ts.Test.Accuracy != m.Info.Test.Accuracy {
		t.Fatalf("test figures: model %+v, train's output %+v, record %d texts", m.Info.Test, ts.Test, rec.Test)
	}

	// The same examples under another name are the same data.
	copied := filepath.Join(t.TempDir(), "copy.csv")
	b, _ := os.ReadFile(data)
	os.WriteFile(copied, b, 0o644)
	for _, d := range []string{data, copied} {
		var ev evalOutput
		stderr := jsonOf(t, &ev, "eval", "--model", model, "--data", d, "--json")
		if ev.Split != "test" || ev.N != rec.Test || ev.Accuracy != m.Info.Test.Accuracy || ev.MacroF1 != m.Info.Test.MacroF1 {
			t.Errorf("eval --data %s: split %q, %d texts, accuracy %g; want the test split of %d texts, accuracy %g", d, ev.Split, ev.N, ev.Accuracy, rec.Test, m.Info.Test.Accuracy)
		}
		if !strings.Contains(stderr, "note: evaluating on the test split that train held out of "+d) {
			t.Errorf("eval --data %s does not say which texts: %s", d, stderr)
		}
	}

	var sum corpus.Summary
	jsonOf(t, &sum, "data", "--data", data, "--json")
	if len(sum.Splits) != 3 || sum.Splits[0].Examples != rec.Train || sum.Splits[1].Examples != rec.Dev || sum.Splits[2].Examples != rec.Test {
		t.Errorf("data shows splits %+v, train made %d/%d/%d", sum.Splits, rec.Train, rec.Dev, rec.Test)
	}
	var audit struct {
		Train   int `json:"train_texts"`
		Heldout int `json:"heldout_texts"`
	}
	jsonOf(t, &audit, "audit", "--model", model, "--data", data, "--json", "--quiet")
	if audit.Train != rec.Train || audit.Heldout != rec.Test {
		t.Errorf("audit used %d training and %d test texts, want %d and %d", audit.Train, audit.Heldout, rec.Train, rec.Test)
	}
	var faith struct {
		Texts int `json:"texts"`
	}
	jsonOf(t, &faith, "faithfulness", "--model", model, "--data", data, "--limit", "0", "--json", "--quiet")
	if faith.Texts != rec.Test {
		t.Errorf("faithfulness scored %d texts, want the %d of the test split", faith.Texts, rec.Test)
	}
	var rows []compareRow
	jsonOf(t, &rows, "compare", "--models", model+","+model, "--data", data, "--json", "--quiet")
	if len(rows) != 2 || rows[1].Metrics.N != rec.Test || rows[1].Metrics.Accuracy != m.Info.Test.Accuracy {
		t.Errorf("compare: %+v", rows)
	}

	// Other data: all of it, with a note.
	other := filepath.Join("testdata", "demo", "test.csv")
	var ev evalOutput
	stderr := jsonOf(t, &ev, "eval", "--model", model, "--data", other, "--json")
	all, _, err := corpus.Load(other, corpus.Options{ReplaceInvalidUTF8: true})
	if err != nil {
		t.Fatal(err)
	}
	if ev.Split != "all" || ev.N != len(all.Examples) || !strings.Contains(stderr, "is not the data the model was trained on") ||
		!strings.Contains(stderr, "may include texts the model was trained on") {
		t.Errorf("eval on other data: split %q, %d of %d texts, stderr %q", ev.Split, ev.N, len(all.Examples), stderr)
	}
}

// TestTestFileIsRecorded: a model trained with --test FILE is evaluated on
// that file when the same --data is given; a model file without a split
// record is evaluated on all of --data with a note.
func TestTestFileIsRecorded(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	test := filepath.Join("testdata", "demo", "test.csv")
	model := filepath.Join(dir, "m.tt")
	if code, _, stderr := tt(t, "train", "--data", data, "--test", test, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--quiet"); code != 0 {
		t.Fatal(stderr)
	}
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	abs, _ := filepath.Abs(test)
	if m.Info.Splits.TestFile != abs || m.Info.Splits.TestFrac != 0 {
		t.Fatalf("record %+v", m.Info.Splits)
	}
	var ev evalOutput
	stderr := jsonOf(t, &ev, "eval", "--model", model, "--data", data, "--json")
	if ev.N != m.Info.Test.N || ev.Accuracy != m.Info.Test.Accuracy || !strings.Contains(stderr, "the test file the model was trained with") {
		t.Errorf("eval: %d texts, accuracy %g; train's test figures %d, %g; stderr %q", ev.N, ev.Accuracy, m.Info.Test.N, m.Info.Test.Accuracy, stderr)
	}

	// The test file given as --data is the test split, not "other data".
	stderr = jsonOf(t, &ev, "eval", "--model", model, "--data", test, "--json")
	if ev.Split != "test" || ev.N != m.Info.Test.N || ev.Accuracy != m.Info.Test.Accuracy ||
		!strings.Contains(stderr, "is the test file the model was trained with") || strings.Contains(stderr, "may include texts the model was trained on") {
		t.Errorf("eval --data TEST: split %q, %d texts, accuracy %g; train's test figures %d, %g; stderr %q", ev.Split, ev.N, ev.Accuracy, m.Info.Test.N, m.Info.Test.Accuracy, stderr)
	}

	m.Info.Splits = nil
	old := filepath.Join(dir, "old.tt")
	if err := m.Save(old); err != nil {
		t.Fatal(err)
	}
	stderr = jsonOf(t, &ev, "eval", "--model", old, "--data", data, "--json")
	if ev.Split != "all" || !strings.Contains(stderr, "the model file does not record how its splits were made") {
		t.Errorf("eval of a model without a record: split %q, stderr %q", ev.Split, stderr)
	}
}

// TestPredictAndExplainReadData: predict and explain take their texts from
// a CSV, JSON Lines file or folder, one text per record or file with its
// line breaks, and say where each came from.
func TestPredictAndExplainReadData(t *testing.T) {
	model := tinyModel(t)
	dir := t.TempDir()
	csvPath := filepath.Join(dir, "mail.csv")
	os.WriteFile(csvPath, []byte("id,body\n1,\"Dear crew,\nthank you.\"\n2,my bag is lost\n"), 0o644)
	jsonl := filepath.Join(dir, "texts.jsonl")
	os.WriteFile(jsonl, []byte(`{"text":"refund please"}`+"\n"+`{"text":"lovely\ncrossing"}`+"\n"), 0o644)
	folder := filepath.Join(dir, "folder")
	os.Mkdir(folder, 0o755)
	os.WriteFile(filepath.Join(folder, "a.txt"), []byte("first\nmessage"), 0o644)
	os.WriteFile(filepath.Join(folder, "b.txt"), []byte("second"), 0o644)
	cases := []struct {
		args  []string
		texts []string
		where []string
	}{
		{[]string{"--data", csvPath, "--text-col", "body"}, []string{"Dear crew,\nthank you.", "my bag is lost"}, []string{"line 2", "line 4"}},
		{[]string{"--data", jsonl}, []string{"refund please", "lovely\ncrossing"}, []string{"line 1", "line 2"}},
		{[]string{"--data", folder}, []string{"first\nmessage", "second"}, []string{"a.txt", "b.txt"}},
	}
	for _, cmd := range []string{"predict", "explain"} {
		for _, c := range cases {
			code, out, stderr := tt(t, append([]string{cmd, "--model", model, "--json"}, c.args...)...)
			if code != 0 {
				t.Fatalf("%s %q: exit %d: %s", cmd, c.args, code, stderr)
			}
			lines := strings.Split(strings.TrimSpace(out), "\n")
			if len(lines) != len(c.texts) {
				t.Fatalf("%s %q: %d results for %d texts", cmd, c.args, len(lines), len(c.texts))
			}
			for i, l := range lines {
				var r struct {
					Text   string `json:"text"`
					Line   int    `json:"line"`
					File   string `json:"file"`
					Tokens []any  `json:"tokens"`
				}
				if err := json.Unmarshal([]byte(l), &r); err != nil {
					t.Fatal(err)
				}
				where := r.File
				if r.Line > 0 {
					where = fmt.Sprintf("line %d", r.Line)
				}
				if cmd == "predict" && r.Text != c.texts[i] || cmd == "explain" && len(r.Tokens) == 0 || where != c.where[i] {
					t.Errorf("%s %q result %d: text %q from %q, want %q from %q", cmd, c.args, i, r.Text, where, c.texts[i], c.where[i])
				}
			}
		}
	}
}

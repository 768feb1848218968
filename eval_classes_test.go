package main

import (
	"encoding/json"
	"math"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/corpus"
)

// Held-out texts of fewer labels than the model knows: evaluating on one
// class (its recall) is a normal need, so a test file needs only labels
// the model knows; a label with no text has no recall or F1 (null in
// JSON, "–" in text), a label never predicted no precision, and the
// macro-F1 is scikit-learn's f1_score(average='macro') (checked against
// scikit-learn in cnn's TestMetricsAgainstScikitLearn). Identities here:
// with one gold label its recall is the accuracy and its precision 1.

// demoLabelFile writes the demo test file's texts of the labels keep to
// dir/name and returns its path and its number of texts.
func demoLabelFile(t *testing.T, dir, name string, keep ...string) (string, int) {
	t.Helper()
	test := loadExamples(t, filepath.Join("testdata", "demo", "test.csv"))
	var exs []corpus.Example
	for _, e := range test.Examples {
		if slices.Contains(keep, e.Label) {
			exs = append(exs, e)
		}
	}
	path := filepath.Join(dir, name)
	writeExamples(t, path, exs)
	return path, len(exs)
}

// evalJSON is what these tests read of eval --json.
type evalJSON struct {
	N         int        `json:"n"`
	Accuracy  float64    `json:"accuracy"`
	MacroF1   float64    `json:"macro_f1"`
	Labels    []string   `json:"labels"`
	Confusion [][]int    `json:"confusion"`
	PerClass  []classRaw `json:"per_class"`
	Intervals struct {
		PerClass []struct {
			Label                 string
			Precision, Recall, F1 *struct{ Estimate, Low, High float64 }
		} `json:"per_class"`
	} `json:"intervals"`
}

type classRaw struct {
	Label                 string
	Precision, Recall, F1 *float64
	Support               int
}

func TestEvalOneLabelTestFile(t *testing.T) {
	dir := t.TempDir()
	model := filepath.Join(dir, "m.tt")
	m := trainSmall(t, demoPart(t, dir, 1200), model)
	if len(m.Labels) < 3 {
		t.Fatalf("the model knows %q: want the demo's labels", m.Labels)
	}
	praise, n := demoLabelFile(t, dir, "praise.csv", "praise")
	code, stdout, stderr := tt(t, "eval", "--model", model, "--test", praise, "--json", "--quiet")
	if code != 0 {
		t.Fatalf("eval on one label: exit %d: %s", code, stderr)
	}
	var ev evalJSON
	if err := json.Unmarshal([]byte(stdout), &ev); err != nil {
		t.Fatal(err)
	}
	if ev.N != n {
		t.Fatalf("%d texts evaluated, want %d", ev.N, n)
	}
	present := 0 // labels among the gold or predicted ones
	for c, pc := range ev.PerClass {
		predicted := 0
		for g := range ev.Confusion {
			predicted += ev.Confusion[g][c]
		}
		iv := ev.Intervals.PerClass[c]
		if pc.Label == "praise" {
			present++
			if pc.Recall == nil || math.Abs(*pc.Recall-ev.Accuracy) > 1e-12 || pc.Support != n || iv.Recall == nil || iv.F1 == nil {
				t.Errorf("praise: %+v; want recall = accuracy %v, support %d, intervals", pc, ev.Accuracy, n)
			}
			continue
		}
		if pc.Recall != nil || pc.F1 != nil || pc.Support != 0 || iv.Recall != nil || iv.F1 != nil {
			t.Errorf("%s, no text: %+v, intervals %+v; want recall, F1 and their intervals null", pc.Label, pc, iv)
		}
		if (predicted == 0) != (pc.Precision == nil) || (predicted == 0) != (iv.Precision == nil) {
			t.Errorf("%s, predicted %d times: precision %v, interval %v; want null exactly when never predicted", pc.Label, predicted, pc.Precision, iv.Precision)
		}
		if predicted > 0 {
			present++ // scikit-learn counts it with F1 0
			if *pc.Precision != 0 {
				t.Errorf("%s: precision %v of texts that are all praise, want 0", pc.Label, *pc.Precision)
			}
		}
	}
	if pp := ev.PerClass[slices.Index(ev.Labels, "praise")]; pp.F1 != nil && math.Abs(ev.MacroF1-*pp.F1/float64(present)) > 1e-12 {
		t.Errorf("macro-F1 %v, want praise's F1 %v over the %d labels present (scikit-learn)", ev.MacroF1, *pp.F1, present)
	}
	code, stdout, _ = tt(t, "eval", "--model", model, "--test", praise, "--quiet")
	if code != 0 || !strings.Contains(stdout, "– : nothing to measure") || !strings.Contains(stdout, "\nMacro-F1 is scikit-learn's") {
		t.Errorf("eval's text (exit %d) does not say what – means and how macro-F1 counts:\n%s", code, stdout)
	}
}

// compare and report take a test file of one label; the audit refuses it,
// saying why, as a usage error (exit 2: the command line chose test texts
// that do not suit it); a label the model does not know stays an error naming the
// file, the line and the fix.
func TestOneLabelTestFileAcrossCommands(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 1200)
	model := filepath.Join(dir, "m.tt")
	trainSmall(t, data, model)
	praise, _ := demoLabelFile(t, dir, "praise.csv", "praise")
	unknown := filepath.Join(dir, "unknown.csv")
	writeRecords(t, unknown, [][]string{{"text", "label"}, {"lovely crew", "praise"}, {"where is my hat", "hats"}})
	cases := []struct {
		name string
		args []string
		code int
		want []string
	}{
		{"compare", []string{"compare", "--models", model + "," + model, "--test", praise}, 0, []string{"per-class F1", "–"}},
		{"report", []string{"report", "--model", model, "--data", data, "--test", praise, "--out", filepath.Join(dir, "r.html")}, 0, nil},
		{"train with a test file of one label", []string{"train", "--data", data, "--test", praise, "--out", filepath.Join(dir, "m2.tt"),
			"--epochs", "1", "--dim", "8", "--maps", "4"}, 0, nil},
		{"audit", []string{"audit", "--model", model, "--data", data, "--test", praise}, 2,
			[]string{`holds one label, "praise"`, "label share", "at least two of the model's labels", "usage: telltale audit"}},
		{"eval, unknown label", []string{"eval", "--model", model, "--test", unknown}, 1,
			[]string{"unknown.csv line 3", `label "hats" is not among the training labels`, "relabel"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, stdout, stderr := tt(t, append(c.args, "--quiet")...)
			noCrash(t, c.name, stderr)
			if code != c.code {
				t.Fatalf("exit %d, want %d: %s", code, c.code, stderr)
			}
			for _, w := range c.want {
				if !strings.Contains(stdout+stderr, w) {
					t.Errorf("output lacks %q:\n%s%s", w, stdout, stderr)
				}
			}
		})
	}
}

package main

import (
	"encoding/json"
	"math"
	"path/filepath"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
)

// train's test figures for a model with the character layer read the test
// split's unseen words from their characters, as eval reads them: the two
// commands report the same accuracy and ECE for the same model and split,
// which differ from the unknown-word reading (so the check can fail).
func TestTrainTestFiguresReadUnseenWords(t *testing.T) {
	test := filepath.Join("testdata", "demo", "test.csv")
	model, out := trainCharModel(t, t.TempDir(), "--test", test, "--json")
	var trained struct {
		Test *cnn.Metrics `json:"test"`
	}
	if err := json.Unmarshal([]byte(out), &trained); err != nil || trained.Test == nil {
		t.Fatalf("train --json: no test figures (%v): %.300s", err, out)
	}
	code, out, stderr := tt(t, "eval", "--model", model, "--test", test, "--json", "--quiet")
	if code != 0 {
		t.Fatalf("eval: exit %d: %s", code, stderr)
	}
	var evaluated cnn.Metrics
	if err := json.Unmarshal([]byte(out), &evaluated); err != nil {
		t.Fatal(err)
	}

	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	enc, err := m.Encoder()
	if err != nil {
		t.Fatal(err)
	}
	ds, _, err := corpus.Load(test, corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	asUnknown, err := cnn.EncodeDataset(enc, ds, m.Labels, 1)
	if err != nil {
		t.Fatal(err)
	}
	unk, _, err := cnn.Evaluate(m, asUnknown, 1)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(unk.ECE-evaluated.ECE) < 1e-9 {
		t.Fatalf("eval's ECE %g equals the unknown-word reading's: the check cannot tell the two apart", evaluated.ECE)
	}
	if trained.Test.Accuracy != evaluated.Accuracy || math.Abs(trained.Test.ECE-evaluated.ECE) > 1e-12 {
		t.Errorf("train's test figures: accuracy %g, ECE %g; eval's: %g, %g (the unknown-word reading: %g, %g)",
			trained.Test.Accuracy, trained.Test.ECE, evaluated.Accuracy, evaluated.ECE, unk.Accuracy, unk.ECE)
	}
}

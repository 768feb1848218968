package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"telltale/cnn"
)

// TestRelabelUnknownOnTestFile: a --relabel source label that occurs in no
// file it is applied to is refused by the commands that only evaluate, as
// train refuses it for --data (TestMisuseExitsTwo: "has no label"): with
// --test alone, the test file is the one file --relabel applies to, so a
// label it lacks is a mistake (a misspelt label, or the wrong file), named
// with the labels the file has. With --data beside it, --data is checked,
// as train checks it, and the test file may lack a label. (report and
// audit need --data, which is checked as train checks it.)
func TestRelabelUnknownOnTestFile(t *testing.T) {
	data := smallDemo(t, 300)
	dir := t.TempDir()
	model := filepath.Join(dir, "m.tt")
	if code, _, stderr := runCmd(t, "", "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--quiet"); code != 0 {
		t.Fatalf("train: %s", stderr)
	}
	test := filepath.Join(dir, "test.csv")
	if err := os.WriteFile(test, []byte("text,label\nmy bag is lost,lost-property\nthe ferry was late,complaints\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	want := `--relabel: ` + test + ` has no label "complaint"; its labels are complaints, lost-property`
	for _, args := range [][]string{
		{"eval", "--model", model},
		{"compare", "--models", model + "," + model},
		{"faithfulness", "--model", model},
		{"mask", "--model", model, "--filters", "0", "--out", filepath.Join(dir, "masked.tt")},
	} {
		args = append(args, "--test", test, "--relabel", "complaint=complaints")
		code, _, stderr := runCmd(t, "", args...)
		if code != 2 || !strings.Contains(stderr, want) {
			t.Errorf("%q: exit %d, stderr %q; want exit 2 and %q", args, code, stderr, want)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "masked.tt")); err == nil {
		t.Error("mask wrote its model despite the refused --relabel")
	}
	// A label the test file lacks but --data has is accepted, as train
	// accepts it for a held-out file.
	code, _, stderr := runCmd(t, "", "eval", "--model", model, "--data", data, "--test", test, "--relabel", "bookings=bookings", "--quiet")
	if code != 0 {
		t.Errorf("eval with --data holding the relabeled label: exit %d, %s", code, stderr)
	}
}

// TestRelabelUnknownStreamed: filters streams the texts of a model that
// records no splits, so a --relabel label the file lacks is only known
// once every text was read: it is named then, in a warning with the
// file's labels (the demo's five, from its README), and a label the file
// has draws none.
func TestRelabelUnknownStreamed(t *testing.T) {
	data := smallDemo(t, 300)
	dir := t.TempDir()
	model := filepath.Join(dir, "m.tt")
	if code, _, stderr := runCmd(t, "", "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--quiet"); code != 0 {
		t.Fatalf("train: %s", stderr)
	}
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	m.Info.Splits = nil
	if err := m.Save(model); err != nil {
		t.Fatal(err)
	}
	want := `warning: --relabel: ` + data + ` has no label "complaint"; its labels are bookings, complaints, lost-property, praise, timetable`
	code, _, stderr := runCmd(t, "", "filters", "--model", model, "--data", data, "--relabel", "complaint=complaints", "--top", "2")
	if code != 0 || !strings.Contains(stderr, "profiling all texts of") || !strings.Contains(stderr, want) {
		t.Errorf("filters, streamed, with an unknown --relabel label: exit %d, stderr %q; want exit 0 and %q", code, stderr, want)
	}
	code, _, stderr = runCmd(t, "", "filters", "--model", model, "--data", data, "--relabel", "complaints=complaints", "--top", "2")
	if code != 0 || strings.Contains(stderr, "--relabel") {
		t.Errorf("filters, streamed, with a known --relabel label: exit %d, stderr %q; want exit 0 and no warning", code, stderr)
	}
}

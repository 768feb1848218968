package main

import (
	"encoding/csv"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestTrainWarnsOfHeldFilesInTraining: a dev or test file that holds texts
// of the training split is warned of, with the count of those texts; one
// that holds none is not. The files are made here: 40 demo test texts none
// of which is a text of --data, --data itself, and the 40 texts with all of
// --data added.
func TestTrainWarnsOfHeldFilesInTraining(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 300)
	trainRecs := readRecords(t, data)
	inData := map[string]bool{}
	for _, r := range trainRecs[1:] {
		inData[r[0]] = true
	}
	test := [][]string{trainRecs[0]}
	for _, r := range readRecords(t, "testdata/demo/test.csv")[1:] {
		if len(test) <= 40 && !inData[r[0]] {
			test = append(test, r)
		}
	}
	apart := writeRecords(t, filepath.Join(dir, "apart.csv"), test)
	one := writeRecords(t, filepath.Join(dir, "one.csv"), append(test, trainRecs[1:]...))
	cases := []struct {
		name string
		args []string
		warn string // the warning's start; "" when no warning is wanted
	}{
		{"a separate test file", []string{"--test", apart}, ""},
		{"the data again as the test file", []string{"--test", data}, "--test " + data + ": "},
		{"the data again as the dev file", []string{"--dev", data}, "--dev " + data + ": "},
		{"a test file with the training texts added", []string{"--test", one}, "--test " + one + ": "},
	}
	for _, c := range cases {
		model := filepath.Join(t.TempDir(), "m.tt")
		var ts trainSummary
		args := append([]string{"train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--json"}, c.args...)
		stderr := jsonOf(t, &ts, args...)
		noCrash(t, c.name, stderr)
		i := strings.Index(stderr, "warning: "+c.warn)
		if c.warn == "" {
			if strings.Contains(stderr, "texts of the training split") {
				t.Errorf("%s: warned:\n%s", c.name, stderr)
			}
			continue
		}
		var n, of int
		if i >= 0 {
			fmt.Sscanf(stderr[i+len("warning: "+c.warn):], "%d of its %d texts are texts of the training split", &n, &of)
		}
		// The file holds every text of the training split (it is --data,
		// or all of it was added), and duplicates of them may sit in the
		// other splits: at least the training split's size, at most the
		// file's.
		if i < 0 || ts.Splits == nil || n < ts.Splits.Train || n > of || of == 0 {
			t.Errorf("%s: want a warning %q with at least %v texts, got (n %d of %d):\n%s", c.name, c.warn, ts.Splits, n, of, stderr)
		}
	}
}

// readRecords reads the CSV file at path, its header first.
func readRecords(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return recs
}

// writeRecords writes recs as a CSV file at path and returns path.
func writeRecords(t *testing.T, path string, recs [][]string) string {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := csv.NewWriter(f)
	w.WriteAll(recs)
	if err := w.Error(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	return path
}

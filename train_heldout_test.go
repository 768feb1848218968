package main

import (
	"encoding/csv"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
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

// sharedData writes to dir a two-label CSV file of n distinct texts, each
// 8 words drawn (seeded) from a list of 40 letters-only words plus a word
// of its label, so that no two texts are near-exact duplicates either;
// with copies, the first copies texts written again after them, as they
// are or, with near, upper-cased with marks added (copies but for case
// and punctuation, corpus.CopyKey). It returns its path.
func sharedData(t *testing.T, dir string, n, copies int, near bool) string {
	t.Helper()
	words := strings.Fields("alpha bravo charlie delta echo foxtrot golf hotel india juliet kilo lima mike november " +
		"oscar papa quebec romeo sierra tango uniform victor whiskey xray yankee zulu apple berry cherry grape lemon mango " +
		"melon olive peach pear plum quince raisin sloe")
	r := rand.New(rand.NewPCG(3, 0))
	recs := [][]string{{"text", "label"}}
	seen := map[string]bool{}
	for len(recs) <= n {
		label, cue := "ham", "meeting"
		if len(recs)%2 == 0 {
			label, cue = "spam", "offer"
		}
		w := []string{cue}
		for range 8 {
			w = append(w, words[r.IntN(len(words))])
		}
		r.Shuffle(len(w), func(i, j int) { w[i], w[j] = w[j], w[i] })
		if text := strings.Join(w, " "); !seen[text] {
			seen[text] = true
			recs = append(recs, []string{text, label})
		}
	}
	for _, rec := range recs[1 : 1+copies] {
		if near {
			rec = []string{strings.ToUpper(rec[0]) + " !!", rec[1]}
		}
		recs = append(recs, rec)
	}
	return writeRecords(t, filepath.Join(dir, fmt.Sprintf("shared%d-%v.csv", copies, near)), recs)
}

// TestSharedTextsInTrainingAreWarnedOf: when --data holds copies of a
// text, the dev and test splits train holds out of it may draw a copy
// whose twin is in the training split. train warns of each such split
// with the count of those texts, and eval and compare warn of the test
// split, in their JSON too; the counts are those of the seeded split
// counted here, and together those telltale data reports as leaks: exact
// copies, and copies upper-cased with marks added (the texts differ in no
// number, so data's near-exact leaks are these too). The same data without the
// copies gets no warning.
func TestSharedTextsInTrainingAreWarnedOf(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		copies int
		near   bool
	}{{0, false}, {60, false}, {60, true}} {
		copies := c.copies
		data := sharedData(t, dir, 200, copies, c.near)
		all := loadExamples(t, data)
		train, dev, test := all.SplitThree(cnn.DefaultDevFrac, cnn.DefaultTestFrac, cnn.DefaultRecipe().Train.Seed)
		inTrain := map[string]bool{}
		for _, e := range train.Examples {
			inTrain[e.Text], inTrain[corpus.CopyKey(e.Text)] = true, true
		}
		count := func(d *corpus.Dataset) (n int) {
			for _, e := range d.Examples {
				if inTrain[e.Text] || inTrain[corpus.CopyKey(e.Text)] {
					n++
				}
			}
			return n
		}
		wantDev, wantTest := count(dev), count(test)
		if copies > 0 && (wantDev == 0 || wantTest == 0) {
			t.Fatalf("%d copies: the seeded split puts %d in dev and %d in test; want some in each", copies, wantDev, wantTest)
		}
		var sum corpus.Summary
		jsonOf(t, &sum, "data", "--data", data, "--json")
		if sum.Leaks != wantDev+wantTest {
			t.Errorf("%d copies: telltale data counts %d leaks, the split %d in dev and %d in test", copies, sum.Leaks, wantDev, wantTest)
		}
		model := filepath.Join(dir, fmt.Sprintf("m%d-%v.tt", copies, c.near))
		var ts trainSummary
		stderr := jsonOf(t, &ts, "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--json")
		noCrash(t, "train", stderr)
		var ev evalOutput
		jsonOf(t, &ev, "eval", "--model", model, "--data", data, "--json")
		other := filepath.Join(dir, fmt.Sprintf("other%d-%v.tt", copies, c.near))
		trainSmall(t, data, other, "--seed", "2")
		var rows []compareRow
		jsonOf(t, &rows, "compare", "--models", model+","+other, "--data", data, "--json")
		if copies == 0 {
			if len(ts.Warnings) != 0 || len(ev.Warnings) != 0 || len(rows) != 2 || len(rows[0].Warnings) != 0 {
				t.Errorf("no copies: train warns %q, eval %q, compare %+v", ts.Warnings, ev.Warnings, rows)
			}
			continue
		}
		devWarn := fmt.Sprintf("the dev split held out of %s: %d of its %d texts are texts of the training split as well", data, wantDev, len(dev.Examples))
		testWarn := fmt.Sprintf("the test split held out of %s: %d of its %d texts are texts of the training split as well", data, wantTest, len(test.Examples))
		if len(ts.Warnings) != 2 || !strings.HasPrefix(ts.Warnings[0], devWarn) || !strings.HasPrefix(ts.Warnings[1], testWarn) {
			t.Errorf("train --json warnings %q, want them to start %q and %q", ts.Warnings, devWarn, testWarn)
		}
		if !strings.Contains(ts.DevNote, fmt.Sprintf("as %d texts of it are texts of the training split", wantTest)) {
			t.Errorf("train --json dev_note %q does not count the test split's %d training texts", ts.DevNote, wantTest)
		}
		if len(ev.Warnings) != 1 || !strings.HasPrefix(ev.Warnings[0], testWarn) || strings.HasSuffix(ev.SplitNote, "to choose the epoch") {
			t.Errorf("eval --json: warnings %q, want one starting %q; note %q", ev.Warnings, testWarn, ev.SplitNote)
		}
		if len(rows) != 2 || len(rows[0].Warnings) != 1 || !strings.HasPrefix(rows[0].Warnings[0], testWarn) {
			t.Errorf("compare --json: rows %+v, want the first warned %q", rows, testWarn)
		}
	}
}

package reviewset

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"telltale/corpus"
	"telltale/internal/testref"
)

// TestLoad reads the set as published: 1,000 sentences, 500 of each label
// (the counts the UCI page gives for each of the set's three sources), and
// every rotation partitions them into 800 / 100 / 100.
func TestLoad(t *testing.T) {
	testref.Corpus(t, "reviews", "amazon_cells_labelled.txt")
	d, err := LoadUnder(testref.Root())
	if err != nil {
		t.Fatal(err)
	}
	if c := d.Counts(); c["negative"] != 500 || c["positive"] != 500 {
		t.Fatalf("counts %v, want 500 of each label", c)
	}
	for k := range Folds {
		tr, dev, te := Splits(d, k)
		if len(tr.Examples) != 800 || len(dev.Examples) != 100 || len(te.Examples) != 100 {
			t.Errorf("rotation %d: %d / %d / %d texts, want 800 / 100 / 100", k, len(tr.Examples), len(dev.Examples), len(te.Examples))
		}
		seen := map[int]bool{}
		for _, part := range [][]int{lines(tr.Examples), lines(dev.Examples), lines(te.Examples)} {
			for _, l := range part {
				if seen[l] {
					t.Fatalf("rotation %d: line %d in two splits", k, l)
				}
				seen[l] = true
			}
		}
	}
}

// TestLoadRejects: a line without a tab or with another label is refused,
// naming the file and the line.
func TestLoadRejects(t *testing.T) {
	for _, c := range []struct{ body, want string }{
		{"good phone\t1\nno label here\n", ":2: no tab"},
		{"good phone\t1\nbad phone\tneg\n", `:2: label "neg"`},
		{"good phone\t1\n \t0\n", ":2: no sentence"},
	} {
		p := filepath.Join(t.TempDir(), "s.txt")
		if err := os.WriteFile(p, []byte(c.body), 0o644); err != nil {
			t.Fatal(err)
		}
		_, err := Load(p)
		if err == nil || !strings.Contains(err.Error(), p+c.want) {
			t.Errorf("%q: error %v, want %q", c.body, err, p+c.want)
		}
	}
}

// lines are the file lines of es.
func lines(es []corpus.Example) []int {
	out := make([]int, len(es))
	for i, e := range es {
		out[i] = e.Line
	}
	return out
}

package reviewset

import (
	"os"
	"path/filepath"
	"slices"
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

// TestLoadThree reads the three sources as published: 500 sentences of
// each label in each (the counts the UCI page gives, from memory), and
// every rotation of the joined set partitions them into 2,400 / 300 / 300
// with each source in its share (800 / 100 / 100).
func TestLoadThree(t *testing.T) {
	testref.Corpus(t, "reviews", "imdb.json")
	srcs, err := LoadThreeUnder(testref.Root())
	if err != nil {
		t.Fatal(err)
	}
	// The first sentence of each source as the set publishes it (the
	// first lines of its three files, amazon_cells_labelled.txt,
	// yelp_labelled.txt and imdb_labelled.txt, from memory), so that no
	// source was fetched twice or in place of another.
	first := []corpus.Example{
		{Text: "So there is no way for me to plug it in here in the US unless I go by a converter.", Label: "negative", Line: 1},
		{Text: "Wow... Loved this place.", Label: "positive", Line: 1},
		{Text: "A very, very, very slow-moving, aimless movie about a distressed, drifting young man.", Label: "negative", Line: 1},
	}
	for i, d := range srcs {
		if c := d.Counts(); c["negative"] != 500 || c["positive"] != 500 {
			t.Fatalf("source %d: counts %v, want 500 of each label", i, c)
		}
		if d.Examples[0] != first[i] {
			t.Errorf("%s: first sentence %+v, want %+v", d.Path, d.Examples[0], first[i])
		}
	}
	for k := range Folds {
		tr, dev, te := SplitsOfSources(srcs, k)
		if len(tr.Examples) != 2400 || len(dev.Examples) != 300 || len(te.Examples) != 300 {
			t.Errorf("rotation %d: %d / %d / %d texts, want 2,400 / 300 / 300", k, len(tr.Examples), len(dev.Examples), len(te.Examples))
		}
		// Each joined split is the sources' own splits, one after the
		// other, each 800 / 100 / 100 and disjoint (as TestLoad checks).
		var wantTr, wantDev, wantTe []corpus.Example
		for i, d := range srcs {
			str, sdev, ste := Splits(d, k)
			if len(str.Examples) != 800 || len(sdev.Examples) != 100 || len(ste.Examples) != 100 {
				t.Errorf("rotation %d, source %d: %d / %d / %d texts, want 800 / 100 / 100", k, i, len(str.Examples), len(sdev.Examples), len(ste.Examples))
			}
			seen := map[int]bool{}
			for _, part := range [][]int{lines(str.Examples), lines(sdev.Examples), lines(ste.Examples)} {
				for _, l := range part {
					if seen[l] {
						t.Fatalf("rotation %d, source %d: record %d in two splits", k, i, l)
					}
					seen[l] = true
				}
			}
			wantTr, wantDev, wantTe = append(wantTr, str.Examples...), append(wantDev, sdev.Examples...), append(wantTe, ste.Examples...)
		}
		if !slices.Equal(tr.Examples, wantTr) || !slices.Equal(dev.Examples, wantDev) || !slices.Equal(te.Examples, wantTe) {
			t.Errorf("rotation %d: the joined splits are not the sources' splits in order", k)
		}
	}
}

// TestLoadJSONRejects: a record without text or class, with a class
// other than 0 or 1, or of the wrong shape is refused, naming the file and
// the record; so is a file without a record to read. An empty last record
// is skipped.
func TestLoadJSONRejects(t *testing.T) {
	for _, c := range []struct {
		body, want string
		n          int
	}{
		{`[{"text":"good phone","class":1},{"text":"","class":null}]`, "", 1},
		{`[{"text":"","class":null},{"text":"good phone","class":1}]`, ": record 1: no text", 0},
		{`[{"text":"good phone","class":1},{"text":" ","class":0}]`, ": record 2: no text", 0},
		{`[{"text":"good phone","class":2}]`, ": record 1: class 2; want 0 or 1", 0},
		{`[{"text":"good phone"}]`, ": record 1: no class", 0},
		{`[{"text":"good phone","class":"1"}]`, ": record 1: json: cannot unmarshal", 0},
		{`[{"words":"good phone","label":1},{"words":"bad phone","label":0}]`, ": record 1: no text", 0},
		{`[{"words":"good phone","label":1}]`, ": no record with text and class", 0},
		{`[]`, ": no record with text and class", 0},
		{`{"text":"good phone"}`, ": json: cannot unmarshal", 0},
	} {
		p := filepath.Join(t.TempDir(), "s.json")
		if err := os.WriteFile(p, []byte(c.body), 0o644); err != nil {
			t.Fatal(err)
		}
		d, err := LoadJSON(p)
		if c.want == "" {
			if err != nil || len(d.Examples) != c.n {
				t.Errorf("%s: %v, want %d texts", c.body, err, c.n)
			}
			continue
		}
		if err == nil || !strings.Contains(err.Error(), p+c.want) || !strings.Contains(err.Error(), "make corpora") {
			t.Errorf("%s: error %v, want %q and the fix", c.body, err, p+c.want)
		}
	}
}

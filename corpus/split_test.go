package corpus

import (
	"fmt"
	"math"
	"reflect"
	"testing"
)

// labeledSet returns a dataset with counts[l] examples of each label l.
func labeledSet(counts map[string]int) *Dataset {
	d := &Dataset{Path: "set.csv"}
	line := 2
	for _, l := range []string{"a", "b", "c", "d"} {
		for i := 0; i < counts[l]; i++ {
			d.Examples = append(d.Examples, Example{Text: fmt.Sprintf("%s text %d", l, i), Label: l, Line: line})
			line++
		}
	}
	d.Labels = uniqueLabels(d.Examples)
	return d
}

// TestSplitThree: the three splits partition the data, per label in the
// shares asked for (round half away from zero, training keeps at least
// one; common practice, no source), the same seed gives the same splits,
// and the test split is Split's test split.
func TestSplitThree(t *testing.T) {
	counts := map[string]int{"a": 40, "b": 15, "c": 3, "d": 1}
	d := labeledSet(counts)
	cases := []struct {
		dev, test float64
		want      map[string][3]int // per label: training, dev, test
	}{
		{0.1, 0.1, map[string][3]int{"a": {32, 4, 4}, "b": {11, 2, 2}, "c": {3, 0, 0}, "d": {1, 0, 0}}},
		{0.2, 0.3, map[string][3]int{"a": {20, 8, 12}, "b": {7, 3, 5}, "c": {1, 1, 1}, "d": {1, 0, 0}}},
		{0.9, 0.5, map[string][3]int{"a": {1, 19, 20}, "b": {1, 6, 8}, "c": {1, 0, 2}, "d": {1, 0, 0}}},
		{0, 0.2, map[string][3]int{"a": {32, 0, 8}, "b": {12, 0, 3}, "c": {2, 0, 1}, "d": {1, 0, 0}}},
	}
	for _, c := range cases {
		tr, dev, te := d.SplitThree(c.dev, c.test, 7)
		got := map[string][3]int{}
		seen := map[string]int{}
		for s, part := range []*Dataset{tr, dev, te} {
			for _, e := range part.Examples {
				g := got[e.Label]
				g[s]++
				got[e.Label] = g
				seen[e.Text]++
			}
		}
		for l, w := range c.want {
			if got[l] != w {
				t.Errorf("dev %g test %g: label %s split %v, want %v", c.dev, c.test, l, got[l], w)
			}
		}
		if len(seen) != len(d.Examples) {
			t.Errorf("dev %g test %g: %d distinct examples in the splits, want %d", c.dev, c.test, len(seen), len(d.Examples))
		}
		for text, n := range seen {
			if n != 1 {
				t.Errorf("dev %g test %g: %q in %d splits", c.dev, c.test, text, n)
			}
		}
		tr2, dev2, te2 := d.SplitThree(c.dev, c.test, 7)
		if !reflect.DeepEqual(tr, tr2) || !reflect.DeepEqual(dev, dev2) || !reflect.DeepEqual(te, te2) {
			t.Errorf("dev %g test %g: the same seed gave other splits", c.dev, c.test)
		}
		_, splitTest := d.Split(c.test, 7)
		if c.dev < 0.5 && !reflect.DeepEqual(splitTest.Examples, te.Examples) {
			t.Errorf("dev %g test %g: the test split is not Split's", c.dev, c.test)
		}
		for _, part := range []*Dataset{tr, dev, te} {
			for i := 1; i < len(part.Examples); i++ {
				if part.Examples[i].Line < part.Examples[i-1].Line {
					t.Fatalf("a split lost the file order")
				}
			}
		}
	}
	_, _, other := d.SplitThree(0.1, 0.1, 8)
	_, _, te := d.SplitThree(0.1, 0.1, 7)
	if reflect.DeepEqual(other.Examples, te.Examples) {
		t.Error("seeds 7 and 8 gave the same test split")
	}
}

func TestSplitThreeRejectsBadShares(t *testing.T) {
	d := labeledSet(map[string]int{"a": 3, "b": 3})
	for _, f := range []float64{-0.1, 1, math.NaN()} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("share %g accepted", f)
				}
			}()
			d.SplitThree(f, 0.1, 1)
		}()
	}
}

// TestFingerprint: the same examples read from elsewhere have the same
// fingerprint; another text, label or order gives another one.
func TestFingerprint(t *testing.T) {
	d := labeledSet(map[string]int{"a": 3, "b": 2})
	same := labeledSet(map[string]int{"a": 3, "b": 2})
	same.Path = "elsewhere/copy.csv"
	if d.Fingerprint() != same.Fingerprint() {
		t.Error("the same examples have different fingerprints")
	}
	change := func(f func(*Dataset)) string {
		c := labeledSet(map[string]int{"a": 3, "b": 2})
		f(c)
		return c.Fingerprint()
	}
	for name, fp := range map[string]string{
		"text":  change(func(c *Dataset) { c.Examples[0].Text += "!" }),
		"label": change(func(c *Dataset) { c.Examples[0].Label = "b" }),
		"order": change(func(c *Dataset) { c.Examples[0], c.Examples[1] = c.Examples[1], c.Examples[0] }),
		"fewer": change(func(c *Dataset) { c.Examples = c.Examples[1:] }),
		// The boundary between text and label is part of the hash.
		"shift": change(func(c *Dataset) { c.Examples[0].Text, c.Examples[0].Label = "a text 0a", "" }),
	} {
		if fp == d.Fingerprint() {
			t.Errorf("another %s, same fingerprint", name)
		}
	}
}

func TestLabelWarnings(t *testing.T) {
	d := &Dataset{Path: "x.csv", Examples: []Example{
		{Text: "1", Label: "bookings"}, {Text: "2", Label: "bookings"}, {Text: "3", Label: "BOOKINGS"},
		{Text: "4", Label: "BOOKINGS"}, {Text: "5", Label: "praise"}, {Text: "6", Label: "Praise"}, {Text: "7", Label: "Praise"},
	}}
	d.Labels = uniqueLabels(d.Examples)
	var got []string
	for _, w := range d.LabelWarnings() {
		got = append(got, w.String())
	}
	want := []string{
		`corpus: x.csv: label "praise" has a single example: nothing can be learned from one text; add examples, or merge it into another label with --relabel`,
		`corpus: x.csv: labels "BOOKINGS" and "bookings" differ only in letter case: if they are one label, merge them with --relabel "bookings=BOOKINGS"`,
		`corpus: x.csv: labels "Praise" and "praise" differ only in letter case: if they are one label, merge them with --relabel "praise=Praise"`,
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("warnings\n%q\nwant\n%q", got, want)
	}
}

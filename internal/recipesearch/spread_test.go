package main

import (
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"telltale/corpus"
	"telltale/internal/reviewset"
	"telltale/internal/testref"
)

// The demo's two test splits hold the same messages with the cues planted
// at different rates (testdata/demo-equal/README.md), so without their cues
// they must be equal; spreadCues must then plant each cue on as many of
// every label's messages as the demo's test split has it on (within one:
// rounding), counted here in testdata/demo/test.csv.
func TestSpreadCuesMatchesTheDemoTestSplit(t *testing.T) {
	load := func(dir string) *corpus.Dataset {
		d, _, err := corpus.Load(filepath.Join(root(), "testdata", dir, "test.csv"), corpus.Options{})
		if err != nil {
			t.Fatal(err)
		}
		return d
	}
	spread, equal := load("demo"), load("demo-equal")
	if len(spread.Examples) != len(equal.Examples) {
		t.Fatalf("%d against %d messages", len(spread.Examples), len(equal.Examples))
	}
	withCue := 0
	for i, e := range spread.Examples {
		a, b := withoutCues(e.Text), withoutCues(equal.Examples[i].Text)
		if a != b {
			t.Fatalf("message %d without cues differs:\n%q\n%q", i, a, b)
		}
		if a != e.Text {
			withCue++
		}
		if strings.Contains(a, "KioskMail") || strings.Contains(a, "TKREF-") {
			t.Fatalf("message %d keeps a cue: %q", i, a)
		}
	}
	if withCue == 0 {
		t.Fatal("no message of the demo's test split had a cue to drop")
	}
	got, want := cueCounts(spreadCues(equal)), cueCounts(spread)
	for label, w := range want {
		g := got[label]
		if g[0] != w[0] || abs(g[1]-w[1]) > 1 || abs(g[2]-w[2]) > 1 {
			t.Errorf("%s: %d messages, %d footers and %d stamps; the demo's test split: %d, %d and %d", label, g[0], g[1], g[2], w[0], w[1], w[2])
		}
	}
}

// cueCounts gives each label's messages, footers and stamps.
func cueCounts(d *corpus.Dataset) map[string][3]int {
	out := map[string][3]int{}
	for _, e := range d.Examples {
		c := out[e.Label]
		c[0]++
		if strings.HasSuffix(e.Text, "\n"+demoFooter) {
			c[1]++
		}
		if demoStamp.MatchString(strings.SplitN(e.Text, "\n", 2)[0]) {
			c[2]++
		}
		out[e.Label] = c
	}
	return out
}

func abs(x int) int { return max(x, -x) }

// The skewed reviews keep the 500 positive sentences of the published set
// (Kotzias et al. 2015, 500 of each label) and about two in five of the 500
// negative ones (between 35% and 45%), so about 70% are positive, as the
// package comment says; every rotation still has both labels in each split.
func TestSkewedReviews(t *testing.T) {
	testref.Corpus(t, "reviews", "amazon_cells_labelled.txt")
	rots, err := loadRotations(root(), "reviews-skew", true)
	if err != nil {
		t.Fatal(err)
	}
	d, err := reviewset.LoadUnder(root())
	if err != nil {
		t.Fatal(err)
	}
	c := skewed(d).Counts()
	if c["positive"] != 500 || c["negative"] < 175 || c["negative"] > 225 {
		t.Errorf("skewed reviews: %v, want 500 positive and 175 to 225 negative", c)
	}
	for _, r := range rots {
		for _, sp := range []*corpus.Dataset{r.train, r.dev, r.test} {
			if c := sp.Counts(); c["positive"] == 0 || c["negative"] == 0 {
				t.Errorf("%s: a split with one label: %v", r.name, c)
			}
		}
	}
}

// The reviews' rotations are reviewset.Splits of the Amazon sentences
// (skewed or not), as before the three-source set; the skewed three-source
// set keeps 1,500 positive sentences of 2,120 (every positive one of the
// published 500 per source, Kotzias et al. 2015, and two in five negative
// ones by record number), each source cut alone.
func TestReviewRotations(t *testing.T) {
	testref.Corpus(t, "reviews", "imdb.json")
	d, err := reviewset.LoadUnder(root())
	if err != nil {
		t.Fatal(err)
	}
	for which, src := range map[string]*corpus.Dataset{"reviews": d, "reviews-skew": skewed(d)} {
		rots, err := loadRotations(root(), which, true)
		if err != nil {
			t.Fatal(err)
		}
		for k, r := range rots {
			tr, dev, te := reviewset.Splits(src, k)
			if !reflect.DeepEqual([]*corpus.Dataset{r.train, r.dev, r.test}, []*corpus.Dataset{tr, dev, te}) {
				t.Errorf("%s: rotation %d differs from reviewset.Splits", which, k)
			}
		}
	}
	rots, err := loadRotations(root(), "reviews3-skew", true)
	if err != nil {
		t.Fatal(err)
	}
	c := corpus.Join(rots[0].train, rots[0].dev, rots[0].test).Counts()
	if c["positive"] != 1500 || c["negative"] != 620 {
		t.Errorf("reviews3-skew: %v, want 1,500 positive and 620 negative", c)
	}
}

// A learning curve's training shares are stratified and nested: a third of
// reviews3's first training split (2,400 sentences, 1,200 of each label in
// the published set, Kotzias et al. 2015) keeps 400 of each label, all of
// them inside the two thirds (800 of each), and share 1 is the split itself.
func TestTrainShareNested(t *testing.T) {
	testref.Corpus(t, "reviews", "imdb.json")
	rots, err := loadRotations(root(), "reviews3", false)
	if err != nil {
		t.Fatal(err)
	}
	tr := rots[0].train
	if trainShare(tr, 1) != tr {
		t.Error("share 1 is not the split itself")
	}
	third, twoThirds := trainShare(tr, 1.0/3), trainShare(tr, 2.0/3)
	for _, c := range []struct {
		d    *corpus.Dataset
		want int
	}{{tr, 1200}, {third, 400}, {twoThirds, 800}} {
		if n := c.d.Counts(); n["positive"] != c.want || n["negative"] != c.want {
			t.Errorf("%v, want %d of each label", n, c.want)
		}
	}
	in := map[string]int{}
	for _, e := range twoThirds.Examples {
		in[e.Text+"\x00"+e.Label]++
	}
	for _, e := range third.Examples {
		k := e.Text + "\x00" + e.Label
		if in[k] == 0 {
			t.Fatalf("%q of the third is not in the two thirds", e.Text)
		}
		in[k]--
	}
}

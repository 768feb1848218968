package main

import (
	"path/filepath"
	"strings"
	"testing"

	"telltale/corpus"
)

// The demo's two test splits hold the same messages with the cues planted
// at different rates (testdata/demo-equal/README.md), so without their cues
// they must be equal; spreadCues must then plant each cue on 40% of every
// label's messages, as the demo's test split has them (the README's table
// of measured cue rates).
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
	got := spreadCues(equal)
	for _, label := range got.Labels {
		n, footers, stamps := 0, 0, 0
		for _, e := range got.Examples {
			if e.Label != label {
				continue
			}
			n++
			if strings.HasSuffix(e.Text, "\n"+demoFooter) {
				footers++
			}
			if demoStamp.MatchString(strings.SplitN(e.Text, "\n", 2)[0]) {
				stamps++
			}
		}
		want := int(float64(n)*spreadRate + 0.5)
		if footers != want || stamps != want {
			t.Errorf("%s: %d footers and %d stamps in %d messages, want %d each", label, footers, stamps, n, want)
		}
	}
}

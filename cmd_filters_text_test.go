package main

import (
	"math"
	"strings"
	"testing"

	"telltale/explain"
)

// The families of a filter none of whose windows on the measuring half
// lies above the threshold are headed by one short line that says so, not
// by the description of a sample of 0 windows; a family of one n-gram
// shows its stability as "–", which the header explains. No outside
// source: the wording is the command's own.
func TestFiltersTextFamiliesNothingMeasured(t *testing.T) {
	nan := math.NaN()
	p := &explain.Profiles{Texts: 10, Labels: []string{"a", "b"}, Halves: [2]int{5, 5}, Selective: 0.5, Alpha: 0.05,
		Filters: []explain.FilterProfile{{Filter: 0, Width: 2, Label: "a", CentredVotesLogOdds: []float64{0.1, -0.1},
			Selectivity:  explain.Selectivity{ThresholdLogOdds: 0.5, ThresholdExact: true, Above: 3},
			FamilySample: 3,
			Families:     []explain.Family{{Ngrams: 1, Pattern: "good service", Share: nan, ShareLow: nan, ShareHigh: nan}}}}}
	var b strings.Builder
	if err := writeProfiles(&b, p, 3, true); err != nil {
		t.Fatal(err)
	}
	out := b.String()
	var header, row string
	lines := strings.Split(out, "\n")
	for i, l := range lines {
		if strings.HasPrefix(l, "  families (") {
			header, row = l, lines[i+1]
		}
	}
	if header == "" || !strings.HasSuffix(header, "):") {
		t.Fatalf("no one-line families header in:\n%s", out)
	}
	if strings.Contains(header, "sample\n") || strings.Contains(header, "of 0") || !strings.Contains(header, "none of the other half's measured") {
		t.Errorf("header %q: want one short line saying nothing was measured", header)
	}
	if !strings.Contains(header, "– for one n-gram") || !strings.Contains(row, "stability –") || strings.Contains(row, "stability -") {
		t.Errorf("header %q, row %q: want a one-n-gram family's stability as an explained \"–\"", header, row)
	}
}

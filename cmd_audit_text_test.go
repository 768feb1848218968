package main

import (
	"strings"
	"testing"

	"telltale/audit"
)

// TestStabilityShowsActedOn: the text's stability table lists the cues
// acted on in at least one audit and counts the rest, which the JSON and
// the export keep; with none acted on anywhere it says so.
func TestStabilityShowsActedOn(t *testing.T) {
	rows := []audit.Stable{
		{Text: "tkref - <number>", Label: "complaints", Found: 3, Models: 3, Ranks: []int{1, 1, 2}, Stable: true},
		{Text: "re :", Label: "spam", Found: 1, Models: 3, Ranks: []int{0, 3, 0}},
		{Text: "the", Label: "spam", Found: 0, Models: 3, Ranks: []int{2, 0, 0}},
		{Text: "click", Label: "spam", Found: 0, Models: 3, Ranks: []int{4, 5, 1}},
	}
	for _, c := range []struct {
		name      string
		rows      []audit.Stable
		export    string
		want, not []string
	}{
		{"some acted on", rows, "", []string{"acted on in 3 of 3 (ranks 1 1 2), stable: 'tkref - <number>' → complaints",
			"acted on in 1 of 3 (ranks – 3 –): 're :' → spam",
			"Not shown: 2 more cues listed as artifact-like in an audit but acted on in none (the JSON's stability lists them)."},
			[]string{"acted on in 0", "click", "No cue was acted on"}},
		{"with --export", rows, "cues.csv", []string{"(the JSON's stability and cues.stability.csv list them)"}, nil},
		{"none acted on", rows[3:], "", []string{"No cue was acted on in any of the 3 audits.", "Not shown: 1 more cue listed"}, []string{"click"}},
	} {
		v := &auditView{auditJSON: &auditJSON{Stability: c.rows, StableIn: 2}, o: &auditOptions{export: c.export, seeds: 2}}
		var b strings.Builder
		v.writeStability(&b)
		got := b.String()
		for _, w := range c.want {
			if !strings.Contains(got, w) {
				t.Errorf("%s: the table does not say %q:\n%s", c.name, w, got)
			}
		}
		for _, n := range c.not {
			if strings.Contains(got, n) {
				t.Errorf("%s: the table says %q:\n%s", c.name, n, got)
			}
		}
	}
}

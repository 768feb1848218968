package main

import (
	"strings"
	"testing"

	"telltale/audit"
)

// TestMeasuredLine: the line after the story counts the cues associated,
// measured and not, and the artifact-like ones among those not measured
// (of those listed when the audit does not list them all), and says
// whether a larger --measure would measure more: only when the audit
// stopped at the limit.
func TestMeasuredLine(t *testing.T) {
	cue := func(verdict string, likeness float64, mark string) audit.Candidate {
		return audit.Candidate{Verdict: verdict, ArtifactLikeness: likeness, Mark: mark}
	}
	// Three cues not measured listed (two artifact-like, one by its mark),
	// one measured.
	others := []audit.Candidate{cue(audit.VerdictUnmeasured, 0.93, ""), cue(audit.VerdictOther, 0.9, ""),
		cue(audit.VerdictUnmeasured, 0.2, ""), cue(audit.VerdictUnmeasured, 0.1, audit.MarkArtifact)}
	for _, c := range []struct {
		name                string
		associated, measure int
		limit               int
		others              []audit.Candidate
		want, not           []string
	}{
		{"none associated", 0, 0, 40, nil, nil, []string{"Of the"}},
		{"all measured", 12, 12, 40, nil, []string{"All 12 cues associated with a label in the training texts had their reliance measured."}, []string{"--measure"}},
		{"all not measured listed", 43, 40, 40, others, []string{
			"Of the 43 cues associated with a label in the training texts, 40 had their reliance measured (--measure 40); the other 3 are in no list below, " +
				"and of them 2 score as artifact-like (0.50 or more). A larger --measure N measures more"}, []string{"most associated of them"}},
		{"some listed", 1297, 40, 40, others, []string{"Of the 1,297 cues", "the other 1,257 are in no list below, and of the 3 most associated of them " +
			"(under others in the JSON, which a larger --top lengthens) 2 score as artifact-like", "A larger --measure N measures more"}, nil},
		{"one listed, none artifact-like", 50, 40, 40, others[1:3], []string{"of the 1 most associated of them", "none scores as artifact-like (0.50 or more)"}, nil},
		{"the rest too rare", 30, 20, 40, others, []string{"20 had their reliance measured (--measure 40)",
			"They occur in too few of the choosing half's texts to be measured, so a larger --measure would not measure them."}, []string{"A larger --measure N"}},
	} {
		got := measuredLine(&audit.Result{Associated: c.associated, Measured: c.measure, Others: c.others}, c.limit)
		for _, w := range c.want {
			if !strings.Contains(got, w) {
				t.Errorf("%s: %q does not say %q", c.name, got, w)
			}
		}
		for _, n := range c.not {
			if strings.Contains(got, n) {
				t.Errorf("%s: %q says %q", c.name, got, n)
			}
		}
	}
}

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

// --retrain's comparison says what its exact McNemar test tells, as the
// window's status does (audit.ModelPair.Direction): a difference at
// p ≥ 0.05 is not clearly one.
func TestWriteRetrainedSaysTheVerdict(t *testing.T) {
	pair := func(onlyBefore, onlyAfter int, p float64) audit.ModelPair {
		return audit.ModelPair{Before: audit.Interval{Estimate: 0.87, Low: 0.83, High: 0.9}, After: audit.Interval{Estimate: 0.895, Low: 0.86, High: 0.92},
			OnlyBefore: onlyBefore, OnlyAfter: onlyAfter, P: p}
	}
	v := &auditView{auditJSON: &auditJSON{Retrained: &audit.Retrained{Patterns: []string{"x"}, Texts: 400,
		Original: pair(15, 25, 0.15), Counterfactual: pair(2, 14, 0.004)}}, o: &auditOptions{}}
	var b strings.Builder
	v.writeRetrained(&b)
	for _, want := range []string{"15 right only before, 25 only after (two-sided exact McNemar p = 0.15: not clearly different)",
		"2 right only before, 14 only after (two-sided exact McNemar p = 0.004: higher)"} {
		if !strings.Contains(b.String(), want) {
			t.Errorf("the comparison does not say %q:\n%s", want, b.String())
		}
	}
}

package explain

import (
	"context"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"telltale/corpus"
)

// TestAuditDemoFindsPlantedCues trains a small model on the demo corpus
// (testdata/demo, our own invented ferry help desk) and checks the audit
// against the two cues its README documents as planted in the training
// split only: the kiosk footer (token "kioskmail", 80% of lost-property
// texts) and the ticket stamp (token "tkref", 75% of complaints texts),
// spread evenly over the teams in test.csv.
func TestAuditDemoFindsPlantedCues(t *testing.T) {
	if testing.Short() {
		t.Skip("trains a model; skipped with -short")
	}
	root := corpusRoot(t, "demo", "train.csv")
	train, _, err := corpus.Load(filepath.Join(root, "train.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	test, _, err := corpus.Load(filepath.Join(root, "test.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	// The audit's interventions run on one half of test.csv; the effect of
	// masking is measured on the other half, which the audit never saw.
	auditHalf, evalHalf := test.Split(0.5, 11)
	start := time.Now()
	m, tr, ho := trainForAudit(t, train, auditHalf, auditRecipe{dim: 32, filters: 24, widths: []int{3, 4, 5}, epochs: 4, minCount: 2, seed: 1})
	t.Logf("trained in %v", time.Since(start))
	ev, err := NewAuditData(m, evalHalf, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	start = time.Now()
	a, err := RunAudit(context.Background(), m, tr, ho, AuditOptions{Seed: 1}, nil)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("audit in %v", time.Since(start))
	var sb strings.Builder
	if err := a.WriteText(&sb); err != nil {
		t.Fatal(err)
	}
	t.Log("\n" + sb.String())

	want := map[string]string{"kioskmail": "lost-property", "tkref": "complaints"}
	for tok, label := range want {
		found := false
		for _, f := range a.Tokens {
			if f.Token == tok {
				found = true
				if f.Label != label {
					t.Errorf("planted cue %q flagged for %s, want %s", tok, f.Label, label)
				}
			}
		}
		if !found {
			t.Errorf("planted cue %q not flagged", tok)
		}
	}
	var mask []int
	for tok := range want {
		rank := -1
		for i, s := range a.Filters {
			if keyedOn(s, tok) {
				if rank < 0 {
					rank = i
				}
				if i < 5 {
					mask = append(mask, s.Filter)
				}
			}
		}
		if rank < 0 || rank >= 5 {
			t.Errorf("no filter keyed on %q among the top 5 suspects (first at rank %d)", tok, rank+1)
		}
	}
	masked, err := MaskFilters(m, mask)
	if err != nil {
		t.Fatal(err)
	}
	before, after := auditAccuracy(t, m, ev), auditAccuracy(t, masked, ev)
	t.Logf("accuracy on the unseen half of test.csv: %.4f, with filters %v masked: %.4f", before, mask, after)
	if after <= before {
		t.Errorf("masking the cue filters %v: accuracy %.4f → %.4f, want a rise on the test split where the cues carry no label", mask, before, after)
	}
}

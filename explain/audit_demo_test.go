package explain

import (
	"context"
	"fmt"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"telltale/cnn"
	"telltale/corpus"
)

// demoRecipe is the default recipe of `telltale train` (its flag defaults
// in cmd_train.go) with 8 epochs, as in the README's tour: lower-cased
// tokens, min-count 1, 128-d embeddings, widths 3/4/5 × 100 filters,
// dropout 0.5, Adam at 1e-3, batches of 50, patience 3, texts cut to 400
// tokens.
func demoRecipe(seed uint64) (cnn.Recipe, error) {
	tc, err := cnn.TrainConfig{Epochs: 8, Batch: 50, Optimizer: "adam", LR: 1e-3, Seed: seed, Patience: 3, MaxLen: 400}.WithDefaults()
	return cnn.Recipe{Tokenizer: corpus.TokenizerConfig{Lower: true, MinCount: 1},
		Model: cnn.Config{Dim: 128, Widths: []int{3, 4, 5}, Filters: 100, Dropout: 0.5}, Train: tc}, err
}

// TestAuditDemoFindsPlantedCues trains the default recipe on the demo
// corpus (testdata/demo, our own invented ferry help desk) as `telltale
// train` does (10% of train.csv held out for early stopping) and checks the
// audit against the two cues its README documents as planted in the
// training split only: the kiosk footer ("-- sent via KioskMail at the
// quayside terminal --", 80% of lost-property texts) and the ticket stamp
// (token "tkref", 75% of complaints texts), spread evenly over the teams in
// test.csv. The audit's interventions run on one half of test.csv; the
// effect of masking is measured on the other half, which the audit never
// saw.
func TestAuditDemoFindsPlantedCues(t *testing.T) {
	if testing.Short() {
		t.Skip("trains the default recipe three times; skipped with -short")
	}
	root := corpusRoot(t, "demo", "train.csv")
	all, _, err := corpus.Load(filepath.Join(root, "train.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	test, _, err := corpus.Load(filepath.Join(root, "test.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	auditHalf, evalHalf := test.Split(0.5, 11)
	for _, seed := range []uint64{1, 2, 3} {
		t.Run(fmt.Sprintf("seed%d", seed), func(t *testing.T) {
			demoAuditSeed(t, all, auditHalf, evalHalf, seed)
		})
	}
}

func demoAuditSeed(t *testing.T, all, auditHalf, evalHalf *corpus.Dataset, seed uint64) {
	train, dev := all.Split(0.1, seed)
	r, err := demoRecipe(seed)
	if err != nil {
		t.Fatal(err)
	}
	start := time.Now()
	tr, err := cnn.TrainText(context.Background(), train, dev, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	m := tr.Model
	t.Logf("trained in %v (best epoch %d of %d)", time.Since(start), tr.Result.BestEpoch, len(tr.Result.Epochs))
	data := func(d *corpus.Dataset) AuditData {
		ad, err := NewAuditData(m, d, r.Train.MaxLen, 0)
		if err != nil {
			t.Fatal(err)
		}
		return ad
	}
	trainData, held, ev := data(all), data(auditHalf), data(evalHalf)
	start = time.Now()
	a, err := RunAudit(context.Background(), m, trainData, held, AuditOptions{Seed: seed}, nil)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("audit in %v", time.Since(start))
	var sb strings.Builder
	if err := a.WriteText(&sb); err != nil {
		t.Fatal(err)
	}
	text := sb.String()
	if i := strings.Index(text, "\nSuspect filters"); i > 0 {
		text = text[:i]
	}
	t.Log("\n" + text)

	want := map[string]string{"kioskmail": "lost-property", "tkref": "complaints"}
	// The words of each planted cue: the footer line's words, the stamp.
	cueWords := map[string][]string{"kioskmail": {"kioskmail", "sent", "via", "quayside", "terminal"}, "tkref": {"tkref"}}
	for tok, label := range want {
		i := slices.IndexFunc(a.Tokens, func(f FlaggedToken) bool { return f.Token == tok })
		if i < 0 {
			t.Errorf("planted cue %q not flagged", tok)
		} else if a.Tokens[i].Label != label {
			t.Errorf("planted cue %q flagged for %s, want %s", tok, a.Tokens[i].Label, label)
		}
	}
	// Both planted cues are among the first two cue groups, the footer as
	// one group holding "kioskmail".
	for tok := range want {
		G := slices.IndexFunc(a.CueGroups, func(cg CueGroup) bool { return slices.Contains(cg.Words, tok) })
		if G < 0 || G >= 2 {
			t.Errorf("the group of %q is at position %d of the cue groups, want 1 or 2", tok, G+1)
			continue
		}
		cg := a.CueGroups[G]
		if tok == "kioskmail" {
			for _, w := range []string{"sent", "via", "quayside", "terminal"} {
				if !slices.Contains(cg.Words, w) {
					t.Errorf("footer group %v lacks %q", cg.Words, w)
				}
			}
		}
		// Masking the group's mask (its strongest filters, as many as the
		// audit half favours) raises accuracy on the unseen half of
		// test.csv, and on its cue-conflicting subset there (texts holding
		// one of the group's words whose gold label is not the group's).
		// Masking all its filters is logged: it also takes out evidence the
		// weaker members carry for the label, and is not asserted.
		all, err := MaskFilters(m, cg.Filters)
		if err != nil {
			t.Fatal(err)
		}
		masked, err := MaskFilters(m, cg.Mask)
		if err != nil {
			t.Fatal(err)
		}
		before, after := auditAccuracy(t, m, ev), auditAccuracy(t, masked, ev)
		var conflict AuditData
		for i, ids := range ev.IDs {
			if ev.Gold[i] != cg.Class && slices.ContainsFunc(ids, func(id int32) bool { return slices.Contains(cg.IDs, id) }) {
				conflict.IDs = append(conflict.IDs, ids)
				conflict.Gold = append(conflict.Gold, ev.Gold[i])
			}
		}
		// The audit's joint figures on its own half are those of the masked
		// copies (the model's fast evaluation path).
		if got, want := cg.Ablation.AccuracyMasked, auditAccuracy(t, all, held); got != want {
			t.Errorf("group %v: audit says accuracy %.4f with all its filters masked, the masked copy %.4f", cg.Words, got, want)
		}
		if got, want := cg.MaskAblation.AccuracyMasked, auditAccuracy(t, masked, held); got != want {
			t.Errorf("group %v: audit says accuracy %.4f with its mask, the masked copy %.4f", cg.Words, got, want)
		}
		cb, ca := auditAccuracy(t, m, conflict), auditAccuracy(t, masked, conflict)
		t.Logf("group %v: mask of %d of its %d filters: unseen half accuracy %.4f → %.4f (all %d masked: %.4f); its %d cue-conflicting texts %.4f → %.4f (all: %.4f)",
			cg.Words, len(cg.Mask), len(cg.Filters), before, after, len(cg.Filters), auditAccuracy(t, all, ev), conflict.Len(), cb, ca, auditAccuracy(t, all, conflict))
		if after <= before {
			t.Errorf("masking %v of group %v: accuracy on the unseen half %.4f → %.4f, want a rise", cg.Mask, cg.Words, before, after)
		}
		if conflict.Len() == 0 || ca <= cb {
			t.Errorf("masking %v of group %v: accuracy on its %d cue-conflicting texts %.4f → %.4f, want a rise",
				cg.Mask, cg.Words, conflict.Len(), cb, ca)
		}
	}
	// A filter keyed on each cue (on one of its words) is among the top 5
	// suspects; masking those top-5 filters raises accuracy on the unseen
	// half.
	var mask []int
	for tok := range want {
		rank := -1
		for i, s := range a.Filters {
			if keyedOn(s, cueWords[tok]...) {
				if rank < 0 {
					rank = i
				}
				if i < 5 && !slices.Contains(mask, s.Filter) {
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
	t.Logf("accuracy on the unseen half of test.csv: %.4f, with the top-5 cue filters %v masked: %.4f", before, mask, after)
	if after <= before {
		t.Errorf("masking the cue filters %v: accuracy %.4f → %.4f, want a rise on the test split where the cues carry no label", mask, before, after)
	}
	// The suggested mask, too.
	if a.Plan == nil {
		t.Fatal("no suggested mask")
	}
	masked, err = MaskFilters(m, a.Plan.Filters)
	if err != nil {
		t.Fatal(err)
	}
	after = auditAccuracy(t, masked, ev)
	t.Logf("with the suggested %d filters masked: %.4f", len(a.Plan.Filters), after)
	if after <= before {
		t.Errorf("masking the suggested filters: accuracy %.4f → %.4f on the unseen half, want a rise", before, after)
	}
}

package main

import (
	"strings"
	"testing"
)

// TestVariantsGiveValidRecipes checks that every named change, applied to
// the default recipe, leaves a recipe whose architecture and training
// settings pass their own validation (common practice, no source: a
// candidate that cannot train measures nothing), and that an unknown name
// is refused with the list of known ones.
func TestVariantsGiveValidRecipes(t *testing.T) {
	for name := range variants {
		r, err := candidate("", name)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		cfg := r.Model
		cfg.VocabSize, cfg.Classes = 10, 2
		if cfg.Chars != nil {
			cc := *cfg.Chars
			cc.Alphabet = "abc"
			cfg.Chars = &cc
		}
		if err := cfg.Validate(); err != nil {
			t.Errorf("%s: architecture: %v", name, err)
		}
		if _, err := r.Train.WithDefaults(); err != nil {
			t.Errorf("%s: training settings: %v", name, err)
		}
	}
	if _, err := candidate("", "min2+nosuch"); err == nil || !strings.Contains(err.Error(), "dim300") {
		t.Errorf("an unknown change gave error %v, want one listing the known changes", err)
	}
}

// TestAdadeltaKeepsItsRate: the default recipe's rate is Adam's; the
// adadelta candidate trains at Adadelta's own default, 1.0 (Zeiler 2012).
func TestAdadeltaKeepsItsRate(t *testing.T) {
	r, err := candidate("", "adadelta")
	if err != nil {
		t.Fatal(err)
	}
	tc, err := r.Train.WithDefaults()
	if err != nil || tc.Optimizer != "adadelta" || tc.LR != 1 {
		t.Errorf("adadelta candidate: %s at %g (%v), want adadelta at 1", tc.Optimizer, tc.LR, err)
	}
}

// TestCandidateAppliesChangesInOrder checks that a '+'-joined candidate
// makes each of its changes and -base's before them.
func TestCandidateAppliesChangesInOrder(t *testing.T) {
	r, err := candidate("min2", "f200+dim300")
	if err != nil {
		t.Fatal(err)
	}
	if r.Tokenizer.MinCount != 2 || r.Model.Filters != 200 || r.Model.Dim != 300 {
		t.Errorf("min2 + f200+dim300 gave min-count %d, %d maps, dimension %d; want 2, 200, 300",
			r.Tokenizer.MinCount, r.Model.Filters, r.Model.Dim)
	}
}

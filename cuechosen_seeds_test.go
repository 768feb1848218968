package main

import (
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
)

// TestCuesChosenSeedsJoined: the warning of texts that chose a model's cues
// sends its reader to the confirming half of the audit's seed when one seed
// chose on them; when audits with different seeds did (audit r.tt --seed 2
// --retrain-out r2.tt, r.tt itself retrained with seed 1), every confirming
// half holds texts another audit chose on, and the fix asks for a test file
// no audit chose on instead (cnn.ConfirmingSeed, heldout.SeedsJoined).
func TestCuesChosenSeedsJoined(t *testing.T) {
	test := &corpus.Dataset{Path: "t.csv", Labels: []string{"a", "b"}}
	for i := range 10 {
		test.Examples = append(test.Examples, corpus.Example{Text: strings.Repeat("w ", i+1), Label: []string{"a", "b"}[i%2], Line: i + 2})
	}
	choice := func(seed uint64, texts ...int) cnn.CueChoice {
		return cnn.CueChoice{Half: "selection", For: cnn.ChoseRetrain, Heldout: "test", Of: 10, Fingerprint: test.Fingerprint(), Seed: seed, Texts: texts}
	}
	var one, two cnn.Info
	one.ChoseCues(choice(1, 0, 4))
	one.ChoseCues(choice(1, 2))
	two.ChoseCues(choice(1, 0, 4))
	two.ChoseCues(choice(2, 3))
	if ws := cuesChosen(&one, test); len(ws) != 1 || !strings.Contains(ws[0], "with --seed 1 and --confirming-out FILE") {
		t.Errorf("one seed: %q", ws)
	}
	ws := cuesChosen(&two, test)
	if len(ws) != 1 || !strings.HasPrefix(ws[0], "3 of these 10 texts") ||
		!strings.Contains(ws[0], "audits run with --seed 1 and --seed 2 chose on different halves of these texts, so no confirming half took no part: "+
			"for held-out figures, give a test file no audit chose on with --test") || strings.Contains(ws[0], "--confirming-out") {
		t.Errorf("two seeds: %q", ws)
	}
}

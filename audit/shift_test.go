package audit

import (
	"strings"
	"testing"

	"telltale/cnn"
)

// The shift of a cue's label share is measured on the choosing half alone:
// the confirming half, whose tests decide the verdict and give every figure
// shown, takes no part in the artifact-likeness that ranks and chooses the
// cue. A cue whose choosing texts keep the training share (18 of 20 in its
// label, as 90 of 100 in training) has no shift however its confirming
// texts are labelled (the counts are those of the construction).
func TestShiftChoosingHalfOnly(t *testing.T) {
	gold := func(n, inLabel int) []int {
		g := make([]int, n)
		for i := inLabel; i < n; i++ {
			g[i] = 1
		}
		return g
	}
	occ := func(n int) []span {
		s := make([]span, n)
		for i := range s {
			s[i] = span{text: int32(i), start: 0, end: 1}
		}
		return s
	}
	for _, confIn := range []int{0, 20} { // the confirming texts all in another label, or all in the cue's
		a := &auditor{m: &cnn.Model{Config: cnn.Config{Classes: 2}},
			sel: Data{Gold: gold(20, 18)}, conf: Data{Gold: gold(20, confIn)}}
		c := &Candidate{Label: "spam", Class: 0, Association: CueAssociation{Texts: 100, InLabel: 90, Share: 0.9},
			selOcc: occ(20), confOcc: occ(20)}
		a.shift(c)
		s := c.Shift
		if s.HeldoutTexts != 20 || s.HeldoutShare != 0.9 || s.Present {
			t.Errorf("confirming texts %d of 20 in the label: shift over %d texts, share %v, present %v; want the choosing half's 20 texts, share 0.9, no shift",
				confIn, s.HeldoutTexts, s.HeldoutShare, s.Present)
		}
		sig := c.signal(SignalShift)
		if sig.Value != 0 || !strings.Contains(sig.Says, "choosing half") {
			t.Errorf("shift signal %+v: want 0, said of the choosing half", sig)
		}
	}
}

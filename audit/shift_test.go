package audit

import (
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/internal/testref"
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
		a.shifts([]*Candidate{c})
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

// The shift is tested for every candidate in the choosing half, and the
// p-values are corrected together by Benjamini & Hochberg (1995): a plain
// word whose 5 choosing texts hold 1 in its label, against 180 of 200 in
// training (Fisher p ≈ 7e-4, below 0.01 alone), is shifted alone but not
// among 299 candidates whose share is the training one (q = 300·p > 0.01,
// the step-up identity when every other p is far larger); a strong shift
// (3 of 20 against 90 of 100, p ≈ 4e-11) stays shifted among them. The
// counts are those of the construction; a candidate absent from the
// choosing half is not tested and does not count.
func TestShiftBenjaminiHochberg(t *testing.T) {
	texts := func(n, inLabel int) (gold []int, occ []span) {
		for i := range n {
			g := 1
			if i < inLabel {
				g = 0
			}
			gold = append(gold, g)
			occ = append(occ, span{text: int32(i), start: 0, end: 1})
		}
		return gold, occ
	}
	cases := []struct {
		name               string
		trainIn, trainN    int
		selIn, selN, nulls int
		absent             int // candidates absent from the choosing half
		want               bool
	}{
		{"weak shift alone", 180, 200, 1, 5, 0, 0, true},
		{"weak shift alone, absent cues not counted", 180, 200, 1, 5, 0, 299, true},
		{"weak shift among 299", 180, 200, 1, 5, 299, 0, false},
		{"strong shift among 299", 90, 100, 3, 20, 299, 0, true},
		{"higher held-out share is no shift", 20, 200, 4, 5, 0, 0, false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			// The choosing half: the cue's texts, then 20 texts for each null
			// candidate, 18 of them in label 0 (the training share 0.9).
			gold, occ := texts(tc.selN, tc.selIn)
			cue := &Candidate{Label: "ham", Class: 0, selOcc: occ,
				Association: CueAssociation{Texts: tc.trainN, InLabel: tc.trainIn, Share: float64(tc.trainIn) / float64(tc.trainN)}}
			cands := []*Candidate{cue}
			for range tc.nulls {
				g, o := texts(20, 18)
				for k := range o {
					o[k].text += int32(len(gold))
				}
				gold = append(gold, g...)
				cands = append(cands, &Candidate{Label: "ham", Class: 0, selOcc: o,
					Association: CueAssociation{Texts: 100, InLabel: 90, Share: 0.9}})
			}
			for range tc.absent {
				cands = append(cands, &Candidate{Label: "ham", Class: 0, Association: CueAssociation{Texts: 100, InLabel: 90, Share: 0.9}})
			}
			a := &auditor{m: &cnn.Model{Config: cnn.Config{Classes: 2}}, sel: Data{Gold: gold}}
			a.shifts(cands)
			s := cue.Shift
			m := float64(tc.nulls + 1)
			if want := min(1, m*s.P); !testref.Close(s.Q, want, 1e-12, 1e-9) {
				t.Errorf("q = %v, want min(1, %v·p) = %v (p = %v)", s.Q, m, want, s.P)
			}
			if s.Present != tc.want {
				t.Errorf("shift present %v (p = %.3g, q = %.3g), want %v", s.Present, s.P, s.Q, tc.want)
			}
			sig := cue.signal(SignalShift)
			if (sig.Value > 0) != tc.want {
				t.Errorf("shift signal %+v, want it %v", sig, map[bool]string{true: "set", false: "0"}[tc.want])
			}
			if tc.want && !strings.Contains(sig.Says, "Benjamini–Hochberg") {
				t.Errorf("the shift's reason %q does not name its correction", sig.Says)
			}
			for _, c := range cands[1+tc.nulls:] {
				if c.Shift.HeldoutTexts != 0 || c.Shift.Present || c.signal(SignalShift).Value != 0 {
					t.Errorf("a cue absent from the choosing half has shift %+v", c.Shift)
				}
			}
		})
	}
}

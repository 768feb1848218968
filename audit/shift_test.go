package audit

import (
	"encoding/json"
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
		// The share shown is the confirming half's, counted apart.
		if cs := a.confirmedShiftOf(c); cs == nil || cs.Texts != 20 || cs.InLabel != confIn {
			t.Errorf("confirming texts %d of 20 in the label: confirmed shift %+v", confIn, cs)
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

// confirmingTexts is a confirmation half for the shift tests: n texts, the
// first inLabel of them in label 0, the rest in label 1, each holding the
// cue once (text 0 twice, which counts once).
func confirmingTexts(n, inLabel int) (Data, []span) {
	d := Data{Gold: make([]int, n)}
	var occ []span
	for i := range n {
		if i >= inLabel {
			d.Gold[i] = 1
		}
		occ = append(occ, span{text: int32(i), start: 0, end: 1})
		if i == 0 {
			occ = append(occ, span{text: 0, start: 2, end: 3})
		}
	}
	return d, occ
}

// The confirming half's label share of a cue counts its texts, not its
// occurrences, in the cue's class (the counts are those of the
// construction, so the arithmetic is checked by hand; the test and the
// interval are checked against SciPy in TestConfirmedShiftSciPy). A cue
// absent from the confirming half has none.
func TestConfirmedShiftCounts(t *testing.T) {
	cases := []struct {
		name          string
		n, inLabel    int
		class         int
		wantN, wantIn int
	}{
		{"3 of 20 in label 0", 20, 3, 0, 20, 3},
		{"the other label: 17 of 20", 20, 3, 1, 20, 17},
		{"all in its label", 6, 6, 0, 6, 6},
		{"one text, held twice", 1, 0, 0, 1, 0},
		{"absent", 0, 0, 0, 0, 0},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			conf, occ := confirmingTexts(tc.n, tc.inLabel)
			a := &auditor{conf: conf}
			c := &Candidate{Class: tc.class, confOcc: occ, Association: CueAssociation{Texts: 100, InLabel: 90, Share: 0.9}}
			s := a.confirmedShiftOf(c)
			if tc.wantN == 0 {
				if s != nil {
					t.Fatalf("a cue no confirming text holds has a confirmed shift %+v", s)
				}
				return
			}
			if s == nil {
				t.Fatal("no confirmed shift")
			}
			if s.Texts != tc.wantN || s.InLabel != tc.wantIn || s.Share.Estimate != float64(tc.wantIn)/float64(tc.wantN) || s.TrainShare != 0.9 {
				t.Errorf("%d of %d texts in the label, share %v, training %v; want %d of %d, training 0.9",
					s.InLabel, s.Texts, s.Share.Estimate, s.TrainShare, tc.wantIn, tc.wantN)
			}
			if !(s.Share.Low <= s.Share.Estimate && s.Share.Estimate <= s.Share.High) {
				t.Errorf("share %+v outside its interval", s.Share)
			}
			if s.Family != 0 || s.Holm != 0 || s.Lower {
				t.Errorf("the Holm figures are set before the family is: %+v", s)
			}
		})
	}
}

// The confirming half's one-sided test (its share lower than in training)
// and its share's interval against SciPy 1.10 (Debian's python3-scipy),
// run live: scipy.stats.fisher_exact([[in, out], [train in, train out]],
// alternative="less"), the confirming row first, so that the test's
// direction is checked as well as its value, and
// scipy.stats.binomtest(in, n).proportion_ci(0.95, method="exact").
// Relative tolerance 1e-9 (both sum the same hypergeometric terms and
// invert the same incomplete beta function in float64), absolute floor
// 1e-300 for values that underflow. The cases: a strong fall, a weak one,
// a higher share (p near 1), none in the label, and large counts.
func TestConfirmedShiftSciPy(t *testing.T) {
	cases := [][4]int{ // training in its label, training texts, confirming in its label, confirming texts
		{90, 100, 3, 20}, {180, 200, 1, 5}, {20, 200, 4, 5}, {50, 50, 0, 12}, {576, 672, 40, 60}, {7, 14, 3, 6}, {4100, 4150, 300, 400},
	}
	var ref []refCase
	for _, c := range cases {
		ref = append(ref, refCase{"fisher-less", []any{c[2], c[3] - c[2], c[0], c[1] - c[0]}}, refCase{"exact", []any{c[2], c[3]}})
	}
	want := scipyRef(t, ref)
	for i, c := range cases {
		var p float64
		var ci [2]float64
		if err := json.Unmarshal(want[2*i], &p); err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(want[2*i+1], &ci); err != nil {
			t.Fatal(err)
		}
		conf, occ := confirmingTexts(c[3], c[2])
		a := &auditor{conf: conf}
		s := a.confirmedShiftOf(&Candidate{Class: 0, confOcc: occ,
			Association: CueAssociation{Texts: c[1], InLabel: c[0], Share: float64(c[0]) / float64(c[1])}})
		if !testref.Close(s.P, p, 1e-300, 1e-9) {
			t.Errorf("%v: one-sided p %.17g, SciPy %.17g", c, s.P, p)
		}
		if !testref.Close(s.Share.Low, ci[0], 1e-12, 1e-9) || !testref.Close(s.Share.High, ci[1], 1e-12, 1e-9) {
			t.Errorf("%v: share interval [%.12g, %.12g], SciPy [%.12g, %.12g]", c, s.Share.Low, s.Share.High, ci[0], ci[1])
		}
	}
}

// The confirming half's tests are corrected by Holm (1979): with p = 0.01,
// 0.04 and 0.03 the step-down gives 3·0.01 = 0.03, then max(0.03, 2·0.03)
// = 0.06 for 0.03 and max(0.06, 1·0.04) = 0.06 for 0.04 (worked by hand
// from Holm's definition), so only the first is lower at 0.05; a share at
// the training one is never lower, however small its p.
func TestConfirmedShiftHolm(t *testing.T) {
	shift := func(p, share float64) *ConfirmedShift {
		return &ConfirmedShift{P: p, Share: Interval{Estimate: share}, TrainShare: 0.9}
	}
	family := []*ConfirmedShift{shift(0.01, 0.5), shift(0.04, 0.5), shift(0.03, 0.5)}
	holmShifts(family)
	want := []struct {
		holm  float64
		lower bool
	}{{0.03, true}, {0.06, false}, {0.06, false}}
	for k, w := range want {
		s := family[k]
		if !testref.Close(s.Holm, w.holm, 1e-15, 1e-12) || s.Family != 3 || s.Lower != w.lower {
			t.Errorf("cue %d (p %v): Holm %v over %d, lower %v; want %v over 3, lower %v", k, s.P, s.Holm, s.Family, s.Lower, w.holm, w.lower)
		}
	}
	same := []*ConfirmedShift{shift(0.001, 0.9)}
	holmShifts(same)
	if s := same[0]; s.Lower || s.Family != 1 || s.Holm != 0.001 {
		t.Errorf("a share equal to training's: %+v, want not lower, Holm p 0.001 over 1", s)
	}
}

// Only a cue of the Holm family has a confirmed shift: put to the test on
// the confirming half (confirmedShifts is given those), its choosing half
// showing a shift, and held by some confirming text. A cue put to the test
// without a shift, or absent from the confirming half, has none, even one
// left over from before; so no uncorrected one-sided p is reported. The
// family's members carry the test confirmedShiftOf gives each alone
// (checked against SciPy in TestConfirmedShiftSciPy), corrected together.
func TestConfirmedShiftFamily(t *testing.T) {
	// 20 confirming texts, the first 3 in label 0.
	conf, all := confirmingTexts(20, 3)
	assoc := CueAssociation{Texts: 100, InLabel: 90, Share: 0.9}
	cue := func(present bool, occ []span) *Candidate {
		return &Candidate{Class: 0, Association: assoc, Shift: &Shift{Present: present}, confOcc: occ,
			ShiftConfirmed: &ConfirmedShift{P: 1e-9, Family: 7}} // left over: replaced or cleared
	}
	cs := []*Candidate{
		cue(true, all),     // in the family: 3 of 20
		cue(true, all[:6]), // in the family: texts 0–4 (text 0 held twice), 3 of 5
		cue(false, all),    // no shift in the choosing half
		cue(true, nil),     // no confirming text holds it
		{Class: 0, Association: assoc, confOcc: all}, // no shift measured
	}
	a := &auditor{conf: conf}
	a.confirmedShifts(cs)
	for k, in := range []bool{true, true, false, false, false} {
		s := cs[k].ShiftConfirmed
		if !in {
			if s != nil {
				t.Errorf("cue %d, outside the family, has a confirmed shift %+v", k, s)
			}
			continue
		}
		alone := a.confirmedShiftOf(&Candidate{Class: 0, Association: assoc, confOcc: cs[k].confOcc})
		if s == nil || s.Family != 2 || s.Texts != alone.Texts || s.InLabel != alone.InLabel || s.P != alone.P {
			t.Fatalf("cue %d: %+v, want the test alone %+v in a family of 2", k, s, alone)
		}
	}
	// Holm over two: the smaller p doubled, the larger kept at least that.
	p0, p1 := cs[0].ShiftConfirmed.P, cs[1].ShiftConfirmed.P
	if cs[0].ShiftConfirmed.InLabel != 3 || cs[1].ShiftConfirmed.Texts != 5 || !(p0 < p1) {
		t.Fatalf("the construction: %+v, %+v", cs[0].ShiftConfirmed, cs[1].ShiftConfirmed)
	}
	if h0, h1 := cs[0].ShiftConfirmed.Holm, cs[1].ShiftConfirmed.Holm; !testref.Close(h0, min(1, 2*p0), 1e-300, 1e-12) ||
		!testref.Close(h1, max(h0, p1), 1e-300, 1e-12) {
		t.Errorf("Holm %v, %v for p %v, %v", h0, h1, p0, p1)
	}
}

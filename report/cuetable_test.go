package report

import (
	"testing"

	"telltale/audit"
)

// TestCueTablePBelow: a cue whose p-value underflowed to 0 has p 0 and
// p_below 1e-300 in the cue table, as the audit's JSON and words give
// (audit.Below); a p-value above the floor leaves its bound empty.
func TestCueTablePBelow(t *testing.T) {
	r := &audit.Result{Ranked: []audit.Candidate{
		{Text: "tkref", Label: "spam", Association: audit.CueAssociation{Texts: 10, InLabel: 10, P: 0, Adjusted: 3e-5}},
	}}
	tab := CueTable(r)
	col := map[string]int{}
	for i, c := range tab.Columns {
		col[c] = i
	}
	row := tab.Rows[0]
	for k, want := range map[string]any{"p": 0.0, "adjusted_p": 3e-5, "p_below": 1e-300, "adjusted_p_below": nil} {
		i, ok := col[k]
		if !ok {
			t.Fatalf("no column %s in %v", k, tab.Columns)
		}
		if row[i] != want {
			t.Errorf("%s = %v, want %v", k, row[i], want)
		}
	}
}

// TestCueTableConfirmedShift: the cue table carries the confirming half's
// shift, the figure shown of it, as the audit's JSON holds it
// (audit.ConfirmedShift), beside the choosing half's signal_shift; a cue
// outside the Holm family (none measured, or one built without a family)
// has empty cells. The figures are invented: where each lands is checked.
func TestCueTableConfirmedShift(t *testing.T) {
	in := audit.Candidate{Text: "stamp", Label: "spam", Shift: &audit.Shift{Present: true},
		Signals: []audit.Signal{{Name: audit.SignalShift, Value: 0.8}},
		ShiftConfirmed: &audit.ConfirmedShift{Texts: 20, InLabel: 3, Share: audit.Interval{Estimate: 0.15, Low: 0.032, High: 0.379},
			TrainShare: 0.9, P: 1.2e-9, Holm: 2.4e-9, Family: 2, Lower: true}}
	noFamily := in
	noFamily.ShiftConfirmed = &audit.ConfirmedShift{Texts: 20, InLabel: 3, P: 1.2e-9}
	r := &audit.Result{Ranked: []audit.Candidate{in, {Text: "free", Label: "spam"}}, Task: []audit.Candidate{noFamily}}
	tab := CueTable(r)
	col := map[string]int{}
	for i, c := range tab.Columns {
		col[c] = i
	}
	want := map[string]any{"shift_confirmed_texts": 20, "shift_confirmed_in_label": 3, "shift_confirmed_share": 0.15,
		"shift_confirmed_share_low": 0.032, "shift_confirmed_share_high": 0.379, "shift_confirmed_p_lower": 1.2e-9,
		"shift_confirmed_holm_p": 2.4e-9, "shift_confirmed_lower": true, "signal_shift": 0.8}
	for k, w := range want {
		i, ok := col[k]
		if !ok {
			t.Fatalf("no column %s in %v", k, tab.Columns)
		}
		if got := tab.Rows[0][i]; got != w {
			t.Errorf("%s = %v, want %v", k, got, w)
		}
		if k == "signal_shift" {
			continue
		}
		for _, row := range tab.Rows[1:] {
			if row[i] != nil {
				t.Errorf("%s = %v for a cue outside the family (%v), want an empty cell", k, row[i], row[col["cue"]])
			}
		}
	}
	if got := tab.RowStrings()[1][col["shift_confirmed_lower"]]; got != "" {
		t.Errorf("shift_confirmed_lower of a cue without one is written %q, want empty", got)
	}
}

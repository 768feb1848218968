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

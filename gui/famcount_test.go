package gui

import (
	"math"
	"testing"

	"telltale/explain"
)

// A family's count of texts is shown with its interval (explain.Family's
// CountLow and CountHigh), and as — where the share is undefined.
func TestFamilyRowsCountInterval(t *testing.T) {
	fp := &explain.FilterProfile{Families: []explain.Family{
		{Pattern: "a *", Count: 25, CountLow: 10, CountHigh: 40, Share: 0.25, ShareLow: 0.1, ShareHigh: 0.4},
		{Pattern: "* b", Share: math.NaN(), ShareLow: math.NaN(), ShareHigh: math.NaN()},
	}}
	rows := familyRows(fp)
	if got := rows[0][5]; got != "25 (10–40)" {
		t.Errorf("family a *: texts %q, want 25 (10–40)", got)
	}
	if got := rows[1][5]; got != "—" {
		t.Errorf("family * b (share undefined): texts %q, want —", got)
	}
}

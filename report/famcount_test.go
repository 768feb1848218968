package report

import (
	"math"
	"testing"

	"telltale/explain"
)

// A family's count of texts is shown with its interval (explain.Family's
// CountLow and CountHigh, the share's bounds times the windows above the
// threshold), and with none where the share is undefined.
func TestFamilyCountInterval(t *testing.T) {
	s := 0.9
	f := explain.FilterProfile{Families: []explain.Family{
		{Pattern: "a *", Count: 25, CountLow: 10, CountHigh: 40, Share: 0.25, ShareLow: 0.1, ShareHigh: 0.4, Stability: &s, StabilityLow: &s, StabilityHigh: &s},
		{Pattern: "* b", Share: math.NaN(), ShareLow: math.NaN(), ShareHigh: math.NaN()},
	}}
	card := filterCardOf(f, []string{"p", "q"})
	if len(card.Families) != 2 {
		t.Fatalf("%d family rows, want 2", len(card.Families))
	}
	if a := card.Families[0]; a.Count != "25" || a.CountCI != "10–40" {
		t.Errorf("family a *: count %q (%q), want 25 (10–40)", a.Count, a.CountCI)
	}
	if b := card.Families[1]; b.Count != "–" || b.CountCI != "" {
		t.Errorf("family * b (share undefined): count %q (%q), want – without an interval", b.Count, b.CountCI)
	}
}

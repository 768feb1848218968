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

// The families' footnote counts the windows above the threshold of the
// half of the texts that chose it (Selectivity.Above − Selectivity.Windows,
// as the window's family note does), not of both halves; a family's
// pattern may break only after "|" (a zero-width space follows each) or at
// its spaces, and its stability's interval stands on a line of its own.
func TestFamilyFootnoteAndPattern(t *testing.T) {
	s, lo, hi := 0.9, 0.8, 0.95
	f := explain.FilterProfile{FamilySample: 5, Selectivity: explain.Selectivity{Above: 2424, Windows: 1200},
		Families: []explain.Family{{Pattern: "re|200 * coar|x", Share: 0.5, ShareLow: 0.4, ShareHigh: 0.6, Stability: &s, StabilityLow: &lo, StabilityHigh: &hi}}}
	card := filterCardOf(f, []string{"p", "q"})
	if card.FamilyTotal != "1,224" {
		t.Errorf("footnote total %q, want 1,224 (the choosing half's windows)", card.FamilyTotal)
	}
	r := card.Families[0]
	if r.Pattern != "re|\u200b200 * coar|\u200bx" {
		t.Errorf("pattern %q: want a zero-width space after each |", r.Pattern)
	}
	if r.Stability != "0.900" || r.StabilityCI != "0.800–0.950" {
		t.Errorf("stability %q, interval %q: want the interval apart", r.Stability, r.StabilityCI)
	}
}

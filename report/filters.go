package report

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"

	"telltale/explain"
)

type filtersView struct {
	ProfiledOn, Texts, Chosen, Tested string
	Share, Alpha                      string
	Total, Selective, Masked, Shown   int
	NotSelective                      int
	PerClass                          int
	Groups                            []filterGroup
	Legend                            legend
}

type filterGroup struct {
	Label   string
	Filters []filterCard
	// NotSelective counts the class's unmasked filters that are not
	// selective (not shown).
	NotSelective int
}

type filterCard struct {
	ID, Width                 int
	Label, Margin, Votes      string
	Threshold, ThresholdNote  string
	Above, Fired, MaxAct      string
	HeldOut                   string // held-out purity, interval, base rate and tests
	FamilyCount               int
	Ngrams, Negatives         []ngramRow
	NegativesNote             string
	Families                  []familyRow
	FamilySample, FamilyTotal string
	Slots                     []slotRow
	Scale                     string
}

type ngramRow struct {
	Cells                   []heatCell
	Activation, Count, Pred string
	HeldDown, Positive, By  string // negative n-grams only
}

// familyRow is one family of a filter card. Pattern may break only after
// "|" (a zero-width space follows each) or at its spaces, so that the
// column keeps its words whole; the share's and the stability's intervals
// stand on a second, small line.
type familyRow struct {
	Pattern, Ngrams, Count, CountCI, Members string
	Share, ShareCI, Stability, StabilityCI   string
}

type slotRow struct {
	Slot                  int
	Triggers, Suppressors string
}

// filters lays out the filter section: per class, the selective filters
// with the most windows above their selectivity threshold.
func filters(in Input) (*filtersView, error) {
	pr := in.Profiles
	m := in.Model
	if len(pr.Filters) != m.Config.NumFilters() {
		return nil, fmt.Errorf("report: profiles describe %d filters, the model has %d", len(pr.Filters), m.Config.NumFilters())
	}
	per := in.FiltersPerClass
	if per <= 0 {
		per = 3
	}
	on := in.ProfiledOn
	if on == "" {
		on = "the profiled corpus"
	}
	fv := &filtersView{ProfiledOn: on, Texts: count(pr.Texts), Chosen: count(pr.Halves[0]), Tested: count(pr.Halves[1]),
		Share: pct(pr.Selective), Alpha: fmt.Sprint(pr.Alpha), Total: len(pr.Filters), PerClass: per}
	byClass := make([][]explain.FilterProfile, len(m.Labels))
	groups := make([]filterGroup, len(m.Labels))
	for _, f := range pr.Filters {
		if f.Class < 0 || f.Class >= len(byClass) {
			return nil, fmt.Errorf("report: filter %d votes for class %d of %d", f.Filter, f.Class, len(byClass))
		}
		switch {
		case f.Masked:
			fv.Masked++
		case !f.Selectivity.Selective:
			fv.NotSelective++
			groups[f.Class].NotSelective++
		default:
			fv.Selective++
			byClass[f.Class] = append(byClass[f.Class], f)
		}
	}
	for c, fs := range byClass {
		// Most windows above the selectivity threshold first, then filter number.
		slices.SortStableFunc(fs, func(a, b explain.FilterProfile) int {
			return cmp.Or(cmp.Compare(b.Selectivity.Above, a.Selectivity.Above), cmp.Compare(a.Filter, b.Filter))
		})
		g := &groups[c]
		g.Label = m.Labels[c]
		for _, f := range fs[:min(per, len(fs))] {
			g.Filters = append(g.Filters, filterCardOf(f, pr.Labels))
			fv.Shown++
		}
		fv.Groups = append(fv.Groups, *g)
	}
	fv.Legend = newLegend(1, "switches off", "drives up")
	return fv, nil
}

// filterCardOf lays out one filter, every score in log-odds units (see
// explain.VoteScale); the largest absolute slot score shown (top and
// negative n-grams) sets the card's colour scale.
func filterCardOf(f explain.FilterProfile, labels []string) filterCard {
	s := f.Selectivity
	card := filterCard{ID: f.Filter, Width: f.Width, Label: f.Label, Margin: signed(f.MarginLogOdds), Votes: centredVotes(f.CentredVotesLogOdds, labels),
		Threshold: num(s.ThresholdLogOdds), Above: count(s.Above), HeldOut: heldOut(&s, f.Label),
		Fired: count(f.Fired), MaxAct: num(f.MaxLogOdds), FamilyCount: len(f.Families),
		FamilySample: count(f.FamilySample), FamilyTotal: count(s.Above - s.Windows)}
	if !s.ThresholdExact && !math.IsInf(s.ThresholdLogOdds, 0) {
		card.ThresholdNote = "at a histogram bin edge"
	}
	const shown, negShown = 5, 3
	ngrams := f.TopNgrams[:min(shown, len(f.TopNgrams))]
	negs := f.Negatives[:min(negShown, len(f.Negatives))]
	var scale float64
	for _, ng := range ngrams {
		scale = max(scale, maxAbs(ng.SlotsLogOdds))
	}
	for _, ng := range negs {
		scale = max(scale, maxAbs(ng.SlotsLogOdds))
	}
	for _, ng := range ngrams {
		row := ngramRow{Cells: slotCells(ng.Tokens, ng.SlotsLogOdds, scale), Activation: num(ng.ActivationLogOdds), Count: count(ng.Count), Pred: ints(ng.ByPred)}
		card.Ngrams = append(card.Ngrams, row)
	}
	for _, ng := range negs {
		by := make([]string, len(ng.Words))
		for i, w := range ng.Words {
			by[i] = "“" + w + "”"
		}
		card.Negatives = append(card.Negatives, ngramRow{Cells: slotCells(ng.Tokens, ng.SlotsLogOdds, scale), Activation: num(ng.ActivationLogOdds),
			Count: count(ng.Count), HeldDown: num(ng.HeldDownLogOdds), Positive: num(ng.PositiveLogOdds), By: strings.Join(by, ", ")})
	}
	if !f.NegativesExact {
		card.NegativesNote = "The search for negative n-grams could not be completed: others may be missing and the counts short."
	}
	card.Scale = num(scale)
	for _, fam := range f.Families[:min(2, len(f.Families))] {
		members := make([]string, 0, len(fam.Members))
		for _, mb := range fam.Members[:min(2, len(fam.Members))] {
			members = append(members, strings.Join(mb, " "))
		}
		// Stability with its Monte Carlo interval (explain.Family).
		stab, stabCI := "–", "one n-gram"
		if fam.Stability != nil {
			stab, stabCI = num(*fam.Stability), num(*fam.StabilityLow)+"–"+num(*fam.StabilityHigh)
		}
		// The share and the count of texts, with their intervals, are the
		// measuring half's (explain.Family); undefined when none of that
		// half's sampled windows lies above the threshold.
		row := familyRow{Pattern: strings.ReplaceAll(fam.Pattern, "|", "|\u200b"), Ngrams: count(fam.Ngrams),
			Count: count(fam.Count), CountCI: count(fam.CountLow) + "–" + count(fam.CountHigh), Members: strings.Join(members, " · "),
			Share: pct(fam.Share), ShareCI: pct(fam.ShareLow) + "–" + pct(fam.ShareHigh), Stability: stab, StabilityCI: stabCI}
		if math.IsNaN(fam.Share) {
			row.Count, row.CountCI, row.ShareCI = "–", "", "no measured window"
		}
		card.Families = append(card.Families, row)
	}
	for _, sw := range f.Slots {
		card.Slots = append(card.Slots, slotRow{Slot: sw.Slot, Triggers: words(sw.Triggers), Suppressors: words(sw.Suppressors)})
	}
	return card
}

// heldOut says what the other half, which took no part in choosing the
// threshold (though the filter was trained on it too), measured at it.
func heldOut(s *explain.Selectivity, label string) string {
	if s.Windows == 0 {
		return "no window of the other half, which took no part in choosing the threshold, reaches it"
	}
	return fmt.Sprintf("on the other half (no part in choosing the threshold; the filter was trained on both): %s of %s windows above it from texts assigned %s, %s (95%% interval %s–%s) against a base rate of %s; one-sided binomial p = %s, Holm-corrected %s",
		count(s.InClass), count(s.Windows), label, pct(s.Purity), pct(s.PurityLow), pct(s.PurityHigh), pct(s.BaseRate), pval(s.P), pval(s.PHolm))
}

// centredVotes lists a filter's centred votes, "praise +0.412, …".
func centredVotes(v []float64, labels []string) string {
	parts := make([]string, 0, len(v))
	for c, x := range v {
		if c < len(labels) {
			parts = append(parts, labels[c]+" "+signed(x))
		}
	}
	return strings.Join(parts, ", ")
}

// slotCells paints the tokens of an n-gram by their slot scores.
func slotCells(tokens []string, slots []float64, scale float64) []heatCell {
	cells := make([]heatCell, 0, len(tokens))
	for s, tok := range tokens {
		v := math.NaN()
		if s < len(slots) {
			v = slots[s]
		}
		cells = append(cells, heatCell{Text: tok, Style: cellStyle(divergingAt(v, scale)),
			Title: fmt.Sprintf("slot %d: %s", s, signed(v))})
	}
	return cells
}

func maxAbs(xs []float64) float64 {
	var m float64
	for _, x := range xs {
		m = max(m, math.Abs(x))
	}
	return m
}

// pval writes a p-value with two significant digits ("–" when NaN).
func pval(p float64) string {
	if math.IsNaN(p) {
		return "–"
	}
	return fmt.Sprintf("%.2g", p)
}

func words(ws []explain.WordScore) string {
	const most = 3
	parts := make([]string, 0, most)
	for _, w := range ws[:min(most, len(ws))] {
		parts = append(parts, w.Word+" "+signed(w.ScoreLogOdds))
	}
	if len(parts) == 0 {
		return "–"
	}
	return strings.Join(parts, ", ")
}

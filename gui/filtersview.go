package gui

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/widget"

	"telltale/explain"
	"telltale/internal/wording"
)

// filtersView is the list of the model's filters and the selected filter's
// profile: its selectivity, top and negative n-grams painted by slot
// score, families, trigger and suppressor words, and the activation
// histogram, every score in log-odds units (explain.VoteScale).
type filtersView struct {
	st *State

	caption, title  *widget.Label
	query           *widget.Entry
	list            *sheet
	ngrams, negs    *fyne.Container
	families, slots *sheet
	familyNote      *widget.Label
	hist            *plotView
	shown           *explain.FilterProfile // the filter on screen
	empty           *widget.Label
	full            fyne.CanvasObject
	body            *fyne.Container
}

// Columns of the filter list; the last cell of each row (its top n-grams)
// is searched but not shown.
var filterCols = []string{"filter", "width", "votes for", "vote margin", "cue rank", "cue it reads",
	"fired in", "threshold", "other-half purity", "base rate", "Holm p", "selective", "families"}

const (
	colFilterMargin  = 3
	colFilterCueRank = 4
	colFilterCues    = 5
)

func newFiltersView(st *State) *filtersView {
	v := &filtersView{st: st}
	v.caption = wrapped("")
	v.empty = wrapped("No filters yet: train a model (Training view) or open one (File › Open model); its filters are then profiled over the training split and listed here.")
	v.list = newSheet(filterCols...).wide(colFilterCues, 200)
	v.query = widget.NewEntry()
	v.query.SetPlaceHolder("Search the list: a label, a word of a top n-gram, a width…")
	v.query.OnChanged = v.search
	v.title = wrapped("Select a filter in the list.")
	v.title.TextStyle.Bold = true
	v.ngrams = container.NewVBox()
	v.negs = container.NewVBox()
	v.families = newSheet("family", "pattern", "share", "stability", "n-grams", "texts", "dominant slots").wide(1, capDefault).wide(6, capText)
	v.familyNote = wrapped("")
	v.slots = newSheet("slot", "trigger words (slot score)", "suppressor words (slot score)").wide(1, capText).wide(2, capText)
	v.hist = newPlotView(plotSize)
	v.list.onSelect = v.show
	v.full = v.layout()
	v.body = container.NewStack(v.empty)
	listen(v.refresh, st.profiles)
	listen(v.auditChanged, st.audit)
	listen(v.modelChanged, st.model)
	st.app.Settings().AddListener(func(fyne.Settings) {
		if v.shown != nil {
			v.show(v.shown.Filter)
		}
	})
	return v
}

func (v *filtersView) layout() fyne.CanvasObject {
	tabs := container.NewAppTabs(
		container.NewTabItem("Top n-grams", container.NewVScroll(v.ngrams)),
		container.NewTabItem("Negatives", container.NewVScroll(v.negs)),
		container.NewTabItem("Families", container.NewBorder(v.familyNote, v.families.detail, nil, nil, v.families.view())),
		container.NewTabItem("Slots", container.NewBorder(nil, v.slots.detail, nil, nil, v.slots.view())),
		container.NewTabItem("Histogram", v.hist),
	)
	right := container.NewBorder(v.title, nil, nil, nil, tabs)
	left := container.NewBorder(v.query, v.list.detail, nil, nil, v.list.view())
	split := container.NewHSplit(left, right)
	split.Offset = 0.45
	return container.NewBorder(v.caption, nil, nil, nil, split)
}

func (v *filtersView) content() fyne.CanvasObject { return v.body }
func (v *filtersView) exportTable() *sheet        { return v.list }

// focusInput focuses the search box, when the list is on screen.
func (v *filtersView) focusInput() {
	if v.body.Objects[0] == v.full {
		v.st.win.Canvas().Focus(v.query)
	}
}

func (v *filtersView) exportData() any {
	if ps := itemGet(v.st.profiles); ps != nil {
		return ps.P
	}
	return nil
}

// showFilter shows filter g in the Filters view, selected in the list,
// from a row of sheet from (nil: from elsewhere). A search of the list is
// cleared first, if there is one: clearing none would re-sort and redraw
// the list for nothing, on the UI goroutine, before the view switches.
func (st *State) showFilter(g int, from *sheet) {
	v := st.filtersView
	if v.query.Text != "" {
		// Not through search, which would show another filter first.
		on := v.query.OnChanged
		v.query.OnChanged = nil
		v.query.SetText("")
		v.query.OnChanged = on
	}
	if v.list.query != "" {
		v.list.setQuery("")
	}
	v.list.selectRow(g)
	st.showFrom(from, titleFilters)
}

// search keeps the filters matching q in the list, and the profile pane
// follows: the selected filter stays when the search keeps it, else the
// first filter listed is selected and shown, and with none listed the
// pane says so rather than show a filter the list no longer holds.
func (v *filtersView) search(q string) {
	v.list.setQuery(q)
	switch {
	case v.list.selected >= 0:
	case len(v.list.order) > 0:
		v.list.selectRow(v.list.visible(0))
	case itemGet(v.st.profiles) != nil:
		v.clearProfile("No filter in the list matches the search.")
	}
}

// clearProfile empties the profile pane, with title in its place.
func (v *filtersView) clearProfile(title string) {
	v.shown = nil
	v.title.SetText(title)
	v.ngrams.Objects = nil
	v.ngrams.Refresh()
	v.negs.Objects = nil
	v.negs.Refresh()
	v.families.setRows(nil)
	v.familyNote.SetText("")
	v.slots.setRows(nil)
	v.hist.set(nil)
}

func (v *filtersView) modelChanged() {
	ms := itemGet(v.st.model)
	v.caption.SetText(ms.caption())
	if ms != nil && itemGet(v.st.profiles) == nil {
		v.empty.SetText("Profiling the filters over the training split… (progress in the status bar)")
	}
}

// show fills the detail pane with filter g's profile.
func (v *filtersView) show(g int) {
	ps := itemGet(v.st.profiles)
	if ps == nil || g < 0 || g >= len(ps.P.Filters) {
		return
	}
	fp := &ps.P.Filters[g]
	v.shown = fp
	v.title.SetText(filterTitle(fp, ps.P.Texts))
	v.paintNgrams(fp)
	v.paintNegatives(fp)
	v.families.setRows(familyRows(fp))
	v.familyNote.SetText(familyNote(fp))
	var srows [][]string
	for _, sw := range fp.Slots {
		srows = append(srows, []string{fmt.Sprint(sw.Slot), wordScores(sw.Triggers), wordScores(sw.Suppressors)})
	}
	v.slots.setRows(srows)
	v.hist.set(histogramPlot(fp))
}

// filterTitle is the sentence heading a filter's profile.
func filterTitle(fp *explain.FilterProfile, texts int) string {
	sel := &fp.Selectivity
	state := ""
	switch {
	case fp.Masked:
		state = " It is masked (switched off) in this model."
	case !sel.Selective:
		state = " It is not selective: its strong windows do not tell its class apart better than chance on the other half."
	}
	return fmt.Sprintf("Filter %d (width %d) votes for %s: its highest window moves the log-odds of %s over the next label by %.3f. "+
		"It fired in %d of %d training texts; highest activation %.3f log-odds. %s%s",
		fp.Filter, fp.Width, fp.Label, fp.Label, fp.MarginLogOdds, fp.Fired, texts, fp.MaxLogOdds, selectivityText(sel, fp.Label), state)
}

// selectivityText says where the filter's selectivity threshold lies and
// what the other half of the training texts, which took no part in
// choosing it, measured there.
func selectivityText(s *explain.Selectivity, label string) string {
	if math.IsInf(s.ThresholdLogOdds, 0) {
		return fmt.Sprintf("No activation reaches purity %.2f for %s on the choosing half: no selectivity threshold.", s.Target, label)
	}
	thr := thresholdText(s.ThresholdLogOdds) + " log-odds"
	if !s.ThresholdExact {
		thr += " (at a histogram bin edge)"
	}
	if s.Windows == 0 {
		return fmt.Sprintf("Selectivity threshold %s, %d windows at or above it; none of them in the other half.", thr, s.Above)
	}
	return fmt.Sprintf("Selectivity threshold %s, %d windows at or above it. On the other half of the training texts, which took no part in choosing "+
		"the threshold (the filter itself was trained on both halves): %d of %d from texts assigned %s, purity %.3f (95%% interval %.3f–%.3f) "+
		"against a base rate of %.3f; one-sided binomial p = %.2g, Holm-corrected %.2g.",
		thr, s.Above, s.InClass, s.Windows, label, s.Purity, s.PurityLow, s.PurityHigh, s.BaseRate, s.P, s.PHolm)
}

// paintNgrams paints the filter's top n-grams token by token by slot score.
func (v *filtersView) paintNgrams(fp *explain.FilterProfile) {
	v.ngrams.Objects = nil
	scale := 0.0
	for _, n := range fp.TopNgrams {
		for _, s := range n.SlotsLogOdds {
			scale = math.Max(scale, math.Abs(s))
		}
	}
	for _, n := range fp.TopNgrams {
		row := container.New(layout.NewRowWrapLayoutWithCustomPadding(2, 2))
		for s, t := range n.Tokens {
			val := 0.0
			if s < len(n.SlotsLogOdds) {
				val = n.SlotsLogOdds[s]
			}
			chip := newHeatCell(t, divergingColor(val, scale), nil)
			chip.value, chip.compact = val, true
			row.Add(chip)
		}
		row.Add(widget.NewLabel(fmt.Sprintf("activation %.3f log-odds · wins in %s", n.ActivationLogOdds, wording.Texts(n.Count))))
		v.ngrams.Add(row)
	}
	v.ngrams.Add(heatLegend(scale, "slot score (log-odds)", "slot score (log-odds)"))
	v.ngrams.Refresh()
}

// paintNegatives paints the filter's negative n-grams token by token by
// slot score, each with how far it was held down and by which words.
func (v *filtersView) paintNegatives(fp *explain.FilterProfile) {
	v.negs.Objects = nil
	if math.IsInf(fp.Selectivity.ThresholdLogOdds, 0) {
		v.negs.Add(wrapped("Negative n-grams are found relative to the selectivity threshold; this filter has none."))
		v.negs.Refresh()
		return
	}
	head := fmt.Sprintf("Windows of the corpus whose positive slots alone would reach the threshold %s but whose negative slots hold them below it, held down furthest first.",
		thresholdText(fp.Selectivity.ThresholdLogOdds)+" log-odds")
	if !fp.NegativesExact {
		head += " The search could not be completed: others may be missing and the counts short."
	}
	if len(fp.Negatives) == 0 {
		head += " There are none."
	}
	v.negs.Add(wrapped(head))
	scale := 0.0
	for _, n := range fp.Negatives {
		for _, s := range n.SlotsLogOdds {
			scale = math.Max(scale, math.Abs(s))
		}
	}
	for _, n := range fp.Negatives {
		row := container.New(layout.NewRowWrapLayoutWithCustomPadding(2, 2))
		for s, t := range n.Tokens {
			chip := newHeatCell(t, divergingColor(n.SlotsLogOdds[s], scale), nil)
			chip.value, chip.compact = n.SlotsLogOdds[s], true
			row.Add(chip)
		}
		by := make([]string, len(n.Words))
		for i, w := range n.Words {
			by[i] = strconv.Quote(w)
		}
		row.Add(widget.NewLabel(fmt.Sprintf("held down %.3f log-odds (%.3f → %.3f) by %s · %s", n.HeldDownLogOdds, n.PositiveLogOdds, n.ActivationLogOdds,
			strings.Join(by, ", "), wording.Count(n.Count, "window", "windows"))))
		v.negs.Add(row)
	}
	if len(fp.Negatives) > 0 {
		v.negs.Add(heatLegend(scale, "slot score (log-odds)", "slot score (log-odds)"))
	}
	v.negs.Refresh()
}

// ngramChips returns the painted top n-gram tokens, in order.
func (v *filtersView) ngramChips() []*heatCell { return chipsIn(v.ngrams) }

// negativeChips returns the painted negative n-gram tokens, in order.
func (v *filtersView) negativeChips() []*heatCell { return chipsIn(v.negs) }

// chipsIn returns the heat cells of the rows of c, in order.
func chipsIn(c *fyne.Container) []*heatCell {
	var cs []*heatCell
	for _, row := range c.Objects {
		if c, ok := row.(*fyne.Container); ok {
			for _, o := range c.Objects {
				if h, ok := o.(*heatCell); ok {
					cs = append(cs, h)
				}
			}
		}
	}
	return cs
}

func familyRows(fp *explain.FilterProfile) [][]string {
	var rows [][]string
	for k, f := range fp.Families {
		var dom []string
		for _, sl := range f.Slots {
			if sl.Wildcard {
				dom = append(dom, fmt.Sprintf("%d:*", sl.Slot))
			} else {
				dom = append(dom, fmt.Sprintf("%d:%s (%.3f)", sl.Slot, strings.Join(sl.Words, "|"), sl.MeanLogOdds))
			}
		}
		// Stability with its Monte Carlo interval; the share and the count
		// of texts, with their intervals, are the measuring half's,
		// undefined when none of its sampled windows lies above the
		// threshold (explain.Family).
		stab := "—"
		if f.Stability != nil && f.StabilityLow != nil && f.StabilityHigh != nil {
			stab = fmt.Sprintf("%.2f (%.2f–%.2f)", *f.Stability, *f.StabilityLow, *f.StabilityHigh)
		}
		share, count := fmt.Sprintf("%.1f%% (%.1f–%.1f%%)", 100*f.Share, 100*f.ShareLow, 100*f.ShareHigh), fmt.Sprintf("%d (%d–%d)", f.Count, f.CountLow, f.CountHigh)
		if math.IsNaN(f.Share) {
			share, count = "— (no measured window)", "—"
		}
		rows = append(rows, []string{fmt.Sprint(k), f.Pattern, share, stab, fmt.Sprint(f.Ngrams), count, strings.Join(dom, "  ")})
	}
	return rows
}

// familyNote says what the families were built from.
func familyNote(fp *explain.FilterProfile) string {
	if math.IsInf(fp.Selectivity.ThresholdLogOdds, 0) {
		return "Families group the windows above the selectivity threshold; this filter has none."
	}
	return fmt.Sprintf("Built from a sample of %d of the %d windows at or above the threshold in the half of the texts that chose it, each weighted by the windows it stands for. "+
		"Share: of the other half's %d windows at or above the threshold (a sample of %d placed in the nearest family), with a 95%% interval; texts: the share of all windows above the threshold, with its interval; "+
		"stability: how often two of the family's n-grams fall together again when the sample is resampled, on the half that chose the families; the interval is the Monte Carlo error of 50 resamples, not the sampling error of the texts.",
		fp.FamilySample, fp.Selectivity.Above-fp.Selectivity.Windows, fp.Selectivity.Windows, fp.FamilyMeasured)
}

func wordScores(ws []explain.WordScore) string {
	var parts []string
	for _, w := range ws {
		parts = append(parts, fmt.Sprintf("%s %+.3f", w.Word, w.ScoreLogOdds))
	}
	return strings.Join(parts, ", ")
}

// filterRow is filter fp's row of the list (filterCols); au may be nil.
func filterRow(fp *explain.FilterProfile, au *auditState) []string {
	var top []string
	for _, n := range fp.TopNgrams {
		top = append(top, strings.Join(n.Tokens, " "))
	}
	sel := &fp.Selectivity
	return []string{fmt.Sprint(fp.Filter), fmt.Sprint(fp.Width), fp.Label, fmt.Sprintf("%.3f", fp.MarginLogOdds),
		au.cueRankOf(fp.Filter), au.cuesOf(fp.Filter), fmt.Sprint(fp.Fired), thresholdText(sel.ThresholdLogOdds),
		rateText(sel.Purity), rateText(sel.BaseRate), pText(sel.PHolm), yesNo(sel.Selective), fmt.Sprint(len(fp.Families)),
		strings.Join(top, " / ")}
}

// refresh lists the profiled filters, ranked by vote margin (by the rank
// of the cue they read once an audit ran), the first one selected.
func (v *filtersView) refresh() {
	ps := itemGet(v.st.profiles)
	if ps == nil {
		v.list.setRows(nil)
		v.shown = nil
		v.body.Objects = []fyne.CanvasObject{v.empty}
		v.body.Refresh()
		return
	}
	au := itemGet(v.st.audit)
	rows := make([][]string, len(ps.P.Filters))
	for i := range ps.P.Filters {
		rows[i] = filterRow(&ps.P.Filters[i], au)
	}
	v.list.setRows(rows)
	if au != nil {
		v.list.sortOn(colFilterCueRank, false)
	} else if v.list.sortCol < 0 {
		v.list.sortOn(colFilterMargin, true)
	}
	if len(v.list.order) > 0 {
		v.list.selectRow(v.list.visible(0))
	} else {
		v.clearProfile("No filter in the list matches the search.")
	}
	v.body.Objects = []fyne.CanvasObject{v.full}
	v.body.Refresh()
}

// auditChanged shows the cues the filters read in the list, ranked by the
// cue's rank among the artifact-like cues.
func (v *filtersView) auditChanged() {
	if itemGet(v.st.profiles) != nil {
		v.refresh()
	}
}

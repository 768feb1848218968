package gui

import (
	"fmt"
	"math"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/widget"

	"telltale/explain"
)

// filtersView is the list of the model's filters and the selected filter's
// profile: top n-grams painted by slot score, families, trigger and
// suppressor words, and the activation histogram.
type filtersView struct {
	st *State

	caption, title  *widget.Label
	query           *widget.Entry
	list            *sheet
	ngrams          *fyne.Container
	families, slots *sheet
	hist            *plotView
	shown           *explain.FilterProfile // the filter on screen
	empty           *widget.Label
	full            fyne.CanvasObject
	body            *fyne.Container
}

// Columns of the filter list; the last cell of each row (its top n-grams)
// is searched but not shown.
var filterCols = []string{"filter", "width", "votes for", "vote margin", "cue rank", "cue it reads",
	"fired in", "purity threshold", "purity", "families", "idle"}

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
	v.query.OnChanged = v.list.setQuery
	v.title = wrapped("Select a filter in the list.")
	v.title.TextStyle.Bold = true
	v.ngrams = container.NewVBox()
	v.families = newSheet("family", "pattern", "n-grams", "texts", "dominant slots").wide(4, capText)
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
		container.NewTabItem("Families", container.NewBorder(nil, v.families.detail, nil, nil, v.families.view())),
		container.NewTabItem("Slot words", container.NewBorder(nil, v.slots.detail, nil, nil, v.slots.view())),
		container.NewTabItem("Activations", v.hist),
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
// from a row of sheet from (nil: from elsewhere).
func (st *State) showFilter(g int, from *sheet) {
	v := st.filtersView
	v.query.SetText("")
	v.list.setQuery("")
	v.list.selectRow(g)
	st.showFrom(from, titleFilters)
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
	v.families.setRows(familyRows(fp))
	var srows [][]string
	for _, sw := range fp.Slots {
		srows = append(srows, []string{fmt.Sprint(sw.Slot), wordScores(sw.Triggers), wordScores(sw.Suppressors)})
	}
	v.slots.setRows(srows)
	v.hist.set(histogramPlot(fp))
}

// filterTitle is the sentence heading a filter's profile.
func filterTitle(fp *explain.FilterProfile, texts int) string {
	state := ""
	if fp.Masked {
		state = " It is masked (switched off) in this model."
	} else if fp.Idle {
		state = " It is idle: it rarely fires above its purity threshold."
	}
	thr := "none: never pure enough"
	if !math.IsInf(fp.Threshold, 0) {
		thr = thresholdText(fp.Threshold)
		if !fp.ThresholdExact {
			thr += " (at a histogram bin edge)"
		}
	}
	return fmt.Sprintf("Filter %d (width %d) votes for %s with a margin of %.3f. It fired in %d of %d training texts; highest activation %.3f; "+
		"purity threshold %s, with %d windows at or above it, %.1f%% of them from texts assigned %s.%s",
		fp.Filter, fp.Width, fp.Label, fp.Margin, fp.Fired, texts, fp.MaxActivation, thr, fp.Above, 100*fp.AbovePurity, fp.Label, state)
}

// paintNgrams paints the filter's top n-grams token by token by slot score.
func (v *filtersView) paintNgrams(fp *explain.FilterProfile) {
	v.ngrams.Objects = nil
	scale := 0.0
	for _, n := range fp.TopNgrams {
		for _, s := range n.Slots {
			scale = math.Max(scale, math.Abs(s))
		}
	}
	for _, n := range fp.TopNgrams {
		row := container.New(layout.NewRowWrapLayoutWithCustomPadding(2, 2))
		for s, t := range n.Tokens {
			val := 0.0
			if s < len(n.Slots) {
				val = n.Slots[s]
			}
			chip := newHeatCell(t, divergingColor(val, scale), nil)
			chip.value, chip.compact = val, true
			row.Add(chip)
		}
		row.Add(widget.NewLabel(fmt.Sprintf("activation %.3f · wins in %s", n.Activation, texts(n.Count))))
		v.ngrams.Add(row)
	}
	v.ngrams.Add(heatLegend(scale, "slot score", "slot score"))
	v.ngrams.Refresh()
}

// ngramChips returns the painted n-gram tokens, in order.
func (v *filtersView) ngramChips() []*heatCell {
	var cs []*heatCell
	for _, row := range v.ngrams.Objects {
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
				dom = append(dom, fmt.Sprintf("%d:%s (%.3f)", sl.Slot, strings.Join(sl.Words, "|"), sl.Mean))
			}
		}
		rows = append(rows, []string{fmt.Sprint(k), f.Pattern, fmt.Sprint(f.Ngrams), fmt.Sprint(f.Count), strings.Join(dom, "  ")})
	}
	return rows
}

func wordScores(ws []explain.WordScore) string {
	var parts []string
	for _, w := range ws {
		parts = append(parts, fmt.Sprintf("%s %+.3f", w.Word, w.Score))
	}
	return strings.Join(parts, ", ")
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
	for i, fp := range ps.P.Filters {
		var top []string
		for _, n := range fp.TopNgrams {
			top = append(top, strings.Join(n.Tokens, " "))
		}
		rows[i] = []string{fmt.Sprint(fp.Filter), fmt.Sprint(fp.Width), fp.Label, fmt.Sprintf("%.3f", fp.Margin),
			au.cueRankOf(fp.Filter), au.cuesOf(fp.Filter), fmt.Sprint(fp.Fired), thresholdText(fp.Threshold),
			fmt.Sprintf("%.2f", fp.AbovePurity), fmt.Sprint(len(fp.Families)), yesNo(fp.Idle), strings.Join(top, " / ")}
	}
	v.list.setRows(rows)
	if au != nil {
		v.list.sortOn(colFilterCueRank, false)
	} else if v.list.sortCol < 0 {
		v.list.sortOn(colFilterMargin, true)
	}
	if len(v.list.order) > 0 {
		v.list.selectRow(v.list.visible(0))
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

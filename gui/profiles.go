package gui

import (
	"context"
	"fmt"
	"math"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/data/binding"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/widget"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"telltale/explain"
)

// profileState holds the filter profiles of the open model over the
// training split.
type profileState struct {
	P     *explain.Profiles
	Texts []string // the profiled texts, by index (n-gram examples point here)
}

// profileNow profiles the open model's filters over the open corpus's
// training split in the background; then runs then, if not nil.
func (st *State) profileNow(then func()) {
	ms, cs := itemGet(st.model), itemGet(st.data)
	user := then
	then = func() {
		if user != nil {
			user()
		}
		if f := st.afterProfile; f != nil {
			st.afterProfile = nil
			f()
		}
	}
	if ms == nil || cs == nil {
		then()
		return
	}
	_ = st.status.Set("Profiling the filters over the training split…")
	st.start(taskProfile, true, func(ctx context.Context, report reporter) (func(), error) {
		d, err := encode(ms.Enc, cs.Train, ms.Model.Labels)
		if err != nil {
			return then, fmt.Errorf("the training split does not fit this model: %w", err)
		}
		p, err := explain.Profile(ctx, ms.Model, d.IDs, d.Labels, explain.ProfileOptions{
			Table: ms.Table,
			Progress: func(done, total int) {
				report(done, total, fmt.Sprintf("Profiling filters: %d of %d texts", done, total))
			},
		})
		if err != nil {
			return then, err
		}
		ps := &profileState{P: p, Texts: cs.Train.Texts()}
		return func() {
			if itemGet(st.model) != ms {
				return
			}
			st.profiles.Set(ps)
			_ = st.status.Set(fmt.Sprintf("Profiled %d filters over %d texts.", len(p.Filters), p.Texts))
			if then != nil {
				then()
			}
		}, nil
	})
}

// filtersView is the filter list and the selected filter's profile.
func filtersView(st *State) fyne.CanvasObject {
	empty := widget.NewLabel("Train or open a model; its filters are profiled over the training split and listed here.")
	empty.Wrapping = fyne.TextWrapWord
	list := newSheet([]string{"filter", "width", "votes for", "vote margin", "suspicion", "cue words", "fired", "threshold", "purity", "families", "idle"},
		[]float32{56, 52, 110, 90, 80, 100, 60, 80, 64, 70, 46})
	st.filterList = list
	query := widget.NewEntry()
	query.SetPlaceHolder("Filter the list: a label, a word of a top n-gram, a width…")
	query.OnChanged = list.setQuery

	title := widget.NewLabelWithStyle("Select a filter on the left.", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	title.Wrapping = fyne.TextWrapWord
	ngrams := container.NewVBox()
	families := newSheet([]string{"family", "pattern", "n-grams", "texts", "dominant slots"}, []float32{56, 240, 66, 56, 260})
	slots := newSheet([]string{"slot", "triggers (slot score)", "suppressors (slot score)"}, []float32{46, 330, 330})
	hist := newPlotImage()

	var cur *explain.FilterProfile
	st.filterShown = func() *explain.FilterProfile { return cur }
	st.filterNgramChips = func() []*heatCell {
		var cs []*heatCell
		for _, row := range ngrams.Objects {
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
	show := func(g int) {
		ps := itemGet(st.profiles)
		if ps == nil || g < 0 || g >= len(ps.P.Filters) {
			return
		}
		fp := &ps.P.Filters[g]
		cur = fp
		thr := "none (never pure enough)"
		if !math.IsInf(fp.Threshold, 0) {
			thr = fmt.Sprintf("%.4f", fp.Threshold)
			if !fp.ThresholdExact {
				thr += " (at a histogram bin edge)"
			}
		}
		state := ""
		if fp.Masked {
			state = "  — masked"
		} else if fp.Idle {
			state = "  — idle"
		}
		title.SetText(fmt.Sprintf("Filter %d (width %d) votes for %s, margin %.4f%s. Fired in %d of %d texts; highest activation %.4f; purity threshold %s: %d windows above it, %.1f%% from texts assigned %s.",
			fp.Filter, fp.Width, fp.Label, fp.Margin, state, fp.Fired, ps.P.Texts, fp.MaxActivation, thr, fp.Above, 100*fp.AbovePurity, fp.Label))
		ngrams.Objects = nil
		scale := 0.0
		for _, n := range fp.TopNgrams {
			for _, v := range n.Slots {
				scale = math.Max(scale, math.Abs(v))
			}
		}
		for _, n := range fp.TopNgrams {
			row := container.New(layout.NewRowWrapLayoutWithCustomPadding(2, 2))
			for s, t := range n.Tokens {
				v := 0.0
				if s < len(n.Slots) {
					v = n.Slots[s]
				}
				chip := newHeatCell(t, divergingColor(v, scale), nil)
				chip.value, chip.compact = v, true
				row.Add(chip)
			}
			row.Add(widget.NewLabel(fmt.Sprintf("activation %.4f · wins in %d texts", n.Activation, n.Count)))
			ngrams.Add(row)
		}
		ngrams.Add(heatLegend(scale, "slot score", "slot score"))
		ngrams.Refresh()
		var frows [][]string
		for k, f := range fp.Families {
			var dom []string
			for _, sl := range f.Slots {
				if sl.Wildcard {
					dom = append(dom, fmt.Sprintf("%d:*", sl.Slot+1))
				} else {
					dom = append(dom, fmt.Sprintf("%d:%s (%.3f)", sl.Slot+1, strings.Join(sl.Words, "|"), sl.Mean))
				}
			}
			frows = append(frows, []string{fmt.Sprint(k + 1), f.Pattern, fmt.Sprint(f.Ngrams), fmt.Sprint(f.Count), strings.Join(dom, "  ")})
		}
		families.setRows(frows)
		var srows [][]string
		for _, sw := range fp.Slots {
			srows = append(srows, []string{fmt.Sprint(sw.Slot + 1), wordScores(sw.Triggers), wordScores(sw.Suppressors)})
		}
		slots.setRows(srows)
		hist.set(histogramPlot(fp))
	}
	list.onSelect = func(row int) { show(row) }
	st.showFilter = func(g int) {
		st.tabs("Filters")
		list.setQuery("")
		query.SetText("")
		list.selectRow(g)
		show(g)
	}
	refresh := func() {
		ps := itemGet(st.profiles)
		if ps == nil {
			list.setRows(nil)
			cur = nil
			title.SetText("Select a filter on the left.")
			ngrams.Objects = nil
			ngrams.Refresh()
			families.setRows(nil)
			slots.setRows(nil)
			hist.set(nil)
			if itemGet(st.model) != nil {
				empty.SetText("Profiling the filters over the training split… (progress in the status bar)")
			}
			return
		}
		au := itemGet(st.audit)
		rows := make([][]string, len(ps.P.Filters))
		for i, fp := range ps.P.Filters {
			thr := "—"
			if !math.IsInf(fp.Threshold, 0) {
				thr = fmt.Sprintf("%.3f", fp.Threshold)
			}
			var top []string
			for _, n := range fp.TopNgrams {
				top = append(top, strings.Join(n.Tokens, " "))
			}
			rows[i] = []string{fmt.Sprint(fp.Filter), fmt.Sprint(fp.Width), fp.Label, fmt.Sprintf("%.3f", fp.Margin),
				au.suspicionOf(fp.Filter), au.cuesOf(fp.Filter), fmt.Sprint(fp.Fired), thr, fmt.Sprintf("%.2f", fp.AbovePurity),
				fmt.Sprint(len(fp.Families)), yesNo(fp.Idle), strings.Join(top, " / ")}
		}
		list.setRows(rows)
		if list.sortCol < 0 {
			list.sortCol, list.desc = 3, true
			list.reorder()
		}
		if len(list.order) > 0 {
			list.table.Select(widget.TableCellID{Row: 0, Col: 0})
		}
	}
	st.profiles.AddListener(binding.NewDataListener(refresh))
	// After an audit the list is ranked by suspicion, the top suspect
	// selected.
	st.audit.AddListener(binding.NewDataListener(func() {
		refresh()
		if itemGet(st.audit) != nil && itemGet(st.profiles) != nil {
			list.sortCol, list.desc = 4, true
			list.reorder()
			if len(list.order) > 0 {
				list.table.UnselectAll()
				list.table.Select(widget.TableCellID{Row: 0, Col: 0})
			}
		}
	}))
	st.app.Settings().AddListener(func(fyne.Settings) {
		if cur != nil {
			hist.set(histogramPlot(cur))
		}
	})
	st.exports["Filters"] = exporter{
		table: func() *sheet { return list },
		data: func() any {
			if ps := itemGet(st.profiles); ps != nil {
				return ps.P
			}
			return nil
		},
	}
	detailTabs := container.NewAppTabs(
		container.NewTabItem("Top n-grams", container.NewVScroll(ngrams)),
		container.NewTabItem("Families", families.table),
		container.NewTabItem("Trigger and suppressor words", slots.table),
	)
	right := container.NewBorder(title, nil, nil, nil, container.NewVSplit(detailTabs, hist.img))
	left := container.NewBorder(query, nil, nil, nil, list.table)
	split := container.NewHSplit(left, right)
	split.Offset = 0.45
	return split
}

func wordScores(ws []explain.WordScore) string {
	var parts []string
	for _, w := range ws {
		parts = append(parts, fmt.Sprintf("%s %+.3f", w.Word, w.Score))
	}
	return strings.Join(parts, ", ")
}

// histogramPlot draws the filter's winning-window activations over the
// fired texts (the profile's own bins), the part from texts assigned the
// filter's class in front, with the purity threshold as a vertical line.
func histogramPlot(fp *explain.FilterProfile) *plot.Plot {
	p := newPlot(fmt.Sprintf("Filter %d: winning-window activations", fp.Filter), "activation", "texts")
	h := fp.Hist
	if len(h.Counts) == 0 || len(h.Edges) < len(h.Counts)+1 {
		return p
	}
	all := &plotter.Histogram{FillColor: seriesColors[3]}
	cls := &plotter.Histogram{FillColor: seriesColors[0]}
	top := 0.0
	for j, c := range h.Counts {
		lo, hi := h.Edges[j], h.Edges[j+1]
		all.Bins = append(all.Bins, plotter.HistogramBin{Min: lo, Max: hi, Weight: float64(c)})
		ic := 0
		if j < len(h.InClass) {
			ic = h.InClass[j]
		}
		cls.Bins = append(cls.Bins, plotter.HistogramBin{Min: lo, Max: hi, Weight: float64(ic)})
		top = math.Max(top, float64(c))
	}
	all.Width, cls.Width = h.Edges[1]-h.Edges[0], h.Edges[1]-h.Edges[0]
	all.LineStyle.Width, cls.LineStyle.Width = 0, 0
	p.Add(all, cls)
	p.Legend.Add("all fired texts", all)
	p.Legend.Add("assigned "+fp.Label, cls)
	if !math.IsInf(fp.Threshold, 0) && !math.IsNaN(fp.Threshold) {
		l, err := plotter.NewLine(plotter.XYs{{X: fp.Threshold, Y: 0}, {X: fp.Threshold, Y: top * 1.05}})
		if err == nil {
			l.Color = seriesColors[1]
			l.Width = vg.Points(2)
			l.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
			p.Add(l)
			p.Legend.Add(fmt.Sprintf("purity threshold %.3f", fp.Threshold), l)
		}
	}
	return p
}

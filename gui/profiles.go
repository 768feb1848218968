package gui

import (
	"context"
	"fmt"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"telltale/explain"
	"telltale/internal/wording"
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
	st.setStatus("Profiling the filters over the training split…")
	st.start(taskProfile, true, func(ctx context.Context, report reporter) (func(), error) {
		d, err := encode(ms.Enc, cs.Train, ms.Model.Labels)
		if err != nil {
			return then, fmt.Errorf("the training split does not fit this model: %w", err)
		}
		p, err := explain.Profile(ctx, ms.Model, d.IDs, d.Labels, explain.ProfileOptions{
			Table: ms.Table,
			Progress: func(done, total int) {
				report(done, total, fmt.Sprintf("Profiling the filters: %d of %s", done, wording.Texts(total)))
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
			st.setStatus(fmt.Sprintf("Profiled %d filters over %s.", len(p.Filters), wording.Texts(p.Texts)))
			then()
		}, nil
	})
}

// thresholdText writes a selectivity threshold with the window's one
// precision.
func thresholdText(t float64) string {
	if math.IsInf(t, 0) || math.IsNaN(t) {
		return "—"
	}
	return fmt.Sprintf("%.3f", t)
}

// rateText writes a share in [0, 1] ("—" when there is none).
func rateText(r float64) string {
	if math.IsNaN(r) {
		return "—"
	}
	return fmt.Sprintf("%.3f", r)
}

// pText writes a p-value with two significant digits ("—" when there is
// no test).
func pText(p float64) string {
	if math.IsNaN(p) {
		return "—"
	}
	return fmt.Sprintf("%.2g", p)
}

// histogramPlot draws the filter's winning-window activations over the
// fired texts (the profile's own bins), the part from texts assigned the
// filter's class in front, with the selectivity threshold as a vertical
// line, in log-odds units.
func histogramPlot(fp *explain.FilterProfile) *plot.Plot {
	p := newPlot(fmt.Sprintf("Filter %d: winning-window activations", fp.Filter), "activation (log-odds)", "texts")
	h := fp.Hist
	edges := h.EdgesLogOdds
	// A dead filter's edges are all 0 in log-odds units: nothing to draw.
	if len(h.Counts) == 0 || len(edges) < len(h.Counts)+1 || !(edges[len(h.Counts)] > edges[0]) {
		return p
	}
	all := &plotter.Histogram{FillColor: seriesColors[3]}
	cls := &plotter.Histogram{FillColor: seriesColors[0]}
	top := 0.0
	for j, c := range h.Counts {
		lo, hi := edges[j], edges[j+1]
		all.Bins = append(all.Bins, plotter.HistogramBin{Min: lo, Max: hi, Weight: float64(c)})
		ic := 0
		if j < len(h.InClass) {
			ic = h.InClass[j]
		}
		cls.Bins = append(cls.Bins, plotter.HistogramBin{Min: lo, Max: hi, Weight: float64(ic)})
		top = math.Max(top, float64(c))
	}
	all.Width, cls.Width = edges[1]-edges[0], edges[1]-edges[0]
	all.LineStyle.Width, cls.LineStyle.Width = 0, 0
	p.Add(all, cls)
	p.Legend.Add("all fired texts", all)
	p.Legend.Add("assigned "+fp.Label, cls)
	if thr := fp.Selectivity.ThresholdLogOdds; !math.IsInf(thr, 0) && !math.IsNaN(thr) {
		l, err := plotter.NewLine(plotter.XYs{{X: thr, Y: 0}, {X: thr, Y: top * 1.05}})
		if err == nil {
			l.Color = seriesColors[1]
			l.Width = vg.Points(2)
			l.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
			p.Add(l)
			p.Legend.Add("selectivity threshold "+thresholdText(thr), l)
		}
	}
	p.Y.Tick.Marker = countTicks{}
	// Above the bars: the highest may stand at either end.
	legendAbove(p)
	return p
}

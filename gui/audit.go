package gui

import (
	"context"
	"errors"
	"fmt"
	"sort"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/data/binding"
	"fyne.io/fyne/v2/widget"

	"telltale/cnn"
)

// auditState is the result of the cue audit of the open model.
type auditState struct{}

// suspicionOf is filter g's audit score as shown in lists, "—" without an
// audit.
func (a *auditState) suspicionOf(g int) string {
	return "—"
}

// flaggedTokenRows lists the tokens the audit flagged.
func flaggedTokenRows(a *auditState) [][]string { return nil }

// maskState is the masked copy of the open model and its held-out result.
type maskState struct {
	Filters []int // masked filters, ascending
	Model   *cnn.Model
	Eval    *evaluation
}

// auditNow runs the cue audit.
func (st *State) auditNow() {
	st.tabs("Cue audit")
}

// applyMask evaluates a copy of the open model with filters masked, in the
// background, and shows the before/after metrics.
func (st *State) applyMask(filters []int, done func(*maskState)) {
	ms, cs := itemGet(st.model), itemGet(st.data)
	if ms == nil || cs == nil {
		st.showError(errors.New("masking needs a model and its data: train or open a model first"))
		return
	}
	filters = append([]int(nil), filters...)
	sort.Ints(filters)
	_ = st.status.Set(fmt.Sprintf("Evaluating the model with %d filters masked…", len(filters)))
	st.start(taskMask, true, func(ctx context.Context, report reporter) (func(), error) {
		m := ms.Model.Clone()
		m.Masked = make([]bool, m.Config.NumFilters())
		for _, g := range filters {
			m.Masked[g] = true
		}
		masked := &modelState{Model: m, Tok: ms.Tok, Vocab: ms.Vocab}
		ev, err := evaluate(masked, cs)
		if err != nil {
			return nil, err
		}
		mk := &maskState{Filters: filters, Model: m, Eval: ev}
		return func() {
			if itemGet(st.model) != ms {
				return
			}
			_ = st.status.Set(fmt.Sprintf("With %d filters masked: held-out accuracy %.3f (was %.3f), macro-F1 %.3f (was %.3f).",
				len(filters), ev.Metrics.Accuracy, ms.Eval.Metrics.Accuracy, ev.Metrics.MacroF1, ms.Eval.Metrics.MacroF1))
			done(mk)
		}, nil
	})
}

// auditView: suspects, masking and the before/after comparison.
func auditView(st *State) fyne.CanvasObject {
	note := widget.NewLabel("Tick filters to mask them; the held-out metrics of the masked model appear beside the original's.")
	note.Wrapping = fyne.TextWrapWord
	ticked := map[int]bool{}
	var filterIDs []int
	checks := widget.NewList(func() int { return len(filterIDs) },
		func() fyne.CanvasObject { return widget.NewCheck("", nil) },
		func(i widget.ListItemID, o fyne.CanvasObject) {
			c := o.(*widget.Check)
			g := filterIDs[i]
			c.OnChanged = nil
			c.SetChecked(ticked[g])
			label := fmt.Sprintf("filter %d", g)
			if ps := itemGet(st.profiles); ps != nil && g < len(ps.P.Filters) {
				fp := ps.P.Filters[g]
				var top string
				if len(fp.TopNgrams) > 0 {
					top = fmt.Sprint(fp.TopNgrams[0].Tokens)
				}
				label = fmt.Sprintf("filter %d · w%d · %s · %s", g, fp.Width, fp.Label, top)
			}
			c.Text = label
			c.Refresh()
			c.OnChanged = func(b bool) { ticked[g] = b }
		})
	compare := newSheet([]string{"measure", "original", "masked", "change"}, []float32{200, 90, 90, 90})
	var mask *maskState
	st.maskShown = func() *maskState { return mask }
	apply := widget.NewButton("Mask ticked filters", nil)
	apply.Importance = widget.HighImportance
	save := widget.NewButton("Save masked model…", func() {
		if mask == nil {
			return
		}
		m := mask.Model
		st.saveDialog("telltale-masked.tt", func(path string) error { return m.Save(path) })
	})
	save.Disable()
	st.maskTicks = func(gs []int) {
		for k := range ticked {
			delete(ticked, k)
		}
		for _, g := range gs {
			ticked[g] = true
		}
		checks.Refresh()
	}
	apply.OnTapped = func() {
		var gs []int
		for g, b := range ticked {
			if b {
				gs = append(gs, g)
			}
		}
		st.applyMask(gs, func(mk *maskState) {
			mask = mk
			save.Enable()
			ms := itemGet(st.model)
			compare.setRows(compareRows(ms.Eval.Metrics, mk.Eval.Metrics))
			note.SetText(fmt.Sprintf("Masked filters %v.", mk.Filters))
		})
	}
	st.maskApply = apply
	st.model.AddListener(binding.NewDataListener(func() {
		for k := range ticked {
			delete(ticked, k)
		}
		mask = nil
		save.Disable()
		compare.setRows(nil)
		filterIDs = nil
		if ms := itemGet(st.model); ms != nil {
			for g := range ms.Model.Config.NumFilters() {
				filterIDs = append(filterIDs, g)
			}
		}
		checks.Refresh()
	}))
	st.profiles.AddListener(binding.NewDataListener(checks.Refresh))
	st.exports["Cue audit"] = exporter{
		table: func() *sheet { return compare },
		data: func() any {
			if mask != nil {
				return struct {
					Masked   []int       `json:"masked"`
					Original cnn.Metrics `json:"original"`
					After    cnn.Metrics `json:"after"`
				}{mask.Filters, itemGet(st.model).Eval.Metrics, mask.Eval.Metrics}
			}
			return nil
		},
	}
	left := container.NewBorder(widget.NewLabelWithStyle("Filters", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}), nil, nil, nil, checks)
	right := container.NewBorder(container.NewVBox(note, container.NewHBox(apply, save)), nil, nil, nil, compare.table)
	split := container.NewHSplit(left, right)
	split.Offset = 0.45
	return split
}

// compareRows lays the original and masked metrics side by side.
func compareRows(a, b cnn.Metrics) [][]string {
	row := func(name string, x, y float64) []string {
		return []string{name, fmt.Sprintf("%.4f", x), fmt.Sprintf("%.4f", y), fmt.Sprintf("%+.4f", y-x)}
	}
	rows := [][]string{
		row("accuracy", a.Accuracy, b.Accuracy),
		row("macro-F1", a.MacroF1, b.MacroF1),
		row("weighted F1", a.WeightedF1, b.WeightedF1),
		row("calibration error", a.ECE, b.ECE),
	}
	for i := range a.PerClass {
		if i < len(b.PerClass) {
			rows = append(rows, row("F1 of "+a.PerClass[i].Label, a.PerClass[i].F1, b.PerClass[i].F1))
		}
	}
	return rows
}

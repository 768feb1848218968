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

	"telltale/explain"
)

// Attribution methods of the explain view.
const (
	methodExact     = "Exact shares"
	methodOcclusion = "Occlusion"
	methodIG        = "Integrated gradients"
)

// classPredicted is the class choice that follows the prediction.
const classPredicted = "(predicted label)"

// explainState is the explanation on screen.
type explainState struct {
	Text string
	E    *explain.Explanation
}

// explainThis sends text to the explain view and shows it.
func (st *State) explainThis(text string) {
	_ = st.explainText.Set(text)
	st.tabs("Why this label")
}

// runExplain explains text with the open model in the background.
func (st *State) runExplain(text string, done func(*explainState)) {
	ms := itemGet(st.model)
	if ms == nil || strings.TrimSpace(text) == "" {
		st.cancel(taskExplain)
		done(nil)
		return
	}
	var prof *explain.Profiles
	if ps := itemGet(st.profiles); ps != nil {
		prof = ps.P
	}
	st.start(taskExplain, false, func(ctx context.Context, _ reporter) (func(), error) {
		toks, ids := ms.Enc.Encode(text)
		if len(toks) == 0 {
			return func() { done(&explainState{Text: text}) }, nil
		}
		e, err := explain.Explain(ms.Model, toks, ids, explain.ExplainOptions{
			Table: ms.Table, Profiles: prof, Occlusion: true, IG: true,
		})
		if err != nil {
			return nil, err
		}
		return func() { done(&explainState{Text: text, E: e}) }, nil
	})
}

// tokenValues returns the painted value of every token for the method and
// class, and a sentence naming what it is.
func tokenValues(e *explain.Explanation, method string, class int) ([]float64, string) {
	n := len(e.Tokens)
	v := make([]float64, n)
	switch method {
	case methodOcclusion:
		copy(v, e.Attributions.Occlusion)
		return v, fmt.Sprintf("drop in p(%s) when the token is replaced by padding", e.Label)
	case methodIG:
		for i := range n {
			if i < len(e.Attributions.IG) {
				v[i] = e.Attributions.IG[i][class]
			}
		}
		return v, fmt.Sprintf("integrated gradients (%d steps) on the logit of %s", e.Attributions.IGSteps, e.Labels[class])
	default:
		for i := range n {
			v[i] = e.Attributions.Exact[i][class]
		}
		return v, fmt.Sprintf("exact share of the logit of %s", e.Labels[class])
	}
}

// explainView is the text box, the prediction and the painted text.
func explainView(st *State) fyne.CanvasObject {
	caution := widget.NewLabelWithStyle(cautionShort, fyne.TextAlignLeading, fyne.TextStyle{Italic: true})
	caution.Wrapping = fyne.TextWrapWord
	entry := widget.NewEntryWithData(st.explainText)
	entry.MultiLine = true
	entry.Wrapping = fyne.TextWrapWord
	entry.SetMinRowsVisible(3)
	st.explainEntry = entry
	entry.SetPlaceHolder("Type or paste a text; the explanation follows as you type.")
	method := widget.NewRadioGroup([]string{methodExact, methodOcclusion, methodIG}, func(s string) { _ = st.explainMethod.Set(s) })
	method.Horizontal = true
	method.SetSelected(stringGet(st.explainMethod))
	class := widget.NewSelect([]string{classPredicted}, func(s string) { _ = st.explainClass.Set(s) })
	class.SetSelected(classPredicted)
	nextBtn := widget.NewButton("Next held-out text", nil)

	verdict := widget.NewLabelWithStyle("Train or open a model first; then type a text here.", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	verdict.Wrapping = fyne.TextWrapWord
	probs := container.NewVBox()
	painted := container.New(layout.NewRowWrapLayoutWithCustomPadding(2, 4))
	legend := container.NewStack()
	what := widget.NewLabel("")
	what.Wrapping = fyne.TextWrapWord
	detail := widget.NewLabel("Tap a token for its numbers.")
	detail.Wrapping = fyne.TextWrapWord
	fired := newSheet([]string{"filter", "width", "window", "activation", "family", "to logit"}, []float32{52, 52, 190, 86, 60, 80})

	var cur *explainState
	st.explainShown = func() *explainState { return cur }
	st.explainChips = func() []*heatCell {
		var cs []*heatCell
		for _, o := range painted.Objects {
			if c, ok := o.(*heatCell); ok {
				cs = append(cs, c)
			}
		}
		return cs
	}
	chosen := func(e *explain.Explanation) int {
		c := stringGet(st.explainClass)
		for i, l := range e.Labels {
			if l == c {
				return i
			}
		}
		return e.Class
	}
	var firedRows []explain.FiredFilter
	fired.onSelect = func(row int) {
		if row < len(firedRows) {
			st.showFilter(firedRows[row].Filter)
		}
	}
	paint := func() {
		// A fresh layout each time: the row-wrap layout caches its size.
		painted.Layout = layout.NewRowWrapLayoutWithCustomPadding(2, 4)
		painted.Objects = nil
		probs.Objects = nil
		if cur == nil || cur.E == nil {
			if cur != nil {
				verdict.SetText("No known tokens in this text.")
			} else if itemGet(st.model) == nil {
				verdict.SetText("Train or open a model first; then type a text here.")
			} else {
				verdict.SetText("Type a text above.")
			}
			legend.Objects = nil
			what.SetText("")
			fired.setRows(nil)
			painted.Refresh()
			probs.Refresh()
			legend.Refresh()
			return
		}
		e := cur.E
		c := chosen(e)
		verdict.SetText(fmt.Sprintf("Predicted: %s (p = %.3f).   Logit of %s = %.4f = bias %.4f + sum of token shares.",
			e.Label, e.Probabilities[e.Class], e.Labels[c], e.Logits[c], e.Bias[c]))
		for i, l := range e.Labels {
			b := widget.NewProgressBar()
			b.SetValue(e.Probabilities[i])
			b.TextFormatter = func() string { return fmt.Sprintf("%.3f", e.Probabilities[i]) }
			name := widget.NewLabel(l)
			probs.Add(container.NewBorder(nil, nil, container.NewGridWrap(fyne.NewSize(150, name.MinSize().Height), name), nil, b))
		}
		m := stringGet(st.explainMethod)
		vals, desc := tokenValues(e, m, c)
		scale := 0.0
		for _, v := range vals {
			scale = math.Max(scale, math.Abs(v))
		}
		for i, t := range e.Tokens {
			i, t := i, t
			label := cur.Text[t.Start:t.End]
			if t.End <= t.Start {
				label = t.Text
			}
			chip := newHeatCell(label, divergingColor(vals[i], scale), nil)
			chip.value = vals[i]
			chip.compact = true
			chip.onTap = func() { detail.SetText(tokenDetail(e, i, c)) }
			chip.onHover = chip.onTap
			painted.Add(chip)
		}
		what.SetText("Colour: " + desc + ". Purple raises it, orange lowers it.")
		legend.Objects = []fyne.CanvasObject{heatLegend(scale, "lowers", "raises")}
		firedRows = e.Filters
		var rows [][]string
		for _, f := range e.Filters {
			var win []string
			for k := f.Start; k < f.Start+f.Width && k < len(e.Tokens); k++ {
				win = append(win, e.Tokens[k].Text)
			}
			fam := "—"
			if f.Family >= 0 {
				fam = fmt.Sprint(f.Family + 1)
			}
			rows = append(rows, []string{fmt.Sprint(f.Filter), fmt.Sprint(f.Width), strings.Join(win, " "),
				fmt.Sprintf("%.4f", f.Activation), fam, fmt.Sprintf("%+.4f", f.Contribution[c])})
		}
		fired.setRows(rows)
		fired.sortCol, fired.desc = 5, true
		fired.reorder()
		painted.Refresh()
		probs.Refresh()
		legend.Refresh()
	}
	update := func() {
		text := stringGet(st.explainText)
		st.runExplain(text, func(es *explainState) {
			if stringGet(st.explainText) != text {
				return
			}
			cur = es
			detail.SetText("Tap a token for its numbers.")
			paint()
		})
	}
	st.explainText.AddListener(binding.NewDataListener(update))
	st.explainMethod.AddListener(binding.NewDataListener(paint))
	st.explainClass.AddListener(binding.NewDataListener(paint))
	next := 0
	nextBtn.OnTapped = func() {
		cs := itemGet(st.data)
		if cs == nil || len(cs.Test.Examples) == 0 {
			return
		}
		_ = st.explainText.Set(cs.Test.Examples[next%len(cs.Test.Examples)].Text)
		next++
	}
	st.model.AddListener(binding.NewDataListener(func() {
		ms := itemGet(st.model)
		if ms == nil {
			return
		}
		class.SetOptions(append([]string{classPredicted}, ms.Model.Labels...))
		if stringGet(st.explainText) == "" {
			if cs := itemGet(st.data); cs != nil && len(cs.Test.Examples) > 0 {
				_ = st.explainText.Set(cs.Test.Examples[0].Text)
				next = 1
				return
			}
		}
		update()
	}))
	st.profiles.AddListener(binding.NewDataListener(update))
	st.app.Settings().AddListener(func(fyne.Settings) { paint() })
	st.exports["Why this label"] = exporter{
		table: func() *sheet { return fired },
		data: func() any {
			if cur != nil && cur.E != nil {
				return cur.E
			}
			return nil
		},
	}

	controls := container.NewHBox(widget.NewLabel("Paint by"), method, widget.NewLabel("for class"),
		// Wide enough for "(predicted label)": a select sizes itself by its placeholder.
		container.NewGridWrap(fyne.NewSize(200, class.MinSize().Height), class), layout.NewSpacer(), nextBtn)
	top := container.NewVBox(caution, entry, controls, verdict)
	left := container.NewBorder(nil, container.NewVBox(legend, what, detail), nil, nil, container.NewVScroll(painted))
	right := container.NewBorder(container.NewVBox(widget.NewLabelWithStyle("Probabilities", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}), probs,
		widget.NewLabelWithStyle("Filters that fired (tap one to see it in Filters)", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})), nil, nil, nil, fired.table)
	split := container.NewHSplit(left, right)
	split.Offset = 0.55
	return container.NewBorder(top, nil, nil, nil, split)
}

// tokenDetail lists every number of token i.
func tokenDetail(e *explain.Explanation, i, class int) string {
	t := e.Tokens[i]
	var b strings.Builder
	fmt.Fprintf(&b, "Token %d %q (vocabulary id %d, bytes %d–%d).  Exact share of the logit of %s: %+.5f",
		i+1, t.Text, t.ID, t.Start, t.End, e.Labels[class], e.Attributions.Exact[i][class])
	if i < len(e.Attributions.Occlusion) {
		fmt.Fprintf(&b, "; occlusion: p(%s) drops by %+.5f (log %+.5f)", e.Label, e.Attributions.Occlusion[i], e.Attributions.OcclusionLog[i])
	}
	if i < len(e.Attributions.IG) {
		fmt.Fprintf(&b, "; integrated gradients: %+.5f", e.Attributions.IG[i][class])
	}
	b.WriteString(".")
	return b.String()
}

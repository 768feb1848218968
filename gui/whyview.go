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

// Attribution methods of the explanation view.
const (
	methodExact     = "Exact shares"
	methodOcclusion = "Occlusion"
	methodIG        = "Integrated gradients"
)

// classPredicted is the class choice that follows the prediction.
const classPredicted = "the predicted label"

// whyView is the text box, the verdict with the ranked class
// probabilities, the painted text and the filters that fired. The painted
// values come from explain.Explain; a later version of explain with other
// shares slots in at tokenValues.
type whyView struct {
	st *State

	caution, caption, verdict, what, detail *widget.Label
	entry                                   *widget.Entry
	method, class                           *choice
	next                                    *widget.Button
	strip                                   *rankStrip
	painted, legend                         *fyne.Container
	fired                                   *sheet
	firedRows                               []explain.FiredFilter
	shown                                   *explainState // the explanation on screen
	nextText                                int           // the test text Next shows
	body                                    fyne.CanvasObject
}

// explainState is an explanation on screen.
type explainState struct {
	Text string
	E    *explain.Explanation // nil when no token of the text is known
}

func newWhyView(st *State) *whyView {
	v := &whyView{st: st}
	v.caution = widget.NewLabelWithStyle(cautionShort, fyne.TextAlignLeading, fyne.TextStyle{Italic: true})
	v.caution.Wrapping = fyne.TextWrapWord
	v.caption = wrapped("")
	v.entry = widget.NewEntryWithData(st.explainText)
	v.entry.MultiLine = true
	v.entry.Wrapping = fyne.TextWrapWord
	v.entry.SetMinRowsVisible(3)
	v.entry.SetPlaceHolder("Type or paste a text; the explanation follows as you type.")
	v.method = newChoice([]string{methodExact, methodOcclusion, methodIG}, func(string) { v.paint() })
	v.method.SetSelected(methodExact)
	v.class = newChoice([]string{classPredicted}, func(string) { v.paint() })
	v.class.SetSelected(classPredicted)
	v.next = widget.NewButton("Next test text", v.nextTestText)
	v.verdict = wrapped("")
	v.verdict.TextStyle.Bold = true
	v.strip = newRankStrip()
	v.painted = container.New(layout.NewRowWrapLayoutWithCustomPadding(2, 4))
	v.legend = container.NewStack()
	v.what = wrapped("")
	v.detail = wrapped("")
	v.fired = newSheet("filter", "adds to the logit", "activation", "width", "family", "window").wide(5, 260)
	v.fired.onSelect = func(row int) {
		if row < len(v.firedRows) {
			st.showFilter(v.firedRows[row].Filter, v.fired)
		}
	}
	v.body = v.layout()
	listen(v.update, st.explainText, st.profiles)
	listen(v.modelChanged, st.model)
	st.app.Settings().AddListener(func(fyne.Settings) { v.paint() })
	return v
}

func (v *whyView) layout() fyne.CanvasObject {
	controls := container.NewHBox(widget.NewLabel("Paint by"), v.method.box, widget.NewLabel("for"), v.class.box, layout.NewSpacer(), v.next)
	top := container.NewVBox(v.caution, v.caption, v.entry, container.NewHScroll(controls), v.verdict, v.strip)
	left := container.NewBorder(nil, container.NewVBox(v.legend, v.what, v.detail), nil, nil, container.NewVScroll(v.painted))
	right := container.NewBorder(bold("Filters that fired (click one to see it in Filters)"), nil, nil, nil, v.fired.view())
	split := container.NewHSplit(left, right)
	split.Offset = 0.55
	return container.NewBorder(top, nil, nil, nil, split)
}

func (v *whyView) content() fyne.CanvasObject { return v.body }
func (v *whyView) exportTable() *sheet        { return v.fired }
func (v *whyView) focusInput()                { v.st.win.Canvas().Focus(v.entry) }

func (v *whyView) exportData() any {
	if v.shown != nil && v.shown.E != nil {
		return v.shown.E
	}
	return nil
}

// explainThis sends text to the explanation view and shows it, from a row
// of sheet from (nil: from elsewhere).
func (st *State) explainThis(text string, from *sheet) {
	_ = st.explainText.Set(text)
	st.showFrom(from, titleWhy)
}

// nextTestText puts the next text of the test split in the box.
func (v *whyView) nextTestText() {
	cs := itemGet(v.st.data)
	if cs == nil || len(cs.Test.Examples) == 0 {
		return
	}
	_ = v.st.explainText.Set(cs.Test.Examples[v.nextText%len(cs.Test.Examples)].Text)
	v.nextText++
}

// modelChanged offers the new model's classes and explains the text again;
// with an empty box it starts on the first test text.
func (v *whyView) modelChanged() {
	ms := itemGet(v.st.model)
	v.caption.SetText(ms.caption())
	if ms == nil {
		v.next.Disable()
		v.paint()
		return
	}
	v.next.Enable()
	v.class.setOptions(append([]string{classPredicted}, ms.Model.Labels...))
	if stringGet(v.st.explainText) == "" {
		if cs := itemGet(v.st.data); cs != nil && len(cs.Test.Examples) > 0 {
			v.nextText = 0
			v.nextTestText()
			return
		}
	}
	v.update()
}

// update explains the box's text in the background (one explanation at a
// time; typing fast skips the texts typed meanwhile).
func (v *whyView) update() {
	text := stringGet(v.st.explainText)
	v.st.runExplain(text, func(es *explainState) {
		if stringGet(v.st.explainText) != text {
			return
		}
		v.shown = es
		v.detail.SetText("Click a token for its numbers.")
		v.paint()
	})
}

// chosenClass is the class the view paints.
func (v *whyView) chosenClass(e *explain.Explanation) int {
	for i, l := range e.Labels {
		if l == v.class.Selected {
			return i
		}
	}
	return e.Class
}

// paint draws the shown explanation, or says why there is none.
func (v *whyView) paint() {
	if v.verdict == nil {
		return // still being built
	}
	// A fresh layout each time: the row-wrap layout caches its size.
	v.painted.Layout = layout.NewRowWrapLayoutWithCustomPadding(2, 4)
	v.painted.Objects = nil
	v.legend.Objects = nil
	if v.shown == nil || v.shown.E == nil {
		v.paintNothing()
		return
	}
	e := v.shown.E
	c := v.chosenClass(e)
	v.verdict.SetText(fmt.Sprintf("Predicted: %s, p = %.3f.   Logit of %s = %.4f = bias part %.4f + the sum of the token shares.",
		e.Label, e.Probabilities[e.Class], e.Labels[c], e.Logits[c], e.Bias[c]))
	v.strip.set(e.Labels, e.Probabilities)
	v.strip.Show()
	vals, desc := tokenValues(e, v.method.Selected, c)
	scale := 0.0
	for _, x := range vals {
		scale = math.Max(scale, math.Abs(x))
	}
	for i, t := range e.Tokens {
		label := t.Text
		if t.End > t.Start && t.End <= len(v.shown.Text) {
			label = v.shown.Text[t.Start:t.End]
		}
		chip := newHeatCell(label, divergingColor(vals[i], scale), nil)
		chip.value, chip.compact = vals[i], true
		chip.onTap = func() { v.detail.SetText(tokenDetail(e, i, c)) }
		chip.onHover = chip.onTap
		v.painted.Add(chip)
	}
	v.what.SetText("Colour: " + desc + ". Purple raises it, orange lowers it.")
	v.legend.Objects = []fyne.CanvasObject{heatLegend(scale, "lowers", "raises")}
	v.fillFired(e, c)
	v.painted.Refresh()
	v.legend.Refresh()
}

// paintNothing clears the view and says what to do.
func (v *whyView) paintNothing() {
	switch {
	case itemGet(v.st.model) == nil:
		v.verdict.SetText("No model yet: train one (Training view) or open one (File › Open model); then type a text above.")
	case v.shown != nil:
		v.verdict.SetText("None of this text's words is in the model's vocabulary: there is nothing to explain.")
	default:
		v.verdict.SetText("Type a text above, or press Next test text.")
	}
	v.strip.Hide()
	v.what.SetText("")
	v.detail.SetText("")
	v.firedRows = nil
	v.fired.setRows(nil)
	v.painted.Refresh()
	v.legend.Refresh()
}

// fillFired lists the filters that fired, largest part of class c's logit
// first.
func (v *whyView) fillFired(e *explain.Explanation, c int) {
	v.firedRows = e.Filters
	var rows [][]string
	for _, f := range e.Filters {
		var win []string
		for k := f.Start; k < f.Start+f.Width && k < len(e.Tokens); k++ {
			win = append(win, e.Tokens[k].Text)
		}
		fam := "—"
		if f.Family >= 0 {
			fam = fmt.Sprint(f.Family)
		}
		rows = append(rows, []string{fmt.Sprint(f.Filter), fmt.Sprintf("%+.4f", f.Contribution[c]), fmt.Sprintf("%.4f", f.Activation),
			fmt.Sprint(f.Width), fam, strings.Join(win, " ")})
	}
	v.fired.setRows(rows)
	v.fired.sortOn(1, true)
}

// chips returns the painted tokens, in order.
func (v *whyView) chips() []*heatCell {
	var cs []*heatCell
	for _, o := range v.painted.Objects {
		if c, ok := o.(*heatCell); ok {
			cs = append(cs, c)
		}
	}
	return cs
}

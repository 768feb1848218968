package gui

import (
	"fmt"
	"math"
	"slices"
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

// classPredicted is the class choice that splits the log-odds of the
// predicted label against the runner-up; the other choices are labels,
// whose centred logits are split.
const classPredicted = "the predicted label against the runner-up"

// whyView is the text box, the verdict with the ranked class
// probabilities, the painted text, the filters that fired and the windows
// kept down. Every number is an identified one of explain.Explain: the
// split of the log-odds of the predicted label against the runner-up, or
// of a label's centred logit.
type whyView struct {
	st *State

	caution, caption, verdict, what, detail *widget.Label
	keptNote                                *widget.Label // what the kept-down table's columns mean for the model
	entry                                   *widget.Entry
	method, class                           *choice
	next                                    *widget.Button
	strip                                   *rankStrip
	painted, legend                         *fyne.Container
	fired, kept                             *sheet
	firedRows                               []explain.FiredFilter
	keptRows                                []explain.KeptDownWindow
	shown                                   *explainState // the explanation on screen
	asked, answered                         explainAsk    // the explanation last started, and the one on screen
	nextText                                int           // the test text Next shows
	body                                    fyne.CanvasObject
}

// Columns of the fired-filter sheet; the second names the quantity split.
var firedCols = []string{"filter", "window", "part of the log-odds", "of it, bias", "activation (log-odds)", "width", "family"}

const colFiredPart = 2

// explainState is an explanation on screen.
type explainState struct {
	Text string
	E    *explain.Explanation // nil when no token of the text is known
	// Known is the size of the model's vocabulary: a token id from it on
	// is an unseen word read from its characters (cnn.Model.WithUnseen).
	Known int
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
	v.fired = newSheet(slices.Clone(firedCols)...).wide(1, capDefault)
	v.fired.onSelect = func(row int) {
		if row < len(v.firedRows) {
			st.showFilter(v.firedRows[row].Filter, v.fired)
		}
	}
	v.kept = newSheet("filter", "window", "estimate", "this filter", "other filters", "word weights", "whole", "p falls by", "width").wide(1, capDefault)
	v.kept.onSelect = func(row int) {
		if row < len(v.keptRows) {
			st.showFilter(v.keptRows[row].Filter, v.kept)
		}
	}
	v.body = v.layout()
	listen(v.update, st.explainText, st.profiles)
	listen(v.modelChanged, st.model)
	st.app.Settings().AddListener(func(fyne.Settings) { v.paint() })
	return v
}

// keptCaption explains the kept-down table; with word weights (wide) the
// measured change has a part from the removed words' weights too.
func keptCaption(wide bool) string {
	s := "Each window would have won its filter but for the [tokens] in brackets: " +
		"the change of the log-odds estimated had it won, then measured with them replaced by padding, " +
		"the whole change split exactly into this filter's part (the estimate's quantity), the other filters'"
	if wide {
		return s + " and those tokens' word weights'."
	}
	return s + "."
}

func (v *whyView) layout() fyne.CanvasObject {
	controls := container.NewHBox(widget.NewLabel("Paint by"), v.method.box, widget.NewLabel("for"), v.class.box, layout.NewSpacer(), v.next)
	top := container.NewVBox(v.caution, v.caption, v.entry, container.NewHScroll(controls), v.verdict, v.strip)
	left := container.NewBorder(nil, container.NewVBox(v.legend, v.what, v.detail), nil, nil, container.NewVScroll(v.painted))
	firedTab := container.NewBorder(wrapped("Click a filter to see it in Filters."), v.fired.detail, nil, nil, v.fired.view())
	v.keptNote = wrapped(keptCaption(false))
	keptTab := container.NewBorder(v.keptNote, v.kept.detail, nil, nil, v.kept.view())
	right := container.NewAppTabs(container.NewTabItem("Filters that fired", firedTab), container.NewTabItem("Windows kept down", keptTab))
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
// of sheet from (nil: from elsewhere). The new text is painted for its
// predicted label, not for a label chosen for the text before it.
func (st *State) explainThis(text string, from *sheet) {
	if v := st.whyView; v != nil && v.class.Selected != classPredicted {
		v.class.SetSelected(classPredicted)
	}
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
	if v.keptNote != nil {
		v.keptNote.SetText(keptCaption(ms != nil && ms.Model.Config.Wide))
	}
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

// explainAsk is what an explanation is of: a text, read by a model with
// its filter profiles.
type explainAsk struct {
	text     string
	model    *modelState
	profiles *profileState
}

// update explains the box's text in the background (one explanation at a
// time; typing fast skips the texts typed meanwhile). A notice for what is
// on screen, or for what is being explained or waits to be shown, does
// nothing: the box's notices wait their turn on the UI goroutine and each
// reads the latest text, so typing leaves a trail of notices for one text,
// and each restart would make that text wait for one more explanation (or
// drop one that is done and queued to be shown).
func (v *whyView) update() {
	text := stringGet(v.st.explainText)
	ask := explainAsk{text, itemGet(v.st.model), itemGet(v.st.profiles)}
	if ask.model != nil && strings.TrimSpace(text) != "" {
		if ask == v.answered {
			v.st.cancel(taskExplain) // a text typed since, and taken back
			v.asked = ask
			return
		}
		if ask == v.asked && !v.st.tasks.settled(taskExplain) {
			return
		}
	}
	v.asked = ask
	v.st.runExplain(text, func(es *explainState) {
		if stringGet(v.st.explainText) != text {
			return
		}
		v.shown, v.answered = es, ask
		v.detail.SetText("Click a token for its numbers.")
		v.paint()
	})
}

// chosenClass is the class whose centred logit the view paints, or −1 for
// the log-odds of the predicted label against the runner-up.
func (v *whyView) chosenClass(e *explain.Explanation) int {
	for i, l := range e.Labels {
		if l == v.class.Selected {
			return i
		}
	}
	return -1
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
	v.verdict.SetText(verdict(e, c))
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
		chip.onTap = func() { v.detail.SetText(tokenDetail(e, i, c, v.shown.Known)) }
		chip.onHover = chip.onTap
		v.painted.Add(chip)
	}
	v.what.SetText("Colour: " + desc + ". Purple raises it, orange lowers it.")
	v.legend.Objects = []fyne.CanvasObject{heatLegend(scale, "lowers", "raises")}
	v.fillFired(e, c)
	v.fillKept(e)
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
	v.firedRows, v.keptRows = nil, nil
	v.fired.setRows(nil)
	v.kept.setRows(nil)
	v.painted.Refresh()
	v.legend.Refresh()
}

// verdict is the line under the text box: the prediction, the runner-up,
// and the exact split of the quantity painted (class −1: the log-odds); on
// a model with the wide path it names the unknown word's weight in the
// output bias and the word weights in the token shares.
func verdict(e *explain.Explanation, class int) string {
	sh := sharesFor(e, class)
	var fb, tok float64
	for _, x := range sh.FilterBias {
		fb += x
	}
	for _, x := range sh.Tokens {
		tok += x
	}
	name := quantityName(e, class)
	if class >= 0 {
		name = "Centred logit of " + e.Labels[class]
	}
	bias, words := "output bias", ""
	if sh.Words != nil { // a model with the wide path: its parts named
		var ww float64
		for _, x := range sh.Words {
			ww += x
		}
		bias, words = "output bias with the unknown word's weight", " (word weights "+signed4(ww)+")"
	}
	return fmt.Sprintf("Predicted: %s, p = %.3f; runner-up %s, p = %.3f.   %s = %.4f = %s %s + filter biases %s + token shares %s%s.",
		e.Label, e.Probabilities[e.Class], e.Labels[e.RunnerUp], e.Probabilities[e.RunnerUp],
		name, sh.Value, bias, signed4(sh.OutputBias), signed4(fb), signed4(tok), words)
}

// signed4 writes x with its sign and four decimals, zero without a minus.
func signed4(x float64) string {
	s := fmt.Sprintf("%+.4f", x)
	if s == "-0.0000" {
		return "+0.0000"
	}
	return s
}

// fillFired lists the filters that fired, largest part of the quantity
// painted (class −1: the log-odds) first.
func (v *whyView) fillFired(e *explain.Explanation, c int) {
	v.firedRows = e.Filters
	sh := sharesFor(e, c)
	if c < 0 {
		v.fired.cols[colFiredPart] = "part of the log-odds"
	} else {
		v.fired.cols[colFiredPart] = "part of the centred logit"
	}
	var rows [][]string
	for k, f := range e.Filters {
		fam := "—"
		if f.Family >= 0 {
			fam = fmt.Sprint(f.Family)
		}
		rows = append(rows, []string{fmt.Sprint(f.Filter), windowText(e, f.Start, f.Width, nil), signed4(sh.Filters[k]), signed4(sh.FilterBias[k]),
			fmt.Sprintf("%.4f", f.ActivationLogOdds), fmt.Sprint(f.Width), fam})
	}
	v.fired.setRows(rows)
	v.fired.sortOn(colFiredPart, true)
}

// fillKept lists the windows kept down, largest estimated effect first (as
// explain orders them), each with its measured change split into parts
// (explain.KeptDownWindow.Parts).
func (v *whyView) fillKept(e *explain.Explanation) {
	v.keptRows = e.KeptDown
	var rows [][]string
	for _, kd := range e.KeptDown {
		own, others, words, whole := kd.Parts(e.LogOdds.Value)
		ww := "–" // no word weights
		if e.LogOdds.Words != nil {
			ww = signed4(words)
		}
		rows = append(rows, []string{fmt.Sprint(kd.Filter), windowText(e, kd.Start, kd.Width, kd.By), signed4(kd.Effect),
			signed4(own), signed4(others), ww, signed4(whole), signed4(kd.Drop), fmt.Sprint(kd.Width)})
	}
	v.kept.setRows(rows)
}

// windowText is the text of a window's tokens (none past the text's end),
// those at the positions in marked in brackets.
func windowText(e *explain.Explanation, start, width int, marked []int) string {
	var win []string
	for k := start; k < start+width && k < len(e.Tokens); k++ {
		t := e.Tokens[k].Text
		if slices.Contains(marked, k) {
			t = "[" + t + "]"
		}
		win = append(win, t)
	}
	return strings.Join(win, " ")
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

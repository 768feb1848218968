package gui

import (
	"fmt"
	"path/filepath"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"telltale/audit"
	"telltale/cnn"
	"telltale/internal/wording"
	"telltale/report"
)

// proseList shows rows of (name, sentence) as wrapped lines: the name in
// bold, the sentence as it is, so a long sentence is never cut.
type proseList struct {
	rows [][2]string
	box  *fyne.Container
	view *container.Scroll
}

func newProseList() *proseList {
	p := &proseList{box: container.NewVBox()}
	p.view = container.NewVScroll(p.box)
	return p
}

// set shows rows, scrolled to the top.
func (p *proseList) set(rows [][2]string) {
	p.rows = rows
	p.box.Objects = nil
	for _, r := range rows {
		var segs []widget.RichTextSegment
		if r[0] != "" {
			segs = append(segs, &widget.TextSegment{Text: r[0] + "  ", Style: widget.RichTextStyleStrong})
		}
		segs = append(segs, &widget.TextSegment{Text: r[1], Style: widget.RichTextStyleInline})
		t := widget.NewRichText(segs...)
		t.Wrapping = fyne.TextWrapWord
		p.box.Add(t)
	}
	p.box.Refresh()
	p.view.ScrollToTop()
}

// The marks a cue can be given, as the verdict buttons name them.
var markNames = []struct{ kind, name string }{
	{audit.MarkArtifact, "artifact"},
	{audit.MarkTask, "task"},
	{"", "no mark"},
}

// evidencePane shows the selected cue: what it is and the audit's verdict,
// the person's mark (artifact or task), its association, reliance and
// artifact-likeness in words with their intervals, and the texts and
// filters behind the figures (click one to open it).
type evidencePane struct {
	v         *auditView
	title     *widget.Label
	verdict   *widget.RadioGroup
	marksNote *widget.Label
	facts     *proseList
	examples  *sheet
	exList    []auditExample
	words     []string // the cue shown, as marks name it
	quiet     bool     // the verdict is being set by the program
}

const evidenceHint = "Select a cue in the lists to see its evidence here."

func newEvidencePane(v *auditView) *evidencePane {
	p := &evidencePane{v: v}
	p.title = wrapped(evidenceHint)
	p.title.TextStyle.Bold = true
	var names []string
	for _, m := range markNames {
		names = append(names, m.name)
	}
	p.verdict = widget.NewRadioGroup(names, p.markChosen)
	p.verdict.Horizontal = true
	p.verdict.Required = true
	p.verdict.Disable()
	p.marksNote = wrapped("")
	p.facts = newProseList()
	p.examples = newSheet(exampleCols...).wide(0, 200).wide(6, capText)
	p.examples.onSelect = p.openRow
	return p
}

func (p *evidencePane) content() fyne.CanvasObject {
	head := container.NewVBox(p.title, container.NewHBox(widget.NewLabel("Your verdict:"), p.verdict), p.marksNote)
	behind := container.NewBorder(wrapped("Behind the figures (click one to open it):"),
		p.examples.detail, nil, nil, p.examples.view())
	split := container.NewVSplit(p.facts.view, behind)
	split.Offset = 0.6
	return container.NewBorder(head, nil, nil, nil, split)
}

// clear shows no cue.
func (p *evidencePane) clear() {
	p.words = nil
	p.title.SetText(evidenceHint)
	p.setVerdict("")
	p.verdict.Disable()
	p.facts.set(nil)
	p.exList = nil
	p.examples.setRows(nil)
}

// showMarks says where the marks are kept.
func (p *evidencePane) showMarks(am *auditMarks) {
	p.marksNote.SetText(am.note())
	if am.err != nil || p.words == nil {
		p.verdict.Disable()
	} else {
		p.verdict.Enable()
	}
}

// show shows listed cue k of audit a.
func (p *evidencePane) show(a *auditState, k int) {
	c := a.listed[k]
	ev := report.DescribeCue(c, a.R, a.priors)
	rank, artifact := a.rankOf(k)
	list := "artifact-like cue"
	if !artifact {
		list = "cue that reads like the task"
	}
	p.title.SetText(fmt.Sprintf("%s → %s: %s (%s %d)", capitalize(ev.Name), ev.Label, ev.Verdict, list, rank))
	p.words = c.Words
	p.setVerdict(c.Mark)
	p.showMarks(p.v.marks)
	reliance := ev.Reliance
	if reliance == "" {
		reliance = "not measured: " + ev.Verdict
	}
	rows := [][2]string{{"Association", ev.Association}, {"Reliance", reliance}, {"Artifact-likeness", ev.Artifact}}
	for _, s := range ev.Signals {
		rows = append(rows, [2]string{"", "· " + s})
	}
	if ev.Shift != "" {
		rows = append(rows, [2]string{"Label share", ev.Shift})
	}
	if ev.Filters != "" {
		rows = append(rows, [2]string{"Filters", ev.Filters})
	}
	for i := range rows {
		rows[i][1] = inWindowWords(rows[i][1])
	}
	p.facts.set(rows)
	p.exList = a.examplesOf(k)
	p.examples.setRows(exampleRows(p.exList))
}

// setVerdict shows mark kind on the verdict buttons without acting on it.
func (p *evidencePane) setVerdict(kind string) {
	p.quiet = true
	defer func() { p.quiet = false }()
	for _, m := range markNames {
		if m.kind == kind {
			p.verdict.SetSelected(m.name)
		}
	}
}

// markChosen marks the cue shown as the person chose.
func (p *evidencePane) markChosen(name string) {
	if p.quiet || p.words == nil {
		return
	}
	for _, m := range markNames {
		if m.name != name {
			continue
		}
		if err := p.v.setMark(p.words, m.kind); err != nil {
			p.v.st.showError(err)
			p.setVerdict(p.v.marks.marks.Get(p.words))
		}
	}
}

// openRow opens what stands behind a figure: a text in Why this label, a
// filter in the Filters view.
func (p *evidencePane) openRow(row int) {
	if row >= len(p.exList) {
		return
	}
	e := p.exList[row]
	if e.Filter >= 0 {
		p.v.st.showFilter(e.Filter, p.examples)
		return
	}
	p.v.st.explainThis(e.Text, p.examples)
}

// actionPane is what to do: the cues acted on and what the model scores
// without them, retraining without them (and the two models compared), and
// the filter mask when the confirming half supports one.
type actionPane struct {
	v                       *auditView
	text                    *widget.Label
	figures                 *proseList
	retrainBtn, saveRetrain *widget.Button
	saveMask                *widget.Button
	compareNote             *widget.Label
	compare                 *sheet
	cueTexts                *sheet
	tabs                    *container.AppTabs
	exList                  []auditExample
	result                  *retrained // the last retraining
}

const noRetrainYet = "Retrain without the cues to compare both models here: the model's recipe on the training split with the cues taken out, " +
	"both models then on the test split as it is and with the cues taken out."

// retrainingNote is the note while a retraining runs.
const retrainingNote = "Retraining without the cues… (progress in the status bar)"

func newActionPane(v *auditView) *actionPane {
	p := &actionPane{v: v}
	p.text = wrapped("")
	p.figures = newProseList()
	p.retrainBtn = widget.NewButton("Retrain without the cues", p.retrain)
	p.retrainBtn.Importance = widget.HighImportance
	p.saveRetrain = widget.NewButton("Save the retrained model…", p.saveRetrained)
	p.saveMask = widget.NewButton("Save the masked model…", p.saveMasked)
	p.compareNote = wrapped(noRetrainYet)
	p.compare = newSheet(retrainCols...)
	p.cueTexts = newSheet(exampleCols...).wide(6, capText)
	p.cueTexts.onSelect = func(row int) {
		if row < len(p.exList) {
			v.st.explainThis(p.exList[row].Text, p.cueTexts)
		}
	}
	p.reset()
	return p
}

func (p *actionPane) content() fyne.CanvasObject {
	buttons := container.NewVBox(container.NewHBox(p.retrainBtn, p.saveRetrain), container.NewHBox(p.saveMask))
	top := container.NewBorder(nil, buttons, nil, nil,
		container.NewVScroll(container.NewVBox(p.text, p.figures.box)))
	p.tabs = container.NewAppTabs(
		container.NewTabItem("Both models", container.NewBorder(p.compareNote, nil, nil, nil, p.compare.view())),
		container.NewTabItem("Texts that hold a cue", container.NewBorder(nil, p.cueTexts.detail, nil, nil, p.cueTexts.view())),
	)
	split := container.NewVSplit(top, p.tabs)
	split.Offset = 0.6
	return split
}

// reset drops the retraining (a new model is open).
func (p *actionPane) reset() {
	p.result = nil
	p.compareNote.SetText(noRetrainYet)
	p.compare.setRows(nil)
	p.auditChanged(nil)
}

// auditChanged says what to do after audit a.
func (p *actionPane) auditChanged(a *auditState) {
	p.buttons()
	if a == nil {
		p.text.SetText("What to do appears here once the audit has run.")
		p.figures.set(nil)
		p.exList = nil
		p.cueTexts.setRows(nil)
		return
	}
	p.exList = a.cueTexts
	p.cueTexts.setRows(exampleRows(a.cueTexts))
	ae := report.DescribeAction(a.R)
	if ae == nil {
		p.text.SetText("The audit acts on no cue: none that looks like how the data was collected changes the model's predictions " +
			"measurably on test texts that took no part in choosing it. Mark a cue as an artifact to retrain without it all the same.")
		p.figures.set(nil)
		return
	}
	p.text.SetText(fmt.Sprintf("The model relies on %s. Retrain without %s (the patterns below take %s out of the text), "+
		"and keep your verdict with the model: mark %s as artifact.", ae.Cues, them(len(a.R.Action.Cues)), them(len(a.R.Action.Cues)),
		them(len(a.R.Action.Cues))))
	var rows [][2]string
	for _, f := range ae.Counterfactual {
		rows = append(rows, [2]string{f[0] + ":", f[1]})
	}
	if ae.Mask != "" {
		rows = append(rows, [2]string{"Filter mask:", ae.Mask})
	}
	rows = append(rows, [2]string{"Patterns:", strings.Join(retrainPatterns(a.R, a.marks), "   ")})
	p.figures.set(rows)
}

func them(n int) string {
	if n == 1 {
		return "it"
	}
	return "them"
}

// buttons follows the audit, the marks and the work that runs.
func (p *actionPane) buttons() {
	a := itemGet(p.v.st.audit)
	canRetrain := a != nil && !p.v.st.isRunning(taskRetrain) && len(retrainPatterns(a.R, a.marks)) > 0
	enable(p.retrainBtn, canRetrain)
	enable(p.saveRetrain, p.result != nil && p.result.of.ms == itemGet(p.v.st.model))
	enable(p.saveMask, a != nil && a.R.Action.Mask != nil)
	if a != nil && a.R.Action.Mask != nil {
		p.saveMask.Show()
	} else {
		p.saveMask.Hide()
	}
}

func enable(b *widget.Button, on bool) {
	if on {
		b.Enable()
	} else {
		b.Disable()
	}
}

// retrain retrains without the cues of the audit on screen.
func (p *actionPane) retrain() {
	a := itemGet(p.v.st.audit)
	if a == nil {
		return
	}
	before := p.compareNote.Text
	p.compareNote.SetText(retrainingNote)
	p.v.st.retrainNow(a, func(r *retrained) {
		if r == nil { // stopped or failed: the note says again what it said
			if p.compareNote.Text == retrainingNote {
				p.compareNote.SetText(before)
			}
			p.buttons()
			return
		}
		if itemGet(p.v.st.model) != r.of.ms {
			return
		}
		p.result = r
		rt := r.rt
		p.compareNote.SetText(fmt.Sprintf("Retrained with the model's recipe without %s: %s taken out of the training split, %s out of "+
			"the confirming half of the test split, where both models are compared (the choosing half chose the cues). Accuracies with 95%% Wilson intervals.",
			wording.Count(len(rt.Patterns), "cue", "cues"), wording.Grouped(rt.Removed, "match", "matches"), wording.Thousands(rt.HeldoutRemoved)) +
			vectorsNote(r.of.ms) + recipeMaskNote(rt))
		p.compare.setRows(retrainRows(rt))
		p.buttons()
	})
	p.buttons()
}

// vectorsNote says that word vectors are not used in a retraining, for a
// model opened from a file: model files do not record them. A model
// trained in this window had none (the window offers no vectors file).
func vectorsNote(ms *modelState) string {
	if ms.Run != nil {
		return ""
	}
	return " Word vectors the model may have been trained with are not used: model files do not record them."
}

// saveRetrained asks where to save the retrained model.
func (p *actionPane) saveRetrained() {
	if p.result == nil {
		return
	}
	m := p.result.rt.Model
	p.v.st.saveDialog("Save the retrained model", stem(p.result.of.ms)+"-without.tt", func(path string) error { return m.Save(path) })
}

// saveMasked asks where to save a copy of the model with the suggested
// filters masked (and, on a model with word weights, the cues' words read
// as the unknown word by them: audit.Action.Remedy).
func (p *actionPane) saveMasked() {
	a := itemGet(p.v.st.audit)
	if a == nil || a.R.Action.Mask == nil {
		return
	}
	m, err := a.R.Action.Remedy(a.ms.Model)
	if err != nil {
		p.v.st.showError(err)
		return
	}
	m.Info.ChoseCues(a.choice(cnn.ChoseMask)) // the choosing half chose the mask
	p.v.st.saveDialog("Save the masked model", stem(a.ms)+"-masked.tt", func(path string) error { return m.Save(path) })
}

// stem is the model's file name without its extension, for the names of
// the files made from it.
func stem(ms *modelState) string {
	if ms.Path == "" {
		return "telltale-model"
	}
	b := filepath.Base(ms.Path)
	return strings.TrimSuffix(b, filepath.Ext(b))
}

// recipeMaskNote is the sentence that says the retraining took out the
// patterns the model's recipe took out already (train --mask-tokens), with
// a space before it; "" when there were none.
func recipeMaskNote(rt *audit.Retrained) string {
	if w := report.RecipeMaskWords(rt); w != "" {
		return " " + w
	}
	return ""
}

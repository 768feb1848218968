package gui

import (
	"fmt"
	"slices"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"telltale/explain"
)

// evidencePane shows the evidence of the cue group or suspect selected
// last: its score's parts, its cue words, what masking and substitution
// change, and the texts behind the figures (click one to explain it).
type evidencePane struct {
	st                 *State
	title, exampleNote *widget.Label
	parts, effects     *factList
	words, examples    *sheet
	exampleList        []explain.AuditExample
	tabs               *container.AppTabs
}

const evidenceHint = "Select a cue group or a suspect to see its evidence."

func newEvidencePane(st *State) *evidencePane {
	p := &evidencePane{st: st}
	p.title = wrapped(evidenceHint)
	p.title.TextStyle.Bold = true
	p.parts = newFactList()
	p.words = newSheet("cue word", "label", "z", "share of slot mass", "share of windows")
	p.effects = newFactList()
	p.examples = newSheet(exampleCols...).wide(7, 200).wide(8, capText)
	p.examples.onSelect = p.explainRow
	p.exampleNote = wrapped("")
	return p
}

func (p *evidencePane) content() fyne.CanvasObject {
	p.tabs = container.NewAppTabs(
		container.NewTabItem("Score parts", p.parts.view),
		container.NewTabItem("Cue words", p.words.view()),
		container.NewTabItem("Interventions", p.effects.view),
		container.NewTabItem("Examples", container.NewBorder(p.exampleNote, p.examples.detail, nil, nil, p.examples.view())),
	)
	return container.NewBorder(tall(container.NewVScroll(p.title), 96), nil, nil, nil, p.tabs)
}

// explainRow sends an example's whole text to the explanation view.
func (p *evidencePane) explainRow(row int) {
	if a := itemGet(p.st.audit); a != nil && row < len(p.exampleList) {
		p.st.explainThis(a.text(p.exampleList[row]), p.examples)
	}
}

func (p *evidencePane) clear() {
	p.title.SetText(evidenceHint)
	p.parts.set(nil)
	p.effects.set(nil)
	p.words.setRows(nil)
	p.examples.setRows(nil)
	p.exampleList = nil
	p.exampleNote.SetText("")
}

// setExamples lists the quoted texts under their figures.
func (p *evidencePane) setExamples(figs []string, lists [][]explain.AuditExample, note string) {
	p.exampleList = nil
	var rows [][]string
	for i, exs := range lists {
		p.exampleList = append(p.exampleList, exs...)
		rows = append(rows, exampleRows(figs[i], exs)...)
	}
	p.examples.setRows(rows)
	p.exampleNote.SetText(fmt.Sprintf("%s behind the figures (# is the text's index in its split, from 0): %s Click one to explain it.",
		capitalize(texts(len(rows))), note))
}

// showSuspect shows suspect s.
func (p *evidencePane) showSuspect(a *auditState, s *explain.Suspect) {
	pt := s.Parts
	p.title.SetText(fmt.Sprintf("Filter %d (width %d) votes for %s; cue words: %s. Suspicion score %.4f = %.4f × max(0, %.4f).",
		s.Filter, s.Width, s.Label, orDash(cueWords(s)), s.Score, pt.FlaggedShare, pt.Harm))
	p.parts.set(suspectParts(s))
	p.words.setRows(cueRows(s))
	p.effects.set(suspectEffects(s))
	ex := s.Examples
	p.setExamples([]string{"cue window", "conflict, masked", "substitution flip"},
		[][]explain.AuditExample{ex.Windows, ex.Conflict, ex.Counterfactual},
		"training windows at or above the threshold that hold a cue, test texts where the cue points away from the gold label and masking changes the prediction, and substitutions that changed it.")
}

// showGroup shows cue group G (0-based position).
func (p *evidencePane) showGroup(a *auditState, G int) {
	cg := &a.A.CueGroups[G]
	p.title.SetText(groupStory(a, G))
	p.parts.set(groupParts(cg))
	p.words.setRows(groupWordRows(a, cg))
	p.effects.set(groupEffects(cg))
	p.setExamples([]string{"conflict, masked"}, [][]explain.AuditExample{cg.Examples},
		"test texts where the group's words point away from the gold label and masking its filters changes the prediction.")
}

// maskPane ticks filters and shows the test split with the ticked filters
// masked in a copy of the model, beside the model as trained.
type maskPane struct {
	st      *State
	v       *auditView
	ticked  map[int]bool
	mask    *maskState // the masked copy on screen
	compare *sheet
	note    *widget.Label
	save    *widget.Button
}

const maskHint = "Tick filters to mask them in a copy of the model; its test figures appear here. The other views keep the model as trained."

func newMaskPane(st *State, v *auditView) *maskPane {
	p := &maskPane{st: st, v: v, ticked: map[int]bool{}}
	p.compare = newSheet("measure", "as trained", "masked", "change")
	p.note = wrapped(maskHint)
	p.save = widget.NewButton("Save masked model…", p.saveMasked)
	p.save.Disable()
	return p
}

func (p *maskPane) content() fyne.CanvasObject {
	return container.NewBorder(p.note, container.NewHBox(p.save), nil, nil, p.compare.view())
}

// saveMasked asks where to save the masked copy.
func (p *maskPane) saveMasked() {
	if p.mask == nil {
		return
	}
	m := p.mask.Model
	p.st.saveDialog("Save masked model", "telltale-masked.tt", func(path string) error { return m.Save(path) })
}

// reset drops the ticks and the masked copy (a new model is open).
func (p *maskPane) reset() {
	clear(p.ticked)
	p.mask = nil
	p.save.Disable()
	p.note.SetText(maskHint)
	p.showOriginal()
}

// showOriginal fills the "as trained" column only.
func (p *maskPane) showOriginal() {
	ms := itemGet(p.st.model)
	if ms == nil || ms.Eval == nil {
		p.compare.setRows(nil)
		return
	}
	rows := compareRows(ms.Eval.Metrics, ms.Eval.Metrics)
	for _, r := range rows {
		r[2], r[3] = "—", "—"
	}
	p.compare.setRows(rows)
}

// tickedList is the ticked filters, ascending.
func (p *maskPane) tickedList() []int {
	var gs []int
	for g, on := range p.ticked {
		if on {
			gs = append(gs, g)
		}
	}
	slices.Sort(gs)
	return gs
}

// tick ticks (on) or unticks filters gs and masks the ticked ones.
func (p *maskPane) tick(gs []int, on bool) {
	for _, g := range gs {
		p.ticked[g] = on
	}
	p.remask()
}

// setTicks ticks exactly gs and masks them.
func (p *maskPane) setTicks(gs []int) {
	clear(p.ticked)
	p.tick(gs, true)
}

// remask evaluates the masked copy for the ticked filters.
func (p *maskPane) remask() {
	p.v.ticksChanged()
	gs := p.tickedList()
	if len(gs) == 0 {
		p.st.cancel(taskMask)
		p.mask = nil
		p.save.Disable()
		p.showOriginal()
		p.note.SetText("No filter ticked: the model as trained.")
		return
	}
	p.st.applyMask(gs, func(mk *maskState) {
		if !slices.Equal(mk.Filters, p.tickedList()) {
			return // the ticks changed meanwhile; a newer evaluation follows
		}
		p.mask = mk
		p.save.Enable()
		p.compare.setRows(compareRows(itemGet(p.st.model).Eval.Metrics, mk.Eval.Metrics))
		p.note.SetText(maskedNote(mk.Filters))
	})
}

// maskedNote says which filters the masked copy switches off.
func maskedNote(gs []int) string {
	s := make([]string, len(gs))
	for i, g := range gs {
		s[i] = fmt.Sprint(g)
	}
	list := strings.Join(s, ", ")
	if n := len(s); n > 1 {
		list = strings.Join(s[:n-1], ", ") + " and " + s[n-1]
	}
	return fmt.Sprintf("A masked copy with %s switched off (%s), on the test split; the other views keep using the model as trained.",
		plural(len(gs), "filter", "filters"), list)
}

package gui

import (
	"fmt"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"telltale/cnn"
	"telltale/explain"
	"telltale/internal/glossary"
)

// auditView shows the cue audit: its summary, the cue groups, the ranked
// suspects with every part of their score, the flagged words and every
// filter (tick to mask); on the right the evidence of the selected group or
// suspect and what masking the ticked filters changes.
type auditView struct {
	st *State

	runBtn, stopBtn *widget.Button
	summary         *widget.Label
	lists           *container.AppTabs
	cues            *cuesPane
	suspects        *sheet
	formula         *widget.Label
	flagged         *sheet
	all             *allFiltersPane
	evidence        *evidencePane
	masking         *maskPane
	empty           *widget.Label
	full            fyne.CanvasObject
	body            *fyne.Container
}

const noAuditYet = "The audit has not run on this model yet: press Run the audit (Run › Run the audit) to rank the filters that may key on spurious cues."

func newAuditView(st *State) *auditView {
	v := &auditView{st: st}
	v.runBtn = widget.NewButton("Run the audit", func() { st.runAudit(nil) })
	v.runBtn.Importance = widget.HighImportance
	v.stopBtn = widget.NewButton("Stop", func() { st.cancel(taskAudit) })
	v.summary = wrapped(noAuditYet)
	v.empty = wrapped("No model yet: train one (Training view) or open one (File › Open model); then run the audit here.")
	v.masking = newMaskPane(st, v)
	v.evidence = newEvidencePane(st)
	v.cues = newCuesPane(v)
	v.suspects = newSheet(suspectCols...).wide(4, 200)
	v.suspects.onCell = v.suspectCell
	v.suspects.onSelect = v.showSuspect
	term, _ := glossary.Lookup("suspicion score")
	v.formula = widget.NewLabelWithStyle(term.Line(), fyne.TextAlignLeading, fyne.TextStyle{Italic: true})
	v.formula.Wrapping = fyne.TextWrapWord
	v.flagged = newSheet(flaggedCols...)
	v.all = newAllFiltersPane(st, v)
	v.full = v.layout()
	v.body = container.NewStack(v.empty)
	listen(v.modelChanged, st.model)
	listen(v.all.list.Refresh, st.profiles)
	listen(v.auditChanged, st.audit)
	listen(v.buttons, st.running, st.model)
	return v
}

func (v *auditView) layout() fyne.CanvasObject {
	v.lists = container.NewAppTabs(
		container.NewTabItem("Cues", v.cues.content()),
		container.NewTabItem("Suspects", container.NewBorder(v.formula, v.suspects.detail, nil, nil, v.suspects.view())),
		container.NewTabItem("Flagged words", v.flagged.view()),
		container.NewTabItem("All filters", v.all.list),
	)
	right := container.NewVSplit(v.evidence.content(), v.masking.content())
	right.Offset = 0.62
	split := container.NewHSplit(v.lists, right)
	split.Offset = 0.5
	head := container.NewBorder(nil, nil, nil, container.NewHBox(v.runBtn, v.stopBtn), v.summary)
	return container.NewBorder(head, nil, nil, nil, split)
}

func (v *auditView) content() fyne.CanvasObject { return v.body }
func (v *auditView) exportTable() *sheet        { return v.suspects }
func (v *auditView) focusInput()                {}

func (v *auditView) exportData() any {
	var out struct {
		Audit    *explain.Audit `json:"audit,omitempty"`
		Masked   []int          `json:"masked,omitempty"`
		Original *cnn.Metrics   `json:"original,omitempty"`
		After    *cnn.Metrics   `json:"after,omitempty"`
	}
	a := itemGet(v.st.audit)
	if a != nil {
		out.Audit = a.A
	}
	ms := itemGet(v.st.model)
	if mk := v.masking.mask; mk != nil && ms != nil && ms.Eval != nil {
		orig := ms.Eval.Metrics
		out.Masked, out.Original, out.After = mk.Filters, &orig, &mk.Eval.Metrics
	}
	if a == nil && out.Masked == nil {
		return nil
	}
	return out
}

// showTab selects one of the lists' tabs by title.
func (v *auditView) showTab(title string) {
	for _, it := range v.lists.Items {
		if it.Text == title {
			v.lists.Select(it)
		}
	}
}

// buttons lets Run work when there is a model and no audit running.
func (v *auditView) buttons() {
	switch {
	case v.st.isRunning(taskAudit):
		v.runBtn.Disable()
		v.stopBtn.Enable()
	case itemGet(v.st.model) == nil || itemGet(v.st.data) == nil:
		v.runBtn.Disable()
		v.stopBtn.Disable()
	default:
		v.runBtn.Enable()
		v.stopBtn.Disable()
	}
}

func (v *auditView) modelChanged() {
	v.masking.reset()
	v.all.reset()
	if itemGet(v.st.model) == nil {
		v.body.Objects = []fyne.CanvasObject{v.empty}
	} else {
		v.body.Objects = []fyne.CanvasObject{v.full}
	}
	v.body.Refresh()
	v.buttons()
}

// auditChanged fills every list from the new audit (or empties them).
func (v *auditView) auditChanged() {
	a := itemGet(v.st.audit)
	v.evidence.clear()
	v.refreshSuspects()
	v.all.list.Refresh()
	v.flagged.setRows(flaggedTokenRows(a))
	v.cues.auditChanged(a)
	if a == nil {
		v.summary.SetText(noAuditYet)
		return
	}
	v.summary.SetText(auditSummary(a.A))
	if len(a.A.CueGroups) > 0 {
		v.cues.groups.selectRow(0)
	} else if len(a.A.Filters) > 0 {
		v.suspects.selectRow(0)
	}
}

// auditSummary is the audit's headline in words.
func auditSummary(au *explain.Audit) string {
	prior := "the label's share of the training split"
	if au.PriorKind == "uniform" {
		prior = "one over the number of labels"
	}
	return fmt.Sprintf("%d of %d words flagged in %s of the training split (one-sided z above %.2f against %s; "+
		"family-wise level %g, Bonferroni over the %d words). %s scored; the top %d listed. "+
		"Test split (%s) with the model as trained: accuracy %.4f, macro-F1 %.4f.",
		len(au.Tokens), au.Tested, texts(au.TrainTexts), au.Threshold, prior, au.Alpha, au.Tested,
		plural(au.Candidates, "filter", "filters"), len(au.Filters), texts(au.HeldoutTexts), au.Baseline.Accuracy, au.Baseline.MacroF1)
}

// refreshSuspects writes the suspect table, keeping the selection.
func (v *auditView) refreshSuspects() {
	a := itemGet(v.st.audit)
	if a == nil {
		v.suspects.setRows(nil)
		return
	}
	rows := make([][]string, len(a.A.Filters))
	for i := range a.A.Filters {
		s := &a.A.Filters[i]
		rows[i] = suspectRow(s, i+1, v.masking.ticked[s.Filter])
	}
	if len(v.suspects.rows) == len(rows) {
		// Only the ticks changed: keep the order, the scroll and the selection.
		v.suspects.rows = rows
		v.suspects.table.Refresh()
		return
	}
	v.suspects.setRows(rows)
}

// suspectCell ticks or unticks a suspect when its mask cell is clicked.
func (v *auditView) suspectCell(row, col int) {
	a := itemGet(v.st.audit)
	if a == nil || row >= len(a.A.Filters) || col != colMask {
		return
	}
	g := a.A.Filters[row].Filter
	v.masking.tick([]int{g}, !v.masking.ticked[g])
}

// showSuspect shows suspect row's evidence.
func (v *auditView) showSuspect(row int) {
	if a := itemGet(v.st.audit); a != nil && row < len(a.A.Filters) {
		v.evidence.showSuspect(a, &a.A.Filters[row])
	}
}

// ticksChanged redraws what shows the ticks.
func (v *auditView) ticksChanged() {
	v.refreshSuspects()
	v.all.list.Refresh()
}

// cuesPane is the Cues tab: the cue groups, buttons that tick their
// filters, and the audit's story.
type cuesPane struct {
	v                                        *auditView
	groups                                   *sheet
	story                                    *widget.Label
	tickStrongest, tickAll, tickPlan, untick *widget.Button
	selected                                 int // the group shown, -1 none
}

func newCuesPane(v *auditView) *cuesPane {
	p := &cuesPane{v: v, selected: -1}
	p.groups = newSheet(groupCols...).wide(1, 220)
	p.groups.onSelect = p.show
	p.story = wrapped("")
	group := func(pick func(cg *explain.CueGroup) []int) func() {
		return func() {
			if a := itemGet(v.st.audit); a != nil && p.selected >= 0 && p.selected < len(a.A.CueGroups) {
				v.masking.tick(pick(&a.A.CueGroups[p.selected]), true)
			}
		}
	}
	p.tickStrongest = widget.NewButton("Tick its strongest filters", group(func(cg *explain.CueGroup) []int { return cg.Mask }))
	p.tickAll = widget.NewButton("Tick all its filters", group(func(cg *explain.CueGroup) []int { return cg.Filters }))
	p.tickPlan = widget.NewButton("Tick the suggested mask", func() {
		if a := itemGet(v.st.audit); a != nil && a.A.Plan != nil {
			v.masking.tick(a.A.Plan.Filters, true)
		}
	})
	p.untick = widget.NewButton("Untick all", func() { v.masking.setTicks(nil) })
	p.auditChanged(nil)
	return p
}

func (p *cuesPane) content() fyne.CanvasObject {
	split := container.NewVSplit(container.NewBorder(nil, p.groups.detail, nil, nil, p.groups.view()), container.NewVScroll(p.story))
	split.Offset = 0.5
	return container.NewBorder(container.NewGridWithColumns(2, p.tickStrongest, p.tickAll, p.tickPlan, p.untick), nil, nil, nil, split)
}

func (p *cuesPane) auditChanged(a *auditState) {
	p.groups.setRows(groupRows(a))
	p.selected = -1
	p.tickStrongest.Disable()
	p.tickAll.Disable()
	p.untick.Enable()
	if a == nil {
		p.story.SetText("The cue groups appear here once the audit has run: flagged words that travel together, and the filters keyed on them.")
		p.tickPlan.Disable()
		return
	}
	p.story.SetText(windowStory(a.A.Story()))
	if a.A.Plan != nil {
		p.tickPlan.Enable()
	} else {
		p.tickPlan.Disable()
	}
}

// show selects cue group G: its evidence on the right, its buttons on.
func (p *cuesPane) show(G int) {
	a := itemGet(p.v.st.audit)
	if a == nil || G < 0 || G >= len(a.A.CueGroups) {
		return
	}
	p.selected = G
	p.tickStrongest.Enable()
	p.tickAll.Enable()
	p.v.evidence.showGroup(a, G)
}

// allFiltersPane lists every filter of the model with a tick box, for
// masking filters the audit did not list.
type allFiltersPane struct {
	st   *State
	v    *auditView
	list *widget.List
	ids  []int
}

func newAllFiltersPane(st *State, v *auditView) *allFiltersPane {
	p := &allFiltersPane{st: st, v: v}
	p.list = widget.NewList(func() int { return len(p.ids) },
		func() fyne.CanvasObject { return widget.NewCheck("", nil) }, p.update)
	return p
}

func (p *allFiltersPane) reset() {
	p.ids = nil
	if ms := itemGet(p.st.model); ms != nil {
		for g := range ms.Model.Config.NumFilters() {
			p.ids = append(p.ids, g)
		}
	}
	p.list.Refresh()
	p.list.ScrollToTop()
}

func (p *allFiltersPane) update(i widget.ListItemID, o fyne.CanvasObject) {
	c := o.(*widget.Check)
	if i >= len(p.ids) {
		return
	}
	g := p.ids[i]
	c.OnChanged = nil
	c.SetChecked(p.v.masking.ticked[g])
	label := fmt.Sprintf("filter %d", g)
	if ps := itemGet(p.st.profiles); ps != nil && g < len(ps.P.Filters) {
		fp := ps.P.Filters[g]
		top := ""
		if len(fp.TopNgrams) > 0 {
			top = " · " + joinTokens(fp.TopNgrams[0].Tokens)
		}
		label = fmt.Sprintf("filter %d · width %d · votes for %s%s", g, fp.Width, fp.Label, top)
	}
	if s := itemGet(p.st.audit).suspectOf(g); s != nil {
		label += fmt.Sprintf(" · suspicion score %.4f (%s)", s.Score, cueWords(s))
	}
	c.Text = label
	c.Refresh()
	c.OnChanged = func(b bool) { p.v.masking.tick([]int{g}, b) }
}

func joinTokens(ts []string) string { return strings.Join(ts, " ") }

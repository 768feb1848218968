package gui

import (
	"fmt"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"telltale/audit"
	"telltale/internal/wording"
	"telltale/report"
)

// auditView shows the cue audit (package audit) of the open model: the
// story first; the cues the model relies on that look like how the data was
// collected, ranked, and apart those that read like the task; on the right
// the selected cue's association, reliance and artifact-likeness with their
// intervals, the artifact/task mark and the texts and filters behind the
// figures; and what to do: retrain without the cues, or a filter mask when
// the confirming half supports one.
type auditView struct {
	st *State

	runBtn, stopBtn *widget.Button
	summary         *widget.Label
	lists           *container.AppTabs
	storyTab        *container.TabItem
	rankedTab       *container.TabItem
	taskTab         *container.TabItem
	actionTab       *container.TabItem
	story           *widget.Label
	ranked, task    *sheet
	evidence        *evidencePane
	action          *actionPane
	// marks are the verdicts on the open model's cues (auditmarks.go).
	marks *auditMarks
	// selected is the cue on the right, by its words ("" none).
	selected string
	empty    *widget.Label
	full     fyne.CanvasObject
	body     *fyne.Container
}

const (
	noAuditYet = "The audit has not run on this model yet: press Run the audit (Run › Run the audit). It finds the words and phrases " +
		"that predict a label in the training split, measures on the test split how much the model relies on each, and tells " +
		"which look like how the data was collected rather than like the task."
	rankedNote = "Cues that look like how the data was collected: those acted on first, then by reliance × artifact-likeness. " +
		"Select one to see its evidence and to mark it."
	taskNote = "Relied on, reads like the task: judge these yourself and mark any that is an artifact."
)

func newAuditView(st *State) *auditView {
	v := &auditView{st: st, marks: readMarks(nil)}
	v.runBtn = widget.NewButton("Run the audit", func() { st.runAudit(nil) })
	v.runBtn.Importance = widget.HighImportance
	v.stopBtn = widget.NewButton("Stop", func() {
		st.cancel(taskAudit)
		st.cancel(taskRetrain)
	})
	v.summary = wrapped("")
	v.story = wrapped(noAuditYet)
	v.empty = wrapped("No model yet: train one (Training view) or open one (File › Open model); then run the audit here.")
	v.ranked = newSheet(cueCols...).wide(1, 260)
	v.task = newSheet(cueCols...).wide(1, 260)
	v.ranked.onSelect = func(row int) { v.showCue(row) }
	v.task.onSelect = func(row int) {
		if a := itemGet(st.audit); a != nil {
			v.showCue(len(a.R.Ranked) + row)
		}
	}
	v.evidence = newEvidencePane(v)
	v.action = newActionPane(v)
	v.full = v.layout()
	v.body = container.NewStack(v.empty)
	listen(v.modelChanged, st.model)
	listen(v.auditChanged, st.audit)
	listen(v.buttons, st.running, st.model, st.data, st.audit)
	return v
}

func (v *auditView) layout() fyne.CanvasObject {
	list := func(note string, s *sheet) fyne.CanvasObject {
		return container.NewBorder(wrapped(note), s.detail, nil, nil, s.view())
	}
	v.storyTab = container.NewTabItem("Story", container.NewVScroll(v.story))
	v.rankedTab = container.NewTabItem("Artifact-like", list(rankedNote, v.ranked))
	v.taskTab = container.NewTabItem("Like the task", list(taskNote, v.task))
	v.actionTab = container.NewTabItem("What to do", v.action.content())
	v.lists = container.NewAppTabs(v.storyTab, v.rankedTab, v.taskTab, v.actionTab)
	split := container.NewHSplit(v.lists, v.evidence.content())
	split.Offset = 0.5
	head := container.NewBorder(nil, nil, nil, container.NewHBox(v.runBtn, v.stopBtn), v.summary)
	return container.NewBorder(head, nil, nil, nil, split)
}

func (v *auditView) content() fyne.CanvasObject { return v.body }
func (v *auditView) focusInput()                {}

// exportTable is the list on screen: the cues that read like the task when
// that tab is selected, else the artifact-like cues.
func (v *auditView) exportTable() *sheet {
	if v.lists.Selected() == v.taskTab {
		return v.task
	}
	return v.ranked
}

// auditExport is what File › Export view data as JSON writes: the audit as
// telltale audit --json documents it, its story in the window's words, the
// marks file and the retraining, when there was one.
type auditExport struct {
	*audit.Result
	Story     string           `json:"story"`
	MarksFile string           `json:"marks_file,omitempty"`
	Retrained *audit.Retrained `json:"retrained,omitempty"`
}

func (v *auditView) exportData() any {
	a := itemGet(v.st.audit)
	if a == nil {
		return nil
	}
	out := auditExport{Result: a.R, Story: windowStory(a.R), MarksFile: v.marks.file}
	if rt := v.action.result; rt != nil && rt.of == a {
		out.Retrained = rt.rt
	}
	return out
}

// buttons follows the work that runs: Run works when there is a model and
// data and no audit runs; Stop while the audit or a retraining runs.
func (v *auditView) buttons() {
	auditing := v.st.isRunning(taskAudit)
	if auditing || itemGet(v.st.model) == nil || itemGet(v.st.data) == nil {
		v.runBtn.Disable()
	} else {
		v.runBtn.Enable()
	}
	if auditing || v.st.isRunning(taskRetrain) {
		v.stopBtn.Enable()
	} else {
		v.stopBtn.Disable()
	}
	v.action.buttons()
}

// modelChanged reads the new model's marks and drops what belonged to the
// old one.
func (v *auditView) modelChanged() {
	ms := itemGet(v.st.model)
	v.marks = readMarks(ms)
	v.selected = ""
	v.action.reset()
	if ms == nil {
		v.body.Objects = []fyne.CanvasObject{v.empty}
	} else {
		v.body.Objects = []fyne.CanvasObject{v.full}
	}
	v.body.Refresh()
	v.showMarks()
	v.buttons()
}

// showMarks says where the marks are kept and whether they can change.
func (v *auditView) showMarks() { v.evidence.showMarks(v.marks) }

// auditChanged fills the story, both lists and what to do from the new
// audit (or empties them), keeping the cue on the right when it is still
// listed.
func (v *auditView) auditChanged() {
	a := itemGet(v.st.audit)
	v.action.auditChanged(a)
	if a == nil {
		v.summary.SetText("")
		v.story.SetText(noAuditYet)
		v.ranked.exportRows, v.task.exportRows = nil, nil
		v.ranked.setRows(nil)
		v.task.setRows(nil)
		v.setTabTitles(0, 0)
		v.evidence.clear()
		return
	}
	r := a.R
	v.summary.SetText(fmt.Sprintf("Association is tested on the %s of the training split; reliance is measured on the %s of the test split, "+
		"halved at random into %d that choose the cues and %d that confirm them: every figure comes from the confirming half unless it says otherwise.",
		wording.Texts(r.TrainTexts), wording.Texts(r.HeldoutTexts), r.SelectionTexts, r.ConfirmationTexts))
	v.story.SetText(windowStory(r))
	// File › Export table as CSV writes the cues as audit --export does:
	// numbers, each interval as its value, low and high (report.CueTable
	// lists the artifact-like cues, then those like the task).
	cues := report.CueTable(r)
	rows := cues.RowStrings()
	v.ranked.exportCols, v.ranked.exportRows = cues.Columns, rows[:len(r.Ranked)]
	v.task.exportCols, v.task.exportRows = cues.Columns, rows[len(r.Ranked):]
	v.ranked.setRows(cueRows(r, r.Ranked))
	v.task.setRows(cueRows(r, r.Task))
	v.setTabTitles(len(r.Ranked), len(r.Task))
	k := a.find(v.selected)
	if k < 0 && len(a.listed) > 0 {
		k = 0
	}
	if k < 0 {
		v.selected = ""
		v.evidence.clear()
		return
	}
	v.selectCue(k)
}

// setTabTitles puts the lists' lengths in their tab titles.
func (v *auditView) setTabTitles(ranked, task int) {
	v.rankedTab.Text = fmt.Sprintf("Artifact-like (%d)", ranked)
	v.taskTab.Text = fmt.Sprintf("Like the task (%d)", task)
	v.lists.Refresh()
}

// selectCue selects listed cue k in its list, which shows it on the right.
func (v *auditView) selectCue(k int) {
	a := itemGet(v.st.audit)
	if a == nil || k < 0 || k >= len(a.listed) {
		return
	}
	if k < len(a.R.Ranked) {
		v.ranked.selectRow(k)
	} else {
		v.task.selectRow(k - len(a.R.Ranked))
	}
	v.showCue(k)
}

// showCue shows listed cue k on the right.
func (v *auditView) showCue(k int) {
	a := itemGet(v.st.audit)
	if a == nil || k < 0 || k >= len(a.listed) {
		return
	}
	v.selected = a.listed[k].Text
	v.evidence.show(a, k)
}

package gui

import (
	"fmt"
	"io"
	"math"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/data/binding"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"telltale/internal/atomicfile"
)

// State is everything the window knows: the open corpus, the model, its
// filter profiles and audit, the values the widgets are bound to, the
// views, and the background tasks. Nothing is kept in package globals.
//
// All fields are read and written on the UI goroutine only; background work
// hands its results back through ui.
type State struct {
	app  fyne.App
	win  fyne.Window
	opts Options

	// ui runs fn on the UI goroutine: fyne.Do in the application; the
	// tests replace it with a queue they drain themselves.
	ui    func(fn func())
	tasks *taskRunner

	// The status bar: what the window is doing, in one line, and the one
	// progress figure of the window with a Stop button. They are set
	// directly, not through bindings: a binding's update waits its turn on
	// the UI goroutine's queue, and progress comes often.
	statusLine *widget.Label
	bar        *widget.ProgressBar
	stopBtn    *widget.Button

	running binding.String // kinds of work running, for the views' buttons

	// wroteBeside are the files a save wrote beside the one chosen (a
	// model's marks), for the status line that reports the save.
	wroteBeside []string

	// What is open; each change is seen by every view.
	data     binding.Item[*corpusState]
	model    binding.Item[*modelState]
	profiles binding.Item[*profileState]
	audit    binding.Item[*auditState]

	// explainText is the text of the explanation view, here so that other
	// views (a confusion cell's texts, an audit example) can send one.
	explainText binding.String

	recipe *recipeForm

	// The views, in tab order (built by build from viewTable).
	tabs         *container.AppTabs
	specs        []viewSpec
	corpusView   *corpusView
	trainingView *trainingView
	resultsView  *resultsView
	filtersView  *filtersView
	whyView      *whyView
	auditView    *auditView

	// Saving: where files go and how they are written. writeFile replaces
	// a file atomically (atomicfile.Write); pickFolder asks for a folder
	// (the folder dialog). Tests replace both.
	saveDir    string
	writeFile  func(path string, write func(io.Writer) error) error
	pickFolder func(start string, done func(dir string))
	lastSave   *saveForm // the save dialog last shown

	// One-shot hooks of the start-up sequence.
	afterTrain   func(ok bool)
	afterProfile func()
}

func newState(a fyne.App, opts Options, ui func(func())) *State {
	same := func(a, b any) bool { return a == b }
	st := &State{
		app:         a,
		opts:        opts,
		ui:          ui,
		running:     binding.NewString(),
		data:        binding.NewItem(func(a, b *corpusState) bool { return same(a, b) }),
		model:       binding.NewItem(func(a, b *modelState) bool { return same(a, b) }),
		profiles:    binding.NewItem(func(a, b *profileState) bool { return same(a, b) }),
		audit:       binding.NewItem(func(a, b *auditState) bool { return same(a, b) }),
		explainText: binding.NewString(),
		recipe:      newRecipeForm(),
		writeFile:   atomicfile.Write,
	}
	st.pickFolder = st.pickFolderDialog
	st.tasks = newTaskRunner(ui)
	st.newStatusBar()
	st.tasks.onBusy = func(b bool) {
		st.setBusy(b)
		st.tasksChanged()
	}
	st.tasks.onNote = func(f float64, s string) {
		if f >= 0 {
			st.bar.SetValue(f)
		}
		if s != "" {
			st.setStatus(s)
		}
	}
	st.tasks.onError = st.showError
	st.setStatus("No data open yet.")
	return st
}

// newStatusBar makes the status bar's widgets.
func (st *State) newStatusBar() {
	st.statusLine = widget.NewLabel("")
	st.statusLine.Truncation = fyne.TextTruncateEllipsis
	st.bar = widget.NewProgressBar()
	st.bar.TextFormatter = func() string { return fmt.Sprintf("%.0f%%", math.Floor(100*st.bar.Value)) }
	st.bar.Hide()
	st.stopBtn = widget.NewButton("Stop", st.stopAll)
	st.stopBtn.Disable()
}

// setStatus says in the status bar what the window is doing, in one line:
// the lines of a longer message (an error's list of fixes) are joined, and
// what does not fit ends in "…" (an error's dialog shows it whole). A
// second line would make the bar taller and the window with it, past the
// bottom of a small screen.
func (st *State) setStatus(s string) {
	if strings.ContainsAny(s, "\r\n") {
		s = oneLine(s)
	}
	st.statusLine.SetText(s)
}

// statusText is the status bar's line.
func (st *State) statusText() string { return st.statusLine.Text }

// setBusy shows the progress bar and enables Stop while work runs.
func (st *State) setBusy(busy bool) {
	if busy {
		st.bar.Show()
		st.stopBtn.Enable()
	} else {
		st.bar.Hide()
		st.stopBtn.Disable()
	}
}

// start runs w in the background as the task of kind (see taskRunner).
func (st *State) start(kind string, inBar bool, w work) {
	st.tasks.start(kind, inBar, w)
	st.tasksChanged()
}

// tasksChanged tells the views which kinds of work run, so their buttons
// follow.
func (st *State) tasksChanged() {
	s := ""
	for _, k := range []string{taskLoad, taskTrain, taskProfile, taskAudit, taskRetrain} {
		if st.tasks.busy(k) {
			s += k + " "
		}
	}
	_ = st.running.Set(s)
}

// isRunning reports whether work of kind runs or waits.
func (st *State) isRunning(kind string) bool { return st.tasks.busy(kind) }

// cancel stops the work of kind; its result is still applied (a stopped
// training keeps the best model so far).
func (st *State) cancel(kind string) {
	st.tasks.cancel(kind)
	st.tasksChanged()
}

// stopAll stops the work shown in the status bar.
func (st *State) stopAll() {
	for _, k := range barTasks {
		st.tasks.cancel(k)
	}
	st.tasksChanged()
}

// cancelAll stops every task (the window is closing).
func (st *State) cancelAll() { st.tasks.cancelAll() }

// showError shows err in a dialog; the message says what happened and,
// coming from the lower packages, what to do.
func (st *State) showError(err error) {
	st.setStatus("Error: " + err.Error())
	if st.win != nil {
		dialog.ShowError(err, st.win)
	}
}

// showErrorf wraps err with a sentence that says what the user tried.
func (st *State) showErrorf(err error, format string, args ...any) {
	st.showError(fmt.Errorf(format+": %w", append(args, err)...))
}

func itemGet[T any](it binding.Item[T]) T {
	v, _ := it.Get()
	return v
}

func stringGet(s binding.String) string {
	v, _ := s.Get()
	return v
}

// listen calls fn on the UI goroutine whenever one of the items changes,
// and once now.
func listen(fn func(), items ...binding.DataItem) {
	for _, it := range items {
		it.AddListener(binding.NewDataListener(fn))
	}
}

package gui

import (
	"context"
	"errors"
	"fmt"
	"io"
	"sync"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/data/binding"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"telltale/explain"
	"telltale/internal/atomicfile"
)

// State is everything the window knows: the open corpus, the model, its
// filter profiles and audit, the values the widgets are bound to, and the
// background tasks. Views receive it; nothing is kept in package globals.
//
// All fields are read and written on the UI goroutine only; background work
// hands its results back through ui.
type State struct {
	app  fyne.App
	win  fyne.Window
	opts Options

	// ui runs fn on the UI goroutine: fyne.Do in the application; the
	// tests replace it with a queue they drain themselves.
	ui func(fn func())

	// Bound values shown by the status bar and several views.
	status   binding.String // what the window is doing, one line
	progress binding.Float  // 0 … 1 of the task in the status bar
	busy     binding.Bool   // a task of the status bar is running

	data     binding.Item[*corpusState]
	model    binding.Item[*modelState]
	profiles binding.Item[*profileState]
	audit    binding.Item[*auditState]

	// Values of the explain view, kept here so another view (a confusion
	// cell, a suspect's example) can send a text to it.
	explainText   binding.String
	explainMethod binding.String
	explainClass  binding.String

	tabs         func(title string)  // selects a view by title (set by build)
	selectedView func() string       // title of the shown view
	exports      map[string]exporter // per view title: its table and data
	views        []view

	recipe       *recipe
	trainRun     *trainRun         // the run shown by the Training view
	trainChanged func()            // redraws the Training view
	trainButtons [2]*widget.Button // Train and Stop, for tests

	explainShown     func() *explainState          // the explanation on screen, for tests
	explainChips     func() []*heatCell            // the painted tokens, for tests
	showFilter       func(g int)                   // selects filter g in the Filters view
	filterShown      func() *explain.FilterProfile // the filter on screen, for tests
	filterNgramChips func() []*heatCell            // its painted n-gram tokens, for tests

	maskShown     func() *maskState  // the masked model on screen, for tests
	maskTicks     func(gs []int)     // sets the ticked filters and masks them
	auditShown    func() *auditState // the audit on screen, for tests
	auditSuspects *sheet             // the suspect table, for tests
	auditTab      func(title string) // selects a tab of the audit's lists, for tests
	maskCompare   *sheet             // the before/after table, for tests
	filterList    *sheet             // the Filters view's list, for tests
	explainEntry  *widget.Entry      // the explain view's text box, for tests

	// Saving: where files go and how they are written. writeFile replaces
	// a file atomically (atomicfile.Write); pickFolder asks for a folder
	// (the folder dialog). Tests replace both.
	saveDir    string
	writeFile  func(path string, write func(io.Writer) error) error
	pickFolder func(start string, done func(dir string))
	saveShown  *saveForm // the save dialog last shown, for tests

	// One-shot hooks of the start-up sequence.
	afterTrain   func(ok bool)
	afterProfile func()

	mu    sync.Mutex
	tasks map[string]*task
	gen   int
}

// task is a running background job of one kind.
type task struct {
	gen    int
	cancel context.CancelFunc
}

// errCanceled marks work stopped by the user; it is never shown as an error.
var errCanceled = errors.New("canceled")

func newState(a fyne.App, opts Options) *State {
	same := func(a, b any) bool { return a == b }
	st := &State{
		app:           a,
		opts:          opts,
		ui:            fyne.Do,
		status:        binding.NewString(),
		progress:      binding.NewFloat(),
		busy:          binding.NewBool(),
		data:          binding.NewItem(func(a, b *corpusState) bool { return same(a, b) }),
		model:         binding.NewItem(func(a, b *modelState) bool { return same(a, b) }),
		profiles:      binding.NewItem(func(a, b *profileState) bool { return same(a, b) }),
		audit:         binding.NewItem(func(a, b *auditState) bool { return same(a, b) }),
		explainText:   binding.NewString(),
		explainMethod: binding.NewString(),
		explainClass:  binding.NewString(),
		tasks:         map[string]*task{},
		exports:       map[string]exporter{},
		recipe:        newRecipe(),
		trainChanged:  func() {},
		writeFile:     atomicfile.Write,
	}
	st.pickFolder = st.pickFolderDialog
	_ = st.status.Set("No data open yet.")
	_ = st.explainMethod.Set(methodExact)
	return st
}

// Kinds of background work. One task of each kind runs at a time; starting
// a new one cancels the old one.
const (
	taskLoad    = "load"
	taskTrain   = "train"
	taskProfile = "profile"
	taskAudit   = "audit"
	taskExplain = "explain"
	taskMask    = "mask"
)

// reporter is handed to background work to report progress; it may be
// called from any goroutine, often.
type reporter func(done, total int, what string)

// start runs work on a new goroutine with a cancellable context. When work
// returns, apply (if not nil) runs on the UI goroutine, unless a newer task of
// the same kind was started meanwhile. An error other than cancellation is
// shown in a dialog. Tasks with showInBar report to the status bar.
func (st *State) start(kind string, showInBar bool, work func(ctx context.Context, report reporter) (apply func(), err error)) {
	ctx, cancel := context.WithCancel(context.Background())
	st.mu.Lock()
	if old := st.tasks[kind]; old != nil {
		old.cancel()
	}
	st.gen++
	gen := st.gen
	st.tasks[kind] = &task{gen: gen, cancel: cancel}
	st.mu.Unlock()
	if showInBar {
		_ = st.busy.Set(true)
		_ = st.progress.Set(0)
	}
	var last time.Time
	var lastMu sync.Mutex
	report := func(done, total int, what string) {
		if !showInBar {
			return
		}
		// At most about 20 updates a second reach the window.
		lastMu.Lock()
		now := time.Now()
		skip := now.Sub(last) < 50*time.Millisecond && done < total
		if !skip {
			last = now
		}
		lastMu.Unlock()
		if skip {
			return
		}
		st.ui(func() {
			if !st.current(kind, gen) {
				return
			}
			if total > 0 {
				_ = st.progress.Set(float64(done) / float64(total))
			}
			if what != "" {
				_ = st.status.Set(what)
			}
		})
	}
	go func() {
		apply, err := work(ctx, report)
		if err == nil && ctx.Err() != nil {
			err = errCanceled
		}
		st.ui(func() {
			cur := st.current(kind, gen)
			if cur {
				st.mu.Lock()
				delete(st.tasks, kind)
				st.mu.Unlock()
				if showInBar {
					_ = st.busy.Set(st.anyBarTask())
					_ = st.progress.Set(1)
				}
			}
			if apply != nil && cur {
				apply()
			}
			switch {
			case err == nil:
			case errors.Is(err, errCanceled), errors.Is(err, context.Canceled):
				if cur && showInBar {
					_ = st.status.Set("Stopped.")
				}
			default:
				if cur {
					st.showError(err)
				}
			}
		})
	}()
}

// current reports whether the task of kind with generation gen is still the
// latest of its kind.
func (st *State) current(kind string, gen int) bool {
	st.mu.Lock()
	defer st.mu.Unlock()
	t := st.tasks[kind]
	return t != nil && t.gen == gen
}

func (st *State) anyBarTask() bool {
	st.mu.Lock()
	defer st.mu.Unlock()
	for k := range st.tasks {
		if k != taskExplain {
			return true
		}
	}
	return false
}

// running reports whether a task of kind is running.
func (st *State) running(kind string) bool {
	st.mu.Lock()
	defer st.mu.Unlock()
	return st.tasks[kind] != nil
}

// cancel stops the task of kind, if any. Its apply still runs (so a
// cancelled training keeps the best model so far).
func (st *State) cancel(kind string) {
	st.mu.Lock()
	defer st.mu.Unlock()
	if t := st.tasks[kind]; t != nil {
		t.cancel()
	}
}

// cancelAll stops every task.
func (st *State) cancelAll() {
	st.mu.Lock()
	defer st.mu.Unlock()
	for _, t := range st.tasks {
		t.cancel()
	}
}

// showError shows err in a dialog; the message says what happened and,
// coming from the lower packages, what to do.
func (st *State) showError(err error) {
	_ = st.status.Set("Error: " + err.Error())
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

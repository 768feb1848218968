package gui

import (
	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/widget"
)

// Options says what the window opens with.
type Options struct {
	// DataPath is a labeled file (CSV, TSV, JSON Lines) or a folder with one
	// sub-folder per label. Empty opens the built-in demo corpus.
	DataPath string
	// TestPath is an optional labeled test file; without it the recipe's
	// test share of the data is held out (stratified by label, seeded).
	TestPath string
	// TextCol and LabelCol name the columns; empty means auto-detect.
	TextCol, LabelCol string
	// ModelPath is a model file to open at start; empty means none.
	ModelPath string
	// DemoTrain and DemoTest are the built-in demo corpus (CSV with text and
	// label columns), used when DataPath is empty; DemoTest is its test file.
	DemoTrain, DemoTest []byte
	// StartView is the title of the view shown first (case-insensitive;
	// a unique prefix is enough). Empty shows the first view.
	StartView string
	// AutoRun, when true, does without waiting for the user what a first
	// visit would: train a model when none is opened, then profile its
	// filters and run the audit.
	AutoRun bool
	// OnReady, if not nil, runs on the UI goroutine once the start-up work
	// (loading, and with AutoRun training, profiling and the audit) has
	// finished or failed.
	OnReady func()
}

// appName heads the window title.
const appName = "telltale"

// defaultSize is the window's size at start; every view also fits a
// 1024×700 screen.
var defaultSize = fyne.NewSize(1180, 760)

// NewWindow builds the telltale window on a: views, menus, shortcuts and
// the status bar, and starts loading opts.DataPath (or the demo corpus) and
// opts.ModelPath in the background. The caller shows and runs it. quit,
// safe on any goroutine and at any time (before the toolkit runs, or after
// it stopped), stops the background work and then the toolkit's loop;
// use it for signals and timers.
func NewWindow(a fyne.App, opts Options) (w fyne.Window, quit func()) {
	w, st := newWindow(a, opts, fyne.Do)
	return w, func() {
		st.tasks.close()
		// The driver's Quit, as the toolkit's own signal handler calls it:
		// once the loop has ended, fyne.Do runs it at once and it does
		// nothing, where the app's Quit would close windows already gone.
		fyne.Do(a.Driver().Quit)
	}
}

// newWindow builds the window with ui as the UI runner (fyne.Do, or a
// test's queue).
func newWindow(a fyne.App, opts Options, ui func(func())) (fyne.Window, *State) {
	st := newState(a, opts, ui)
	w := a.NewWindow(appName)
	st.win = w
	w.SetContent(st.build())
	st.installMenus()
	w.Resize(defaultSize)
	// When the window closes, the background work stops and shows nothing
	// more: after the toolkit's loop has ended, its outcomes and progress
	// would reach widgets off the UI goroutine.
	w.SetOnClosed(st.tasks.close)
	st.startup()
	return w, st
}

// build makes the window content from the views table: views on leading
// tabs, each under its one-line intro in a frame that keeps the tabs'
// refresh on every switch away from it (viewFrame), and the status bar.
func (st *State) build() fyne.CanvasObject {
	st.specs = viewTable()
	tabs := container.NewAppTabs()
	for _, spec := range st.specs {
		v := spec.make(st)
		intro := widget.NewLabelWithStyle(spec.Intro, fyne.TextAlignLeading, fyne.TextStyle{Italic: true})
		intro.Wrapping = fyne.TextWrapWord
		tabs.Append(container.NewTabItem(spec.Title, newViewFrame(container.NewBorder(intro, nil, nil, nil, v.content()))))
	}
	tabs.SetTabLocation(container.TabLocationLeading)
	tabs.OnSelected = func(*container.TabItem) { st.win.SetTitle(appName + " — " + st.shownTitle()) }
	st.tabs = tabs
	if i := viewIndex(st.specs, st.opts.StartView); i >= 0 {
		tabs.SelectIndex(i)
	}
	st.win.SetTitle(appName + " — " + st.shownTitle())
	return container.NewBorder(nil, st.statusBar(), nil, nil, tabs)
}

// statusBar lays out what the window is doing: one line, the one progress
// figure of the window (a bar with its percentage) and a Stop button.
func (st *State) statusBar() fyne.CanvasObject {
	right := container.NewHBox(container.NewGridWrap(fyne.NewSize(200, st.bar.MinSize().Height), st.bar), st.stopBtn)
	return container.NewBorder(nil, nil, nil, right, st.statusLine)
}

// installMenus sets the main menu with the usual shortcuts.
func (st *State) installMenus() {
	mod := fyne.KeyModifierShortcutDefault
	sc := func(k fyne.KeyName, m fyne.KeyModifier) *desktop.CustomShortcut {
		return &desktop.CustomShortcut{KeyName: k, Modifier: m}
	}
	item := func(label string, s *desktop.CustomShortcut, fn func()) *fyne.MenuItem {
		it := fyne.NewMenuItem(label, fn)
		if s != nil {
			it.Shortcut = s
			st.win.Canvas().AddShortcut(s, func(fyne.Shortcut) { fn() })
		}
		return it
	}
	saveModel := item("Save model…", sc(fyne.KeyS, mod), st.saveModelDialog)
	train := item("Train", sc(fyne.KeyT, mod), st.trainNow)
	audit := item("Run the audit", sc(fyne.KeyU, mod), st.auditNow)
	file := fyne.NewMenu("File",
		item("Open data…", sc(fyne.KeyO, mod), st.openDataDialog),
		item("Open model…", sc(fyne.KeyO, mod|fyne.KeyModifierShift), st.openModelDialog),
		saveModel,
		fyne.NewMenuItemSeparator(),
		item("Export table as CSV…", sc(fyne.KeyE, mod), st.exportCSVDialog),
		item("Export view data as JSON…", sc(fyne.KeyE, mod|fyne.KeyModifierShift), st.exportJSONDialog),
	)
	run := fyne.NewMenu("Run", train, item("Stop", sc(fyne.KeyPeriod, mod), st.stopAll), audit)
	viewItems := []*fyne.MenuItem{
		item("Go to the text box", sc(fyne.KeyF, mod), func() {
			if v := st.shownView(); v != nil {
				v.focusInput()
			}
		}),
		fyne.NewMenuItemSeparator(),
	}
	for i, spec := range st.specs {
		var s *desktop.CustomShortcut
		if i < 9 {
			s = sc(fyne.KeyName(string(rune('1'+i))), mod)
		}
		title := spec.Title
		viewItems = append(viewItems, item(title, s, func() { st.show(title) }))
	}
	help := fyne.NewMenu("Help",
		fyne.NewMenuItem("Glossary", st.showGlossary),
		fyne.NewMenuItem("About telltale", st.showAbout))
	menu := fyne.NewMainMenu(file, run, fyne.NewMenu("View", viewItems...), help)
	st.win.SetMainMenu(menu)
	// Menu items that cannot work now are disabled; their shortcuts then
	// say why (each action checks for itself).
	listen(func() {
		noData, noModel := itemGet(st.data) == nil, itemGet(st.model) == nil
		saveModel.Disabled = noModel
		train.Disabled = noData || st.isRunning(taskTrain)
		audit.Disabled = noData || noModel || st.isRunning(taskAudit)
		menu.Refresh()
	}, st.data, st.model, st.running)
}

package gui

import (
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/data/binding"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/widget"
)

// Options says what the window opens with.
type Options struct {
	// DataPath is a labeled file (CSV, TSV, JSON Lines) or a folder with one
	// sub-folder per label. Empty opens the built-in demo corpus.
	DataPath string
	// TestPath is an optional held-out file; without it a stratified,
	// seeded fifth of the data is held out.
	TestPath string
	// TextCol and LabelCol name the columns; empty means auto-detect.
	TextCol, LabelCol string
	// ModelPath is a model file to open at start; empty means none.
	ModelPath string
	// DemoTrain and DemoTest are the built-in demo corpus (CSV with text and
	// label columns), used when DataPath is empty.
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

// view is one entry of the views table: a title and a constructor.
type view struct {
	Title string
	Intro string
	View  func(st *State) fyne.CanvasObject
}

// views is the table of the window's views, in tab order.
func views() []view {
	return []view{
		{"Corpus", "What the labeled data holds: class balance, text lengths, duplicates and leaks.", corpusView},
		{"Training", "The training recipe, and the run in progress.", trainView},
		{"Scorecard", "How the model does on the held-out split.", scorecardView},
		{"Filters", "What each filter of the model responds to.", filtersView},
		{"Why this label", "Why one text gets its label, token by token.", explainView},
		{"Cue audit", "Filters that may key on spurious cues, and what masking them changes.", auditView},
	}
}

// ViewTitles lists the titles of the window's views, in order; a title (or
// a unique prefix of it) is a valid Options.StartView.
func ViewTitles() []string {
	var ts []string
	for _, v := range views() {
		ts = append(ts, v.Title)
	}
	return ts
}

// NewWindow builds the telltale window on a: views, menus, shortcuts and
// the status bar, and starts loading opts.DataPath (or the demo corpus) and
// opts.ModelPath in the background. The caller shows and runs it.
func NewWindow(a fyne.App, opts Options) fyne.Window {
	w, _ := newWindow(a, opts, fyne.Do)
	return w
}

// newWindow builds the window with ui as the UI runner (fyne.Do, or a
// test's queue).
func newWindow(a fyne.App, opts Options, ui func(func())) (fyne.Window, *State) {
	st := newState(a, opts)
	st.ui = ui
	w := a.NewWindow("telltale — text classifier workbench")
	st.win = w
	w.SetContent(st.build())
	st.installMenus()
	w.Resize(fyne.NewSize(1180, 760))
	w.SetCloseIntercept(func() {
		st.cancelAll()
		w.Close()
	})
	st.startup()
	return w, st
}

// build makes the window content: views on leading tabs, and a status bar.
func (st *State) build() fyne.CanvasObject {
	st.views = views()
	tabs := container.NewAppTabs()
	for _, v := range st.views {
		head := widget.NewLabelWithStyle(v.Intro, fyne.TextAlignLeading, fyne.TextStyle{Italic: true})
		head.Wrapping = fyne.TextWrapWord
		tabs.Append(container.NewTabItem(v.Title, container.NewBorder(head, nil, nil, nil, v.View(st))))
	}
	tabs.SetTabLocation(container.TabLocationLeading)
	st.tabs = func(title string) {
		if i := viewIndex(st.views, title); i >= 0 {
			tabs.SelectIndex(i)
		}
	}
	st.selectedView = func() string { return st.views[tabs.SelectedIndex()].Title }
	if st.opts.StartView != "" {
		st.tabs(st.opts.StartView)
	}
	return container.NewBorder(nil, st.statusBar(), nil, nil, tabs)
}

// viewIndex finds the view titled t, or the only one whose title starts
// with t (case-insensitive); -1 when none or several match.
func viewIndex(vs []view, t string) int {
	t = strings.ToLower(strings.TrimSpace(t))
	found := -1
	for i, v := range vs {
		lt := strings.ToLower(v.Title)
		if lt == t {
			return i
		}
		if strings.HasPrefix(lt, t) {
			if found >= 0 {
				return -1
			}
			found = i
		}
	}
	return found
}

// statusBar shows what the window is doing, with progress and a stop button
// for the long task in the bar.
func (st *State) statusBar() fyne.CanvasObject {
	msg := widget.NewLabelWithData(st.status)
	msg.Truncation = fyne.TextTruncateEllipsis
	bar := widget.NewProgressBarWithData(st.progress)
	stop := widget.NewButton("Stop", func() {
		for _, k := range []string{taskTrain, taskProfile, taskAudit, taskLoad, taskMask} {
			st.cancel(k)
		}
	})
	stop.Disable()
	bar.Hide()
	st.busy.AddListener(binding.NewDataListener(func() {
		if b, _ := st.busy.Get(); b {
			bar.Show()
			stop.Enable()
		} else {
			bar.Hide()
			stop.Disable()
		}
	}))
	right := container.NewHBox(container.NewGridWrap(fyne.NewSize(220, bar.MinSize().Height), bar), stop)
	return container.NewBorder(nil, nil, nil, right, msg)
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
	file := fyne.NewMenu("File",
		item("Open data…", sc(fyne.KeyO, mod), st.openDataDialog),
		item("Open model…", sc(fyne.KeyO, mod|fyne.KeyModifierShift), st.openModelDialog),
		item("Save model…", sc(fyne.KeyS, mod), st.saveModelDialog),
		fyne.NewMenuItemSeparator(),
		item("Export table as CSV…", sc(fyne.KeyE, mod), st.exportCSVDialog),
		item("Export view data as JSON…", sc(fyne.KeyE, mod|fyne.KeyModifierShift), st.exportJSONDialog),
	)
	run := fyne.NewMenu("Run",
		item("Train", sc(fyne.KeyT, mod), st.trainNow),
		item("Stop", sc(fyne.KeyPeriod, mod), func() {
			for _, k := range []string{taskTrain, taskProfile, taskAudit, taskLoad, taskMask} {
				st.cancel(k)
			}
		}),
		item("Run the audit", sc(fyne.KeyU, mod), st.auditNow),
	)
	var viewItems []*fyne.MenuItem
	for i, v := range st.views {
		var s *desktop.CustomShortcut
		if i < 9 {
			s = sc(fyne.KeyName(string(rune('1'+i))), mod)
		}
		title := v.Title
		viewItems = append(viewItems, item(title, s, func() { st.tabs(title) }))
	}
	help := fyne.NewMenu("Help", fyne.NewMenuItem("About telltale", st.showAbout))
	st.win.SetMainMenu(fyne.NewMainMenu(file, run, fyne.NewMenu("View", viewItems...), help))
}

// Caution is the note every explanation carries.
const Caution = "Explanations describe the model, not the world. Validate a model on data of your own before use, " +
	"never use it alone for decisions about people, and defer to the rules of the place where it is used."

// cautionShort is the one-line form shown on the explain view.
const cautionShort = "These numbers describe the model, not the world: validate before use and follow the rules where it is used."

func (st *State) showAbout() {
	body := widget.NewLabel("telltale trains a one-dimensional convolutional text classifier (Kim 2014) on your labeled data, " +
		"shows what each filter responds to, explains why a text gets its label, and looks for filters that key on spurious cues.\n\n" +
		"Caution. " + Caution)
	body.Wrapping = fyne.TextWrapWord
	d := dialog.NewCustom("About telltale", "Close", container.NewGridWrap(fyne.NewSize(460, 220), body), st.win)
	d.Show()
}

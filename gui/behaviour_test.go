package gui

import (
	"slices"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"telltale/internal/glossary"
	"telltale/internal/testref"
	"telltale/internal/version"
)

// Typing a text explains one text at a time: however fast the keys come,
// at most one explanation runs, and the last text typed is the one shown.
func TestTypingExplainsOneTextAtATime(t *testing.T) {
	_, st, q := sharedLeanWindow(t, smallScreen)
	wv := st.whyView
	wv.entry.SetText("")
	q.drain()
	text := "Dear crew, my bag with two passports was left on the upper deck of the morning ferry"
	test.Type(wv.entry, text)
	q.waitFor(t, "the explanation of the whole text", func() bool {
		return wv.shown != nil && wv.shown.Text == text && wv.shown.E != nil
	})
	if got := st.tasks.most(taskExplain); got != 1 {
		t.Errorf("%d explanations ran at once while typing %d characters, want 1", got, len(text))
	}
}

// Clicking a row that opens its subject in another view (a filter that
// fired, in Why this label) switches views only once the clicked table has
// taken the keyboard focus (it cannot once it is off screen: the toolkit
// then logs "Failed to focus object which is not part of the canvas'
// content"), and the other view shows and selects that subject. The
// window has a model and an explained text (the audit plays no part).
func TestClickingARowOpensItsView(t *testing.T) {
	w, st, q := explainedWindow(t, smallScreen)
	st.show(titleWhy)
	q.drain()
	wv := st.whyView
	tbl := wv.fired.table
	if len(wv.fired.order) == 0 {
		t.Fatal("no filter fired on the explained text")
	}
	want := wv.firedRows[wv.fired.visible(0)].Filter
	header := tbl.CreateHeader().MinSize().Height
	row := widget.NewLabel("0").MinSize().Height
	test.TapAt(tbl, fyne.NewPos(20, header+row/2+2))
	if w.Canvas().Focused() != tbl {
		t.Errorf("the clicked table did not get the keyboard focus (focus: %T)", w.Canvas().Focused())
	}
	if got := st.shownTitle(); got != titleFilters {
		t.Fatalf("after the click the window shows %s, want %s", got, titleFilters)
	}
	fv := st.filtersView
	if fv.shown == nil || fv.shown.Filter != want || fv.list.selected != want {
		t.Errorf("Filters shows filter %v with row %d selected, want filter %d in both", fv.shown, fv.list.selected, want)
	}

	// Back in Why this label, the same row (still selected) leads to
	// Filters again.
	st.show(titleWhy)
	q.drain()
	test.TapAt(tbl, fyne.NewPos(20, header+row/2+2))
	if got := st.shownTitle(); got != titleFilters {
		t.Errorf("a second click on the same row left the window on %s, want %s", got, titleFilters)
	}
}

// Every view says what to do when there is nothing to show, and the buttons
// that cannot work are disabled instead of failing with a dialog.
func TestEmptyStates(t *testing.T) {
	a := test.NewTempApp(t)
	q := &queue{}
	w, st := newWindow(a, Options{}, q.post) // no data, no demo corpus
	w.Resize(smallScreen)
	q.waitFor(t, "the failed start", func() bool { return st.tasks.idle(taskLoad) })
	q.drain()
	for _, c := range []struct {
		what string
		ok   bool
	}{
		{"Train is disabled without data", st.trainingView.trainBtn.Disabled()},
		{"Run the audit is disabled without a model", st.auditView.runBtn.Disabled()},
		{"Next test text is disabled without a model", st.whyView.next.Disabled()},
		{"Results says how to get a model", strings.Contains(st.resultsView.empty.Text, "train a model")},
		{"Filters says how to get a model", strings.Contains(st.filtersView.empty.Text, "train a model")},
		{"Why this label says how to get a model", strings.Contains(st.whyView.verdict.Text, "No model yet")},
		{"Cue audit says how to get a model", strings.Contains(st.auditView.empty.Text, "No model yet")},
		{"Corpus says how to open data", strings.Contains(st.corpusView.source.Text, "Open data")},
		{"Run › Train is disabled without data", menuItem(w, "Run", "Train").Disabled},
		{"Run › Run the audit is disabled without a model", menuItem(w, "Run", "Run the audit").Disabled},
		{"File › Save model is disabled without a model", menuItem(w, "File", "Save model…").Disabled},
	} {
		if !c.ok {
			t.Error(c.what)
		}
	}
}

// A new run starts with an empty epoch table and empty curves, and the
// Training view has no progress figure of its own: the status bar's bar is
// the window's one progress figure.
func TestNewRunStartsClean(t *testing.T) {
	_, st, q := leanWindow(t, smallScreen)
	tv := st.trainingView
	if len(tv.epochs.rows) == 0 {
		t.Fatal("the finished run shows no epochs")
	}
	st.trainNow()
	if len(tv.epochs.rows) != 0 {
		t.Errorf("a new run shows %d epochs of the old one", len(tv.epochs.rows))
	}
	st.cancel(taskTrain)
	q.waitFor(t, "the stopped run", func() bool { return st.tasks.idle(taskTrain) })
	q.drain()
	var bars int
	walkObjects(tv.content(), func(o fyne.CanvasObject) {
		if _, ok := o.(*widget.ProgressBar); ok {
			bars++
		}
	})
	if bars != 0 {
		t.Errorf("the Training view has %d progress bars of its own", bars)
	}
	// The epoch table says that the dev split chose the epoch, as train
	// heads the dev split's figures.
	captioned := false
	walkObjects(tv.content(), func(o fyne.CanvasObject) {
		if l, ok := o.(*widget.Label); ok && strings.Contains(l.Text, "dev split, used to choose the epoch") {
			captioned = true
		}
	})
	if !captioned {
		t.Error("the Training view does not say that the dev split chose the epoch")
	}
}

// menuItem finds an item of the window's main menu.
func menuItem(w fyne.Window, menu, label string) *fyne.MenuItem {
	for _, m := range w.MainMenu().Items {
		if m.Label == menu {
			for _, it := range m.Items {
				if it.Label == label {
					return it
				}
			}
		}
	}
	panic("no menu item " + menu + " › " + label)
}

// walkObjects calls fn on o and everything inside it.
func walkObjects(o fyne.CanvasObject, fn func(fyne.CanvasObject)) {
	fn(o)
	switch c := o.(type) {
	case *fyne.Container:
		for _, k := range c.Objects {
			walkObjects(k, fn)
		}
	case fyne.Widget:
		for _, k := range test.WidgetRenderer(c).Objects() {
			walkObjects(k, fn)
		}
	}
}

// Help › About names the version and the three cautions; Help › Glossary
// lists every term of internal/glossary.
func TestHelp(t *testing.T) {
	testref.SequentialSkipInRace(t, "the Help menu's About text and Glossary dialog (no task, the UI run in place)")
	a := test.NewTempApp(t)
	st := newState(a, Options{}, func(f func()) { f() })
	st.win = a.NewWindow("help")
	st.win.SetContent(st.build())
	st.win.Resize(smallScreen)
	about := aboutText()
	for _, want := range []string{version.String(), "describe the model, not the world", "Validate", "rules of the place"} {
		if !strings.Contains(about, want) {
			t.Errorf("About lacks %q", want)
		}
	}
	st.showGlossary()
	top := st.win.Canvas().Overlays().Top()
	if top == nil {
		t.Fatal("Help › Glossary showed nothing")
	}
	var entries []string
	walkObjects(top, func(o fyne.CanvasObject) {
		if r, ok := o.(*widget.RichText); ok {
			entries = append(entries, r.String())
		}
	})
	for _, term := range glossary.Terms {
		want := term.Name + ": " + term.Meaning + " " + term.Formula
		if !slices.Contains(entries, want) {
			t.Errorf("the glossary dialog lacks %q", want)
		}
	}
}

// The views that judge a model or a label (Why this label, Results, Cue
// audit) carry the caution about decisions about people, on screen.
func TestCautionAboutPeople(t *testing.T) {
	testref.SequentialSkipInRace(t, "the views' cautions (no task, the UI run in place)")
	a := test.NewTempApp(t)
	st := newState(a, Options{}, func(f func()) { f() })
	st.win = a.NewWindow("cautions")
	st.win.SetContent(st.build())
	st.win.Resize(smallScreen)
	for _, view := range []string{titleWhy, titleResults, titleAudit} {
		st.show(view)
		if m := test.RenderToMarkup(st.win.Canvas()); !strings.Contains(m, "alone for decisions about people") {
			t.Errorf("%s shows no caution about decisions about people", view)
		}
	}
}

// A text sent to Why this label from another view is painted for its
// predicted label, not for the label chosen for the text shown before.
func TestExplainThisPaintsThePredictedLabel(t *testing.T) {
	_, st, q := sharedLeanWindow(t, smallScreen)
	labels := itemGet(st.model).Model.Labels
	st.show(titleWhy)
	st.whyView.class.SetSelected(labels[1])
	q.drain()
	st.explainThis(itemGet(st.data).Test.Examples[3].Text, nil)
	q.drain()
	if got := st.whyView.class.Selected; got != classPredicted {
		t.Errorf("a text sent from elsewhere is painted for %q, want %q", got, classPredicted)
	}
}

// The Filters view's profile follows the list through a search: a search
// that keeps the selected filter keeps it on show, one that hides it
// selects and shows the first filter listed, one that lists nothing says
// so instead of showing a filter the list no longer holds, and clearing the
// search shows a listed filter again.
func TestFilterSearchFollowsTheSelection(t *testing.T) {
	_, st, q := sharedLeanWindow(t, smallScreen)
	st.show(titleFilters)
	q.drain()
	fv := st.filtersView
	shown := func() int { // the filter on show, -1 for none
		if fv.shown == nil {
			return -1
		}
		return fv.shown.Filter
	}
	consistent := func(when string) {
		t.Helper()
		if shown() < 0 || fv.list.selected != shown() || !slices.Contains(fv.list.order, fv.list.selected) {
			t.Fatalf("%s: the pane shows filter %d, the list selects row %d of %d listed", when, shown(), fv.list.selected, len(fv.list.order))
		}
	}
	consistent("before a search")
	first := fv.shown.Filter
	// Its own label keeps it listed, and on show.
	fv.query.SetText(fv.shown.Label)
	consistent("a search that keeps it")
	if fv.shown.Filter != first {
		t.Errorf("a search that keeps filter %d listed shows filter %d", first, fv.shown.Filter)
	}
	// A label of the model that the filter's row does not hold hides it.
	hid := false
	for _, l := range itemGet(st.model).Model.Labels {
		if rowMatches(fv.list.rows[first], strings.ToLower(l)) {
			continue
		}
		fv.query.SetText(l)
		if len(fv.list.order) == 0 {
			continue
		}
		hid = true
		consistent("a search that hides it (" + l + ")")
		if fv.shown.Filter == first || fv.list.selected != fv.list.visible(0) {
			t.Errorf("search %q: the pane shows filter %d, want the first listed, %d", l, fv.shown.Filter, fv.list.visible(0))
		}
		break
	}
	if !hid {
		t.Fatalf("no label hides filter %d from the list", first)
	}
	fv.query.SetText("no filter reads this")
	if len(fv.list.order) != 0 {
		t.Fatalf("a search for nothing lists %d filters", len(fv.list.order))
	}
	if shown() >= 0 || !strings.Contains(fv.title.Text, "No filter") || len(fv.ngramChips()) != 0 {
		t.Errorf("with no filter listed the pane shows filter %d, titled %q, with %d chips", shown(), fv.title.Text, len(fv.ngramChips()))
	}
	fv.query.SetText("")
	consistent("the search cleared")
}

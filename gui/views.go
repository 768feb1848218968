package gui

import (
	"strings"

	"fyne.io/fyne/v2"
)

// view is what the window asks of every view. Each view is a struct that
// holds its widgets and its own state, built once by its constructor
// (newCorpusView …), and follows the State's bound values by itself.
type view interface {
	// content is the view's widget tree.
	content() fyne.CanvasObject
	// exportTable is the table File › Export table as CSV writes; nil
	// when the view has none yet.
	exportTable() *sheet
	// exportData is what File › Export view data as JSON writes; nil when
	// there is nothing yet.
	exportData() any
	// focusInput puts the keyboard focus in the view's text box, when it
	// has one (Ctrl+F).
	focusInput()
}

// viewSpec is one entry of the views table.
type viewSpec struct {
	Title string
	Intro string // one line under the title: what the view is for
	make  func(st *State) view
}

// Titles of the views, as the command line's --view and the menus name them.
const (
	titleCorpus   = "Corpus"
	titleTraining = "Training"
	titleResults  = "Results"
	titleFilters  = "Filters"
	titleWhy      = "Why this label"
	titleAudit    = "Cue audit"
)

// viewTable is the window's views, in tab order. Each entry builds its
// view and keeps the typed pointer in the State.
func viewTable() []viewSpec {
	return []viewSpec{
		{titleCorpus, "What the labeled data holds: the three splits, class balance, text lengths, duplicates and leaks.",
			func(st *State) view { st.corpusView = newCorpusView(st); return st.corpusView }},
		{titleTraining, "The training recipe, and the run in progress.",
			func(st *State) view { st.trainingView = newTrainingView(st); return st.trainingView }},
		{titleResults, "How the model does on the test split, which took no part in training. " + cautionPeople,
			func(st *State) view { st.resultsView = newResultsView(st); return st.resultsView }},
		{titleFilters, "What each filter of the model responds to, over the training split. Margins, thresholds and activations are in log-odds.",
			func(st *State) view { st.filtersView = newFiltersView(st); return st.filtersView }},
		{titleWhy, "Why one text gets its label, token by token.",
			func(st *State) view { st.whyView = newWhyView(st); return st.whyView }},
		{titleAudit, "The cues the model relies on that look like how its data was collected, and what to do. " + cautionPeople,
			func(st *State) view { st.auditView = newAuditView(st); return st.auditView }},
	}
}

// ViewTitles lists the titles of the window's views, in order; a title (or
// a unique prefix of it) is a valid Options.StartView.
func ViewTitles() []string {
	var ts []string
	for _, v := range viewTable() {
		ts = append(ts, v.Title)
	}
	return ts
}

// viewIndex finds the view titled t, or the only one whose title starts
// with t (case-insensitive); -1 when none or several match.
func viewIndex(vs []viewSpec, t string) int {
	t = strings.ToLower(strings.TrimSpace(t))
	if t == "" {
		return -1
	}
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

// views returns the built views in tab order.
func (st *State) views() []view {
	return []view{st.corpusView, st.trainingView, st.resultsView, st.filtersView, st.whyView, st.auditView}
}

// show selects the view titled title.
func (st *State) show(title string) {
	if i := viewIndex(st.specs, title); i >= 0 && st.tabs != nil {
		st.tabs.SelectIndex(i)
	}
}

// showFrom selects the view titled title from a row of sheet from (nil:
// not from a sheet), once the click on that row is done (sheetTable).
func (st *State) showFrom(from *sheet, title string) {
	if from == nil {
		st.show(title)
		return
	}
	from.table.afterClick(func() { st.show(title) })
}

// shownTitle is the title of the view on screen.
func (st *State) shownTitle() string {
	if st.tabs == nil {
		return ""
	}
	return st.specs[st.tabs.SelectedIndex()].Title
}

// shownView is the view on screen.
func (st *State) shownView() view {
	if st.tabs == nil {
		return nil
	}
	return st.views()[st.tabs.SelectedIndex()]
}

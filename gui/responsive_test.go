package gui

import (
	"testing"
)

// Switching views redraws nothing of the views left hidden: the toolkit's
// tabs refresh every tab's whole content on each switch, which made every
// switch redraw all six views (every cell of every table) on the UI
// goroutine. The window has a model and an explained text.
func TestSwitchingViewsLeavesHiddenViewsAlone(t *testing.T) {
	_, st, q := explainedWindow(t, smallScreen)
	for _, title := range []string{titleResults, titleFilters, titleWhy} {
		st.show(title) // each laid out on screen once
		q.drain()
	}
	hidden := map[string]*sheet{
		titleResults: st.resultsView.exportTable(),
		titleFilters: st.filtersView.list,
	}
	for title, s := range hidden {
		if s == nil || len(s.rows) == 0 {
			t.Fatalf("the %s view has no table rows to watch", title)
		}
		s.cellUpdates = 0
	}
	st.show(titleCorpus)
	st.show(titleWhy)
	q.drain()
	for title, s := range hidden {
		if s.cellUpdates != 0 {
			t.Errorf("switching Why this label → Corpus → Why this label updated %d cells of the hidden %s view's table, want 0",
				s.cellUpdates, title)
		}
	}
}

// Opening a filter from a row of another view redraws the filter list no
// more than what four redraws of the cells on screen write: the toolkit's
// table redraws twice as it scrolls to the filter's row (Table.Select: the
// scroll and its end) and once as the view comes on screen. The click used
// to re-sort and redraw the list about nine times over on the UI goroutine
// when there was no search to clear.
func TestShowingAFilterRedrawsTheListFewTimes(t *testing.T) {
	_, st, q := explainedWindow(t, smallScreen)
	fv := st.filtersView
	st.show(titleFilters)
	q.drain()
	st.show(titleWhy)
	q.drain()
	g := fv.list.visible(len(fv.list.order) - 1) // the list's last row, off screen
	fv.list.cellUpdates = 0
	st.showFilter(g, nil)
	q.drain()
	got := fv.list.cellUpdates
	if fv.shown == nil || fv.shown.Filter != g || fv.list.selected != g {
		t.Fatalf("Filters shows %v with row %d selected, want filter %d", fv.shown, fv.list.selected, g)
	}
	fv.list.cellUpdates = 0
	fv.list.table.Refresh()
	onScreen := fv.list.cellUpdates // the cells one redraw updates there
	if onScreen == 0 {
		t.Fatal("a redraw of the filter list updated no cell")
	}
	if got > 4*onScreen {
		t.Errorf("opening filter %d updated %d cells of the filter list, want at most four redraws of %d", g, got, onScreen)
	}

	// A search that hides the filter is cleared, box and list.
	st.show(titleWhy)
	fv.query.SetText("no filter reads this")
	if len(fv.list.order) != 0 {
		t.Fatalf("the search left %d rows, want none", len(fv.list.order))
	}
	st.showFilter(g, nil)
	q.drain()
	if fv.query.Text != "" || len(fv.list.order) != len(fv.list.rows) || fv.shown.Filter != g || fv.list.selected != g {
		t.Errorf("after opening filter %d: search %q, %d of %d rows listed, filter %d shown, row %d selected",
			g, fv.query.Text, len(fv.list.order), len(fv.list.rows), fv.shown.Filter, fv.list.selected)
	}
}

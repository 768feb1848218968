package gui

import (
	"testing"
	"time"
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

// A notice that the text changed, when it did not (the text box's queued
// notices arrive after the text has settled, each reading the latest
// text), neither restarts the explanation in progress nor explains the
// text on screen again: the restarts made a text sent from another view
// wait for several explanations before its own.
func TestRepeatedNoticesExplainOnce(t *testing.T) {
	_, st, q := explainedWindow(t, smallScreen)
	wv := st.whyView
	before := st.tasks.started(taskExplain)
	for range 3 {
		wv.update() // the text on screen, already explained
	}
	q.drain()
	if got := st.tasks.started(taskExplain) - before; got != 0 {
		t.Errorf("three notices for the text already explained started %d explanations, want 0", got)
	}

	text := "Is the 15:55 from Carrowmere still running on Sundays in winter?"
	before = st.tasks.started(taskExplain)
	_ = st.explainText.Set(text)
	for range 3 {
		wv.update() // notices arriving while its explanation runs
	}
	q.waitFor(t, "the new text's explanation", func() bool {
		return wv.shown != nil && wv.shown.Text == text && wv.shown.E != nil
	})
	if got := st.tasks.started(taskExplain) - before; got != 1 {
		t.Errorf("a new text and its repeated notices started %d explanations, want 1", got)
	}

	// Notices arriving once the explanation is done but still waits on the
	// UI goroutine's queue to be shown.
	text = "I left a blue rucksack on the upper deck"
	before = st.tasks.started(taskExplain)
	_ = st.explainText.Set(text)
	for !st.tasks.idle(taskExplain) { // its goroutine ends; nothing drained
		time.Sleep(5 * time.Millisecond)
	}
	for range 3 {
		wv.update()
	}
	q.waitFor(t, "the queued explanation", func() bool {
		return wv.shown != nil && wv.shown.Text == text && st.tasks.idle(taskExplain)
	})
	if got := st.tasks.started(taskExplain) - before; got != 1 {
		t.Errorf("notices for a text whose explanation was done and queued started %d explanations, want 1", got)
	}

	// Words typed and taken back before their explanation came: the
	// explanation on screen stays, and is not made again.
	shown := wv.shown
	before = st.tasks.started(taskExplain)
	_ = st.explainText.Set(text + " And in summer?")
	_ = st.explainText.Set(text)
	q.waitFor(t, "the explanations to end", func() bool { return st.tasks.idle(taskExplain) })
	if got := st.tasks.started(taskExplain) - before; got != 1 {
		t.Errorf("typing and taking back started %d explanations, want 1 (of the text typed)", got)
	}
	if wv.shown != shown {
		t.Errorf("after the words were taken back the view shows an explanation of %q, want the one it showed", wv.shown.Text)
	}
}

// Filling a table with new rows draws its cells once: the toolkit redraws a
// table on every column width set and every scroll, and a new set of rows
// sets the widths of all its columns and scrolls it to the top left (the
// filter list, emptied and filled again, was drawn four times over).
func TestNewRowsAreDrawnOnce(t *testing.T) {
	_, st, q := explainedWindow(t, smallScreen)
	list := st.filtersView.list
	st.show(titleFilters)
	q.drain()
	list.cellUpdates = 0
	list.table.Refresh()
	onScreen := list.cellUpdates // the cells one redraw updates
	if onScreen == 0 {
		t.Fatal("a redraw of the filter list updated no cell")
	}
	rows := list.rows
	list.cellUpdates = 0
	list.setRows(nil) // no rows: no cell to draw
	list.setRows(rows)
	if got := list.cellUpdates; got != onScreen {
		t.Errorf("emptying and filling the filter list updated %d cells, want one redraw's %d", got, onScreen)
	}
	if len(list.order) != len(rows) || list.selected != -1 {
		t.Errorf("after new rows the list shows %d of %d rows with row %d selected, want all and none", len(list.order), len(rows), list.selected)
	}
}

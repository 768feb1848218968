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

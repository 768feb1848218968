package gui

import (
	"fmt"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"
)

// The least screen the window must fit, and the two sizes the screenshots
// are taken at (DEVELOPERS.md: the window fits 1024×700).
var (
	smallScreen = fyne.NewSize(1024, 700)
	largeScreen = fyne.NewSize(1366, 900)
)

// menuBar is the height the desktop driver's in-window menu bar takes on
// Linux, which the software driver does not draw.
const menuBar = 40

// widest describes the chain of objects that makes o wider than w.
func widest(o fyne.CanvasObject, w float32) string {
	var path []string
	for {
		path = append(path, fmt.Sprintf("%T(%.0f)", o, o.MinSize().Width))
		var kids []fyne.CanvasObject
		switch c := o.(type) {
		case *fyne.Container:
			kids = c.Objects
		case *container.AppTabs:
			for _, it := range c.Items {
				kids = append(kids, it.Content)
			}
		case fyne.Widget:
			kids = test.WidgetRenderer(c).Objects()
		}
		var next fyne.CanvasObject
		for _, k := range kids {
			if k.MinSize().Width > w/2 && (next == nil || k.MinSize().Width > next.MinSize().Width) {
				next = k
			}
		}
		if next == nil {
			if l, ok := o.(*widget.Label); ok {
				path = append(path, fmt.Sprintf("%q", l.Text))
			}
			return strings.Join(path, " > ")
		}
		o = next
	}
}

// loadedWindow is trainedWindow with the audit run and a text explained,
// so every view has all it can show.
func loadedWindow(t *testing.T, size fyne.Size) (fyne.Window, *State, *queue) {
	t.Helper()
	w, st, q := trainedWindow(t, size)
	st.auditNow()
	q.waitFor(t, "the audit", func() bool { return itemGet(st.audit) != nil })
	explainDeckhand(t, st, q)
	return w, st, q
}

// explainedWindow is sharedLeanWindow with a text explained (loadedWindow
// without the audit and the linear baseline).
func explainedWindow(t *testing.T, size fyne.Size) (fyne.Window, *State, *queue) {
	t.Helper()
	w, st, q := sharedLeanWindow(t, size)
	explainDeckhand(t, st, q)
	return w, st, q
}

// explainDeckhand types a complaint with the planted stamp into Why this
// label and waits for its explanation.
func explainDeckhand(t *testing.T, st *State, q *queue) {
	t.Helper()
	_ = st.explainText.Set("The deckhand was not friendly at all and my refund never came. TKREF-12345")
	q.waitFor(t, "the explanation", func() bool {
		e := st.whyView.shown
		return e != nil && e.E != nil && strings.HasPrefix(e.Text, "The deckhand")
	})
}

// TestEveryViewFits: at 1024×700 and 1366×900 every view fits the window
// (its least size is within the screen, less the menu bar) and nothing on
// screen is cut: no label, button or choice shows less than its text, and
// nothing outside a scrolled area reaches past the window's edge; and every
// tab of the Cue audit view fits too (checkAuditViewFits). All the checks
// look at one loaded window, opened at the smaller size and resized to
// each size before every check (checkFits), as a person resizes it: the
// model, audit and explanation are the window's content, not what is
// checked, so they are made once.
func TestEveryViewFits(t *testing.T) {
	if testing.Short() {
		t.Skip("trains a model and runs the audit; the race pass (make test-race) runs -short")
	}
	w, st, q := loadedWindow(t, smallScreen)
	for _, size := range []fyne.Size{smallScreen, largeScreen} {
		t.Run(fmt.Sprintf("%.0fx%.0f", size.Width, size.Height), func(t *testing.T) {
			t.Run("views", func(t *testing.T) { checkViewsFit(t, w, st, q, size) })
			t.Run("audit tabs", func(t *testing.T) { checkAuditViewFits(t, w, st, q, size) })
		})
	}
}

// checkViewsFit: at the window's size every view fits the window and
// nothing on screen is cut.
func checkViewsFit(t *testing.T, w fyne.Window, st *State, q *queue, size fyne.Size) {
	for i, spec := range st.specs {
		st.tabs.SelectIndex(i)
		checkFits(t, w, q, size, spec.Title)
	}
}

// checkFits drains the queue, then checks that what the window shows (named
// what) fits a window of the given size, below the menu bar, and that
// nothing on screen is cut.
func checkFits(t *testing.T, w fyne.Window, q *queue, size fyne.Size, what string) {
	t.Helper()
	room := fyne.NewSize(size.Width, size.Height-menuBar)
	q.drain()
	w.Resize(room)
	if m := w.Content().MinSize(); m.Width > room.Width || m.Height > room.Height {
		t.Errorf("%s needs %.0f×%.0f, more than %.0f×%.0f: %s", what, m.Width, m.Height, room.Width, room.Height,
			widest(w.Content(), room.Width))
	}
	for _, c := range cutOff(w.Canvas()) {
		t.Errorf("%s at %.0f×%.0f: %s", what, size.Width, size.Height, c)
	}
}

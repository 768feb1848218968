package gui

import (
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
)

// A table whose columns of texts would push the titles after them out of
// its room (Filters › Slots at 1366×900) narrows those columns, down to
// their titles' width, until every title is seen whole; the texts cut so
// are shown whole in the detail line. A table too narrow even then keeps
// its texts whole and scrolls sideways, and room given back widens the
// columns again.
func TestTextColumnsMakeRoomForTitles(t *testing.T) {
	test.NewTempApp(t)
	s := newSheet("slot", "trigger words (slot score)", "suppressor words (slot score)").wide(1, capText).wide(2, capText)
	long := strings.Repeat("trigger +0.031, ", 40)
	s.setRows([][]string{{"0", long, long}, {"1", "short", "short"}})
	natural := s.widths[1]
	fits := func(room float32) bool {
		need := sheetChrome(3) + s.widths[0] + s.widths[1] + titleWidth(s.cols[2])
		return need <= room+0.5
	}
	layout := func(room float32) {
		s.box.Resize(fyne.NewSize(room, 300))
	}

	room := sheetChrome(3) + s.widths[0] + natural + titleWidth(s.cols[2]) - 100
	layout(room)
	if !fits(room) {
		t.Errorf("room %.0f: columns %v leave no room for the last title (%.0f)", room, s.widths, titleWidth(s.cols[2]))
	}
	if s.widths[1] >= natural || s.widths[1] < titleWidth(s.cols[1]) {
		t.Errorf("room %.0f: the trigger column is %.0f wide, want less than %.0f and no less than its title (%.0f)",
			room, s.widths[1], natural, titleWidth(s.cols[1]))
	}
	if s.shownLast < titleWidth(s.cols[2]) {
		t.Errorf("room %.0f: the last column is %.0f wide, narrower than its title (%.0f)", room, s.shownLast, titleWidth(s.cols[2]))
	}
	s.selectRow(0)
	if !strings.Contains(s.detail.Text, "trigger words (slot score): "+oneLine(long)) {
		t.Errorf("the narrowed column's cut text is not in the detail line: %q", s.detail.Text)
	}

	// Too narrow even with the texts at their titles' width: they stay whole.
	layout(sheetChrome(3) + s.widths[0] + titleWidth(s.cols[1]) + titleWidth(s.cols[2]) - 20)
	if s.widths[1] != natural {
		t.Errorf("a table that scrolls anyway narrowed its texts to %.0f (natural %.0f)", s.widths[1], natural)
	}

	// Room again.
	layout(2000)
	if s.widths[1] != natural {
		t.Errorf("with room enough the trigger column is %.0f wide, want %.0f", s.widths[1], natural)
	}
}

package gui

import (
	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"
)

// factList shows rows of (name, value, what it is) as wrapped lines, so a
// long explanation is never cut: the name and value in bold, then the
// explanation.
type factList struct {
	rows [][]string
	box  *fyne.Container
	view fyne.CanvasObject
}

func newFactList() *factList {
	f := &factList{box: container.NewVBox()}
	f.view = container.NewVScroll(f.box)
	return f
}

// set shows rows; each row is a name, a value and, optionally, what it is.
func (f *factList) set(rows [][]string) {
	f.rows = rows
	f.box.Objects = nil
	for _, r := range rows {
		segs := []widget.RichTextSegment{
			&widget.TextSegment{Text: r[0] + "  ", Style: widget.RichTextStyleStrong},
			&widget.TextSegment{Text: r[1], Style: widget.RichTextStyle{Inline: true, TextStyle: fyne.TextStyle{Bold: true, Monospace: false}}},
		}
		if len(r) > 2 && r[2] != "" {
			segs = append(segs, &widget.TextSegment{Text: "  —  " + r[2], Style: widget.RichTextStyleInline})
		}
		t := widget.NewRichText(segs...)
		t.Wrapping = fyne.TextWrapWord
		f.box.Add(t)
	}
	f.box.Refresh()
	if s, ok := f.view.(*container.Scroll); ok {
		s.ScrollToTop()
	}
}

package gui

import (
	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/widget"
)

// viewFrame holds one view in a tab of the window and lets the refresh the
// tabs send on a switch of views reach the view coming on screen only, once.
//
// On every switch the toolkit's tabs (container.AppTabs, its SelectIndex)
// refresh the whole content of every tab, shown or hidden: each label lays
// out its text again and each table writes every cell again, all on the UI
// goroutine, six views' worth for one switch. A hidden view needs none of
// it: it refreshes what it changes when it changes it, and a theme change
// reaches it through the toolkit's own walk over every object of the
// window, which refreshes each one itself. The view coming on screen is
// refreshed whole once, as before, so that layouts its hidden changes left
// behind are brought up to date.
type viewFrame struct {
	widget.BaseWidget
	content fyne.CanvasObject
	fresh   bool // refreshed since it last came on screen
}

// newViewFrame frames content, which must not be nil.
func newViewFrame(content fyne.CanvasObject) *viewFrame {
	f := &viewFrame{content: content}
	f.ExtendBaseWidget(f)
	return f
}

func (f *viewFrame) CreateRenderer() fyne.WidgetRenderer {
	return widget.NewSimpleRenderer(f.content)
}

// Refresh refreshes the view if it is on screen and was not refreshed since
// it came there, and asks the window to draw again.
func (f *viewFrame) Refresh() {
	if f.Visible() && !f.fresh {
		f.fresh = true
		f.content.Refresh()
	}
	canvas.Refresh(f)
}

// Hide takes the view off screen; it is refreshed when it comes back.
func (f *viewFrame) Hide() {
	f.fresh = false
	f.BaseWidget.Hide()
}

package gui

import (
	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// atLeast lays out one object over the whole room, asking for at least
// width and height.
type atLeast struct{ width, height float32 }

func (l *atLeast) Layout(objs []fyne.CanvasObject, size fyne.Size) {
	for _, o := range objs {
		o.Move(fyne.Position{})
		o.Resize(size)
	}
}

func (l *atLeast) MinSize(objs []fyne.CanvasObject) fyne.Size {
	m := fyne.Size{}
	for _, o := range objs {
		m = m.Max(o.MinSize())
	}
	return m.Max(fyne.NewSize(l.width, l.height))
}

// choice is a select wide enough for its longest option.
type choice struct {
	*widget.Select
	box *fyne.Container
	lay *atLeast
}

func newChoice(options []string, changed func(string)) *choice {
	c := &choice{Select: widget.NewSelect(options, changed), lay: &atLeast{}}
	c.box = container.New(c.lay, c.Select)
	c.fit()
	return c
}

// setOptions replaces the options and widens the choice for them.
func (c *choice) setOptions(options []string) {
	c.SetOptions(options)
	c.fit()
}

func (c *choice) fit() {
	w := float32(0)
	for _, o := range append([]string{c.PlaceHolder}, c.Options...) {
		w = max(w, fyne.MeasureText(o, theme.TextSize(), fyne.TextStyle{}).Width)
	}
	c.lay.width = w + 2*theme.InnerPadding() + theme.IconInlineSize() + 2*theme.Padding()
	c.box.Refresh()
}

// tall asks for at least height for o.
func tall(o fyne.CanvasObject, height float32) fyne.CanvasObject {
	return container.New(&atLeast{height: height}, o)
}

package gui

import (
	"fmt"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// cutOff lists what the canvas shows cut: a one-line label, button or
// choice narrower than its text, or an object outside a scrolled area that
// reaches past the canvas's edge. Tables are left out: their columns are
// sized to their cells (sheet.fitColumns) and a cell cut at a column's cap
// is shown whole in the sheet's detail line.
func cutOff(c fyne.Canvas) []string {
	var cut []string
	size := c.Size()
	var walk func(o fyne.CanvasObject, pos fyne.Position, scrolled bool)
	walk = func(o fyne.CanvasObject, pos fyne.Position, scrolled bool) {
		if !o.Visible() {
			return
		}
		p := pos.Add(o.Position())
		if !scrolled && (p.X+o.Size().Width > size.Width+1 || p.Y+o.Size().Height > size.Height+1) {
			cut = append(cut, fmt.Sprintf("%T at %.0f,%.0f size %.0f×%.0f reaches past the window", o, p.X, p.Y, o.Size().Width, o.Size().Height))
			return
		}
		if s := textCut(o); s != "" {
			cut = append(cut, s)
		}
		switch w := o.(type) {
		case *widget.Table, *sheetTable, *widget.List:
			return
		case *container.Scroll:
			walk(w.Content, p.Subtract(w.Offset), true)
			return
		case *fyne.Container:
			for _, k := range w.Objects {
				walk(k, p, scrolled)
			}
		case fyne.Widget:
			for _, k := range test.WidgetRenderer(w).Objects() {
				walk(k, p, scrolled)
			}
		}
	}
	walk(c.Content(), fyne.Position{}, false)
	return cut
}

// textCut reports a one-line text shown in less room than it needs.
func textCut(o fyne.CanvasObject) string {
	need := func(s string, style fyne.TextStyle) float32 {
		return fyne.MeasureText(s, theme.TextSize(), style).Width + 2*theme.InnerPadding()
	}
	switch w := o.(type) {
	case *widget.Label:
		if w.Wrapping == fyne.TextWrapOff && w.Text != "" && need(w.Text, w.TextStyle) > w.Size().Width+1 {
			return fmt.Sprintf("label %q gets %.0f of the %.0f it needs", w.Text, w.Size().Width, need(w.Text, w.TextStyle))
		}
	case *widget.Button:
		n := need(w.Text, fyne.TextStyle{Bold: true})
		if w.Icon != nil {
			n += theme.IconInlineSize() + theme.Padding()
		}
		if w.Text != "" && n > w.Size().Width+1 {
			return fmt.Sprintf("button %q gets %.0f of the %.0f it needs", w.Text, w.Size().Width, n)
		}
	case *widget.Select:
		n := need(w.Selected, fyne.TextStyle{}) + theme.IconInlineSize() + 2*theme.Padding()
		if w.Selected != "" && n > w.Size().Width+1 {
			return fmt.Sprintf("choice %q gets %.0f of the %.0f it needs", w.Selected, w.Size().Width, n)
		}
	}
	return ""
}

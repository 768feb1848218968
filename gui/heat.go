package gui

import (
	"fmt"
	"image/color"
	"math"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// divergingAnchors is the 11-class "PuOr" diverging scheme of ColorBrewer
// (Brewer, Harrower & Hatchard, colorbrewer2.org; Harrower & Brewer 2003,
// "ColorBrewer.org: an online tool for selecting colour schemes for maps",
// The Cartographic Journal 40(1)), listed as colour-blind safe there. The hex
// values are from memory of that table. Index 0 is the most negative end
// (orange-brown), index 10 the most positive (purple); index 5 is neutral.
var divergingAnchors = [11]color.NRGBA{
	{0x7f, 0x3b, 0x08, 0xff},
	{0xb3, 0x58, 0x06, 0xff},
	{0xe0, 0x82, 0x14, 0xff},
	{0xfd, 0xb8, 0x63, 0xff},
	{0xfe, 0xe0, 0xb6, 0xff},
	{0xf7, 0xf7, 0xf7, 0xff},
	{0xd8, 0xda, 0xeb, 0xff},
	{0xb2, 0xab, 0xd2, 0xff},
	{0x80, 0x73, 0xac, 0xff},
	{0x54, 0x27, 0x88, 0xff},
	{0x2d, 0x00, 0x4b, 0xff},
}

// sequentialAnchors is the purple half of the same scheme, used for
// quantities that are never negative (counts in a confusion matrix, slot heat
// of an n-gram).
var sequentialAnchors = divergingAnchors[5:]

// divergingColor maps v in [-scale, scale] to the diverging scheme, clamping
// outside it. A non-positive scale gives the neutral colour.
func divergingColor(v, scale float64) color.NRGBA {
	if scale <= 0 || math.IsNaN(v) {
		return divergingAnchors[5]
	}
	u := (v/scale + 1) / 2 // 0 … 1
	return rampColor(divergingAnchors[:], u)
}

// sequentialColor maps v in [0, scale] to the purple ramp.
func sequentialColor(v, scale float64) color.NRGBA {
	if scale <= 0 || math.IsNaN(v) {
		return sequentialAnchors[0]
	}
	return rampColor(sequentialAnchors, v/scale)
}

// rampColor interpolates linearly between neighbouring anchors; u is clamped
// to [0, 1].
func rampColor(anchors []color.NRGBA, u float64) color.NRGBA {
	u = math.Max(0, math.Min(1, u))
	x := u * float64(len(anchors)-1)
	i := int(math.Floor(x))
	if i >= len(anchors)-1 {
		return anchors[len(anchors)-1]
	}
	f := x - float64(i)
	a, b := anchors[i], anchors[i+1]
	mix := func(p, q uint8) uint8 { return uint8(math.Round(float64(p) + f*(float64(q)-float64(p)))) }
	return color.NRGBA{mix(a.R, b.R), mix(a.G, b.G), mix(a.B, b.B), 0xff}
}

// countAnchorsDark is the ramp of cells that hold counts (the confusion
// matrix) on a dark background: from a grey a little lighter than the
// background to the light purple of the diverging scheme, so that large
// counts stand out and empty cells do not glare. On a light background
// the purple half of the diverging scheme (sequentialAnchors) is used.
var countAnchorsDark = []color.NRGBA{
	{0x3a, 0x3a, 0x42, 0xff},
	divergingAnchors[9],
	divergingAnchors[8],
	divergingAnchors[7],
}

// isDark reports whether the theme's background is dark.
func isDark() bool {
	bg := color.NRGBAModel.Convert(theme.Color(theme.ColorNameBackground)).(color.NRGBA)
	return luminance(bg) < 0.2
}

// countColor maps v in [0, scale] to the ramp for counts that suits the
// theme's background.
func countColor(v, scale float64) color.NRGBA {
	if !isDark() {
		return sequentialColor(v, scale)
	}
	if scale <= 0 || math.IsNaN(v) {
		return countAnchorsDark[0]
	}
	return rampColor(countAnchorsDark, v/scale)
}

// luminance is the relative luminance of c as in WCAG 2.x.
func luminance(c color.NRGBA) float64 {
	lin := func(v uint8) float64 {
		s := float64(v) / 255
		if s <= 0.04045 {
			return s / 12.92
		}
		return math.Pow((s+0.055)/1.055, 2.4)
	}
	return 0.2126*lin(c.R) + 0.7152*lin(c.G) + 0.0722*lin(c.B)
}

// inkOn returns black or white, whichever reads better on background c
// (relative luminance as in WCAG 2.x, threshold common practice, no source).
func inkOn(c color.NRGBA) color.Color {
	if luminance(c) > 0.35 {
		return color.Black
	}
	return color.White
}

// heatLegend draws the diverging scale from -scale to +scale with signed end
// labels, naming what each end means.
func heatLegend(scale float64, negName, posName string) fyne.CanvasObject {
	const steps = 21
	bar := container.NewGridWithColumns(steps)
	for i := range steps {
		v := (float64(i)/float64(steps-1)*2 - 1) * scale
		r := canvas.NewRectangle(divergingColor(v, scale))
		r.SetMinSize(fyne.NewSize(10, 14))
		bar.Add(r)
	}
	lo := widget.NewLabel(fmt.Sprintf("%+.3g  %s", -scale, negName))
	hi := widget.NewLabel(fmt.Sprintf("%s  %+.3g", posName, scale))
	mid := widget.NewLabel("0")
	return container.NewVBox(bar, container.NewHBox(lo, layout.NewSpacer(), mid, layout.NewSpacer(), hi))
}

// heatCell is a tappable coloured cell with a centred number.
type heatCell struct {
	widget.BaseWidget
	text     string
	fill     color.NRGBA
	value    float64 // the number painted, for tests and tooltips
	compact  bool    // token chips: as small as the text allows
	selected bool    // drawn with a frame in the theme's primary colour
	onTap    func()
	onHover  func()
}

func newHeatCell(text string, fill color.NRGBA, onTap func()) *heatCell {
	c := &heatCell{text: text, fill: fill, onTap: onTap}
	c.ExtendBaseWidget(c)
	return c
}

func (c *heatCell) Tapped(*fyne.PointEvent) {
	if c.onTap != nil {
		c.onTap()
	}
}

// MouseIn shows the cell's numbers on hover, like a tap.
func (c *heatCell) MouseIn(*desktop.MouseEvent) {
	if c.onHover != nil {
		c.onHover()
	}
}

func (c *heatCell) MouseMoved(*desktop.MouseEvent) {}
func (c *heatCell) MouseOut()                      {}

func (c *heatCell) CreateRenderer() fyne.WidgetRenderer {
	bg := canvas.NewRectangle(c.fill)
	t := canvas.NewText(c.text, inkOn(c.fill))
	t.Alignment = fyne.TextAlignCenter
	t.TextStyle.Bold = true
	r := &heatCellRenderer{cell: c, bg: bg, text: t, objs: []fyne.CanvasObject{bg, t}}
	r.frame()
	return r
}

// frame draws the cell's border: the background's colour between cells,
// the primary colour around the selected one.
func (r *heatCellRenderer) frame() {
	if r.cell.selected {
		r.bg.StrokeColor = theme.Color(theme.ColorNamePrimary)
		r.bg.StrokeWidth = 3
	} else {
		r.bg.StrokeColor = theme.Color(theme.ColorNameBackground)
		r.bg.StrokeWidth = 1
	}
}

// setSelected frames the cell or removes its frame.
func (c *heatCell) setSelected(on bool) {
	if c.selected != on {
		c.selected = on
		c.Refresh()
	}
}

type heatCellRenderer struct {
	cell *heatCell
	bg   *canvas.Rectangle
	text *canvas.Text
	objs []fyne.CanvasObject
}

func (r *heatCellRenderer) Layout(s fyne.Size) {
	r.bg.Resize(s)
	ts := r.text.MinSize()
	r.text.Move(fyne.NewPos(0, (s.Height-ts.Height)/2))
	r.text.Resize(fyne.NewSize(s.Width, ts.Height))
}
func (r *heatCellRenderer) MinSize() fyne.Size {
	ts := r.text.MinSize()
	if r.cell.compact {
		return fyne.NewSize(ts.Width+10, ts.Height+6)
	}
	return fyne.NewSize(max(ts.Width+16, 56), max(ts.Height+12, 36))
}
func (r *heatCellRenderer) Refresh() {
	r.bg.FillColor = r.cell.fill
	r.frame()
	r.text.Text = r.cell.text
	r.text.Color = inkOn(r.cell.fill)
	r.bg.Refresh()
	r.text.Refresh()
}
func (r *heatCellRenderer) Objects() []fyne.CanvasObject { return r.objs }
func (r *heatCellRenderer) Destroy()                     {}

var _ fyne.Tappable = (*heatCell)(nil)

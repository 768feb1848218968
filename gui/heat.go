package gui

import (
	"fmt"
	"image/color"
	"math"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/layout"
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

// inkOn returns black or white, whichever reads better on background c
// (relative luminance as in WCAG 2.x, threshold common practice, no source).
func inkOn(c color.NRGBA) color.Color {
	lin := func(v uint8) float64 {
		s := float64(v) / 255
		if s <= 0.04045 {
			return s / 12.92
		}
		return math.Pow((s+0.055)/1.055, 2.4)
	}
	l := 0.2126*lin(c.R) + 0.7152*lin(c.G) + 0.0722*lin(c.B)
	if l > 0.35 {
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

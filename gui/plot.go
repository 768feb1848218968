package gui

import (
	"image"
	"image/color"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/theme"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// Plot sizes in points at 96 dpi; the image scales to fit its cell.
const (
	plotW   = 5.6 * vg.Inch
	plotH   = 3.0 * vg.Inch
	plotDPI = 96
	plotPad = 0.18 * vg.Inch // right margin (half of it on top)
)

// seriesColors are the line colours of plots with several series: the
// dark purple and orange ends of the diverging scheme plus a neutral grey,
// distinguishable without hue vision.
var seriesColors = []color.Color{
	divergingAnchors[9], divergingAnchors[1], color.NRGBA{0x70, 0x70, 0x70, 0xff}, divergingAnchors[7], divergingAnchors[3],
}

// newPlot returns a plot styled with the current Fyne theme's colours, so
// plots follow the light and dark variants.
func newPlot(title, xLabel, yLabel string) *plot.Plot {
	p := plot.New()
	fg := theme.Color(theme.ColorNameForeground)
	bg := theme.Color(theme.ColorNameBackground)
	p.BackgroundColor = bg
	p.Title.Text = title
	p.Title.TextStyle.Color = fg
	p.Legend.TextStyle.Color = fg
	p.Legend.Top = true
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Color = fg
		a.Label.TextStyle.Color = fg
		a.Tick.Label.Color = fg
		a.Tick.Color = fg
	}
	p.X.Label.Text = xLabel
	p.Y.Label.Text = yLabel
	return p
}

// renderPlot draws p into an RGBA image.
func renderPlot(p *plot.Plot) image.Image {
	c := vgimg.NewWith(vgimg.UseWH(plotW, plotH), vgimg.UseDPI(plotDPI))
	dc := draw.New(c)
	dc.SetColor(p.BackgroundColor)
	dc.Fill(dc.Rectangle.Path())
	// A margin on the right: the last tick label is centred on the end of
	// the axis and the legend sits flush right; both would be cut there.
	p.Draw(draw.Crop(dc, 0, -plotPad, 0, -plotPad/2))
	return c.Image()
}

// plotImage is an image cell that shows a rendered plot, or nothing.
type plotImage struct {
	img *canvas.Image
}

func newPlotImage() *plotImage {
	im := canvas.NewImageFromImage(nil)
	im.FillMode = canvas.ImageFillContain
	im.ScaleMode = canvas.ImageScaleSmooth
	im.SetMinSize(fyne.NewSize(float32(plotW.Dots(plotDPI))*0.7, float32(plotH.Dots(plotDPI))*0.7))
	return &plotImage{img: im}
}

// set replaces the shown plot; nil clears it.
func (pi *plotImage) set(p *plot.Plot) {
	if p == nil {
		pi.img.Image = nil
	} else {
		pi.img.Image = renderPlot(p)
	}
	pi.img.Refresh()
}

// xyLine adds one named line to p.
func xyLine(p *plot.Plot, name string, xs, ys []float64, col color.Color) error {
	pts := make(plotter.XYs, len(xs))
	for i := range xs {
		pts[i].X, pts[i].Y = xs[i], ys[i]
	}
	l, err := plotter.NewLine(pts)
	if err != nil {
		return err
	}
	l.Color = col
	l.Width = vg.Points(1.5)
	p.Add(l)
	if name != "" {
		p.Legend.Add(name, l)
	}
	return nil
}

package gui

import (
	"image/color"
	"math"
	"strconv"
	"sync"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
	stdfont "golang.org/x/image/font"
	"golang.org/x/image/font/opentype"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// seriesColors are the line colours of plots with several series: the
// dark purple and orange ends of the diverging scheme plus a neutral grey,
// distinguishable without hue vision.
var seriesColors = []color.Color{
	divergingAnchors[9], divergingAnchors[1], color.NRGBA{0x70, 0x70, 0x70, 0xff}, divergingAnchors[7], divergingAnchors[3],
}

// windowTypeface is the name under which the window's own fonts are known
// to gonum/plot, so that plots are set in the window's font.
const windowTypeface = "telltale-window"

// windowFonts registers the theme's regular and bold text fonts with
// gonum/plot's font cache once per font resource; it returns false when a
// font cannot be read (plots then keep gonum/plot's default font).
var windowFonts = struct {
	mu     sync.Mutex
	loaded map[string]bool
}{loaded: map[string]bool{}}

func registerWindowFonts() bool {
	regular, bold := theme.TextFont(), theme.TextBoldFont()
	key := regular.Name() + "|" + bold.Name()
	windowFonts.mu.Lock()
	defer windowFonts.mu.Unlock()
	if ok, seen := windowFonts.loaded[key]; seen {
		return ok
	}
	var coll font.Collection
	for _, f := range []struct {
		res    fyne.Resource
		weight stdfont.Weight
	}{{regular, stdfont.WeightNormal}, {bold, stdfont.WeightBold}} {
		face, err := opentype.Parse(f.res.Content())
		if err != nil {
			windowFonts.loaded[key] = false
			return false
		}
		coll = append(coll, font.Face{Font: font.Font{Typeface: windowTypeface, Weight: f.weight}, Face: face})
	}
	font.DefaultCache.Add(coll)
	windowFonts.loaded[key] = true
	return true
}

// newPlot returns a plot styled with the current theme: its colours (so
// plots follow the light and dark variants) and its text font and size.
func newPlot(title, xLabel, yLabel string) *plot.Plot {
	p := plot.New()
	fg := theme.Color(theme.ColorNameForeground)
	p.BackgroundColor = theme.Color(theme.ColorNameBackground)
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
	if registerWindowFonts() {
		size := font.Length(theme.TextSize())
		regular := font.Font{Typeface: windowTypeface, Size: size}
		bold := regular
		bold.Weight = stdfont.WeightBold
		small := regular
		small.Size = size * 0.85
		p.Title.TextStyle.Font = bold
		p.Legend.TextStyle.Font = small
		for _, a := range []*plot.Axis{&p.X, &p.Y} {
			a.Label.TextStyle.Font = regular
			a.Tick.Label.Font = small
		}
	}
	return p
}

// plotView shows a plot drawn at the size it is given, so that its text is
// the size of the window's text.
type plotView struct {
	widget.BaseWidget
	plot  *plot.Plot
	img   *canvas.Image
	drawn fyne.Size // size the image was drawn at
	least fyne.Size
}

// newPlotView makes an empty plot cell no smaller than least.
func newPlotView(least fyne.Size) *plotView {
	v := &plotView{img: canvas.NewImageFromImage(nil), least: least}
	v.img.FillMode = canvas.ImageFillStretch
	v.ExtendBaseWidget(v)
	return v
}

// set replaces the shown plot; nil clears it.
func (v *plotView) set(p *plot.Plot) {
	v.plot = p
	v.drawn = fyne.Size{}
	v.draw(v.Size())
}

// draw renders the plot at size s (in the canvas's pixels).
func (v *plotView) draw(s fyne.Size) {
	if v.plot == nil || s.Width < 10 || s.Height < 10 {
		v.img.Image = nil
		v.img.Refresh()
		return
	}
	if s == v.drawn {
		return
	}
	scale := float32(1)
	if c := fyne.CurrentApp().Driver().CanvasForObject(v); c != nil {
		scale = c.Scale()
	}
	// One window unit is one point at scale 1.
	w, h := vg.Length(s.Width), vg.Length(s.Height)
	c := vgimg.NewWith(vgimg.UseWH(w, h), vgimg.UseDPI(int(72*scale+0.5)))
	dc := draw.New(c)
	dc.SetColor(v.plot.BackgroundColor)
	dc.Fill(dc.Rectangle.Path())
	// A margin on the right and top: the last tick label is centred on the
	// end of the axis and the legend sits flush right; both would be cut.
	pad := vg.Length(theme.Padding() * 2)
	v.plot.Draw(draw.Crop(dc, pad/2, -pad, 0, -pad/2))
	v.img.Image = c.Image()
	v.drawn = s
	v.img.Refresh()
}

func (v *plotView) CreateRenderer() fyne.WidgetRenderer { return &plotRenderer{v: v} }

type plotRenderer struct{ v *plotView }

func (r *plotRenderer) Layout(s fyne.Size) {
	r.v.img.Resize(s)
	r.v.draw(s)
}
func (r *plotRenderer) MinSize() fyne.Size           { return r.v.least }
func (r *plotRenderer) Refresh()                     { r.v.draw(r.v.Size()) }
func (r *plotRenderer) Objects() []fyne.CanvasObject { return []fyne.CanvasObject{r.v.img} }
func (r *plotRenderer) Destroy()                     {}

// plotSize is the least size of a plot cell.
var plotSize = fyne.NewSize(240, 170)

// countTicks marks an axis of counts (texts, tokens, epochs): whole numbers
// only, written without decimals ("750", not gonum/plot's "750.00"), at a
// step of 1, 2, 2.5 or 5 times a power of ten that is itself whole, so that
// no tick falls between two counts ("2.5 texts").
type countTicks struct{}

// Ticks returns the ticks of the range [lo, hi].
func (countTicks) Ticks(lo, hi float64) []plot.Tick {
	span := hi - lo
	if !(span >= 0) || math.IsInf(span, 0) {
		return nil
	}
	step := countStep(span)
	// Minor ticks at a whole fifth, quarter or half of the step.
	minor := 0.0
	for _, d := range []float64{5, 4, 2} {
		if m := step / d; m >= 1 && m == math.Trunc(m) {
			minor = m
			break
		}
	}
	var ts []plot.Tick
	if minor > 0 {
		first := math.Ceil(lo / minor)
		for i := 0.0; i <= span/minor+1; i++ {
			if v := (first + i) * minor; v <= hi && math.Mod(v, step) != 0 {
				ts = append(ts, plot.Tick{Value: v})
			}
		}
	}
	first := math.Ceil(lo / step)
	for i := 0.0; i <= span/step+1; i++ {
		v := (first + i) * step
		if v == 0 {
			v = 0 // not -0
		}
		if v <= hi {
			ts = append(ts, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'f', 0, 64)})
		}
	}
	return ts
}

// countStep is the whole step between labelled ticks over a span: the
// least of 1, 2, 2.5 and 5 times a power of ten that is whole and leaves at
// most 4 steps.
func countStep(span float64) float64 {
	for p := 1.0; ; p *= 10 {
		for _, m := range []float64{1, 2, 2.5, 5} {
			if s := m * p; s == math.Trunc(s) && span/s <= 4 {
				return s
			}
		}
	}
}

// legendAbove puts p's legend in a band of its own between the title and
// the plotting area, flush right, so that no line or bar can run under it.
func legendAbove(p *plot.Plot) {
	h := p.Legend.Rectangle(draw.Canvas{}).Size().Y
	if h == 0 {
		return
	}
	gap := p.Legend.TextStyle.FontExtents().Descent + vg.Points(2)
	p.Legend.Top = true
	p.Legend.YOffs = h + gap
	p.Title.Padding += h + gap
}

// xyLine adds one named line to p and returns it.
func xyLine(p *plot.Plot, name string, xs, ys []float64, col color.Color) (*plotter.Line, error) {
	pts := make(plotter.XYs, len(xs))
	for i := range xs {
		pts[i].X, pts[i].Y = xs[i], ys[i]
	}
	l, err := plotter.NewLine(pts)
	if err != nil {
		return nil, err
	}
	l.Color = col
	l.Width = vg.Points(1.5)
	p.Add(l)
	if name != "" {
		p.Legend.Add(name, l)
	}
	return l, nil
}

package report

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"html/template"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"telltale/cnn"
)

// Plots are drawn with gonum.org/v1/plot, rendered to SVG by its vgsvg
// back end (which escapes every text it writes) and inlined as data: URLs
// in img elements, so no plot can reach outside the page and no text in a
// plot is parsed as page markup.

var (
	plotInk  = color.NRGBA{0x22, 0x22, 0x22, 0xff}
	plotGrey = color.NRGBA{0x88, 0x88, 0x88, 0xff}
)

// newPlot returns a plot in the report's sans-serif type with dark ink.
func newPlot(title, x, y string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = x
	p.Y.Label.Text = y
	for _, st := range []*text.Style{&p.Title.TextStyle, &p.X.Label.TextStyle, &p.Y.Label.TextStyle,
		&p.X.Tick.Label, &p.Y.Tick.Label, &p.Legend.TextStyle} {
		st.Font.Variant = "Sans"
		st.Color = plotInk
	}
	p.Title.TextStyle.Font.Size = vg.Points(12)
	p.Title.Padding = vg.Points(6)
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Color = plotInk
		a.Tick.Color = plotInk
		a.Label.TextStyle.Font.Size = vg.Points(10)
		a.Tick.Label.Font.Size = vg.Points(9)
	}
	return p
}

// svgURL renders p at w×h to an SVG data: URL.
func svgURL(p *plot.Plot, w, h vg.Length) (template.URL, error) {
	c := vgsvg.New(w, h)
	p.Draw(draw.New(c))
	var buf bytes.Buffer
	if _, err := c.WriteTo(&buf); err != nil {
		return "", fmt.Errorf("report: rendering plot %q: %w", p.Title.Text, err)
	}
	// The fonts metric-compatible with the one gonum measured the text in
	// come first, where the browser has one of them.
	svg := bytes.ReplaceAll(buf.Bytes(), []byte("font-family:Liberation Sans;"), []byte("font-family:'Liberation Sans',Arimo,Arial,Helvetica,sans-serif;"))
	return template.URL("data:image/svg+xml;base64," + base64.StdEncoding.EncodeToString(svg)), nil
}

// confusionGrid exposes a confusion matrix (rows gold, columns predicted)
// to plotter.HeatMap with the first gold label at the top.
type confusionGrid [][]int

func (g confusionGrid) Dims() (c, r int)   { return len(g), len(g) }
func (g confusionGrid) Z(c, r int) float64 { return float64(g[len(g)-1-r][c]) }
func (g confusionGrid) X(c int) float64    { return float64(c) }
func (g confusionGrid) Y(r int) float64    { return float64(r) }

// sequentialPalette samples the sequential ramp for plotter.HeatMap.
type sequentialPalette int

func (n sequentialPalette) Colors() []color.Color {
	out := make([]color.Color, n)
	for i := range out {
		out[i] = ramp(sequential, float64(i)/float64(n-1)).color()
	}
	return out
}

var _ palette.Palette = sequentialPalette(2)

func confusionPlot(labels []string, conf [][]int) (template.URL, error) {
	k := len(labels)
	most := 0
	for _, row := range conf {
		for _, v := range row {
			most = max(most, v)
		}
	}
	p := newPlot("Confusion matrix", "predicted label", "gold label")
	hm := plotter.NewHeatMap(confusionGrid(conf), sequentialPalette(64))
	hm.Min, hm.Max = 0, math.Max(1, float64(most))
	p.Add(hm)
	var xy plotter.XYs
	var lab []string
	var styles []text.Style
	long := false
	xt := make([]plot.Tick, k)
	yt := make([]plot.Tick, k)
	for i, l := range labels {
		xt[i] = plot.Tick{Value: float64(i), Label: l}
		yt[i] = plot.Tick{Value: float64(k - 1 - i), Label: l}
		long = long || len(l) > 8
		for j, v := range conf[i] {
			xy = append(xy, plotter.XY{X: float64(j), Y: float64(k - 1 - i)})
			lab = append(lab, fmt.Sprint(v))
			st := p.X.Tick.Label
			st.Font.Size = vg.Points(10)
			st.XAlign, st.YAlign = draw.XCenter, draw.YCenter
			if ink(sequentialAt(float64(v), float64(most))) == "#ffffff" {
				st.Color = color.White
			}
			styles = append(styles, st)
		}
	}
	cells, err := plotter.NewLabels(plotter.XYLabels{XYs: xy, Labels: lab})
	if err != nil {
		return "", fmt.Errorf("report: confusion labels: %w", err)
	}
	cells.TextStyle = styles
	p.Add(cells)
	p.X.Tick.Marker = plot.ConstantTicks(xt)
	p.Y.Tick.Marker = plot.ConstantTicks(yt)
	p.X.Padding, p.Y.Padding = 0, 0
	if long {
		p.X.Tick.Label.Rotation = math.Pi / 6
		p.X.Tick.Label.XAlign = draw.XRight
		p.X.Tick.Label.YAlign = draw.YCenter
	}
	// gonum measures the labels in Liberation Sans; a browser without it
	// draws them in another sans-serif, up to a fifth wider (DejaVu Sans),
	// and the labels are placed by their measured ends, next to the cells.
	// Invisible ticks keep that much room between labels and cells.
	widest := vg.Length(0)
	for _, l := range labels {
		widest = max(widest, p.Y.Tick.Label.Width(l))
	}
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Tick.Length = widest/5 + vg.Points(4)
		a.Tick.Color = color.Transparent
	}
	side := vg.Points(float64(140 + 46*k))
	return svgURL(p, side+vg.Points(40), side)
}

func reliabilityPlot(bins []cnn.ReliabilityBin) (template.URL, error) {
	p := newPlot("Reliability diagram", "confidence", "accuracy")
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = 0, 1, 0, 1
	p.Add(plotter.NewGrid())
	h := &plotter.Histogram{FillColor: toRGB(diverging[7]).color()}
	h.LineStyle = draw.LineStyle{Color: toRGB(diverging[9]).color(), Width: vg.Points(0.8)}
	var pts plotter.XYs
	for _, b := range bins {
		if b.Count == 0 {
			continue
		}
		h.Bins = append(h.Bins, plotter.HistogramBin{Min: b.Lo, Max: b.Hi, Weight: b.Acc})
		pts = append(pts, plotter.XY{X: b.Conf, Y: b.Acc})
	}
	if len(bins) > 0 {
		h.Width = bins[0].Hi - bins[0].Lo
	}
	if len(h.Bins) > 0 {
		p.Add(h)
	}
	diag, err := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}, {X: 1, Y: 1}})
	if err != nil {
		return "", fmt.Errorf("report: reliability diagonal: %w", err)
	}
	diag.LineStyle = draw.LineStyle{Color: plotGrey, Width: vg.Points(1), Dashes: []vg.Length{vg.Points(4), vg.Points(3)}}
	p.Add(diag)
	if len(pts) > 0 {
		sc, err := plotter.NewScatter(pts)
		if err != nil {
			return "", fmt.Errorf("report: reliability points: %w", err)
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: toRGB(diverging[1]).color(), Radius: vg.Points(2.5), Shape: draw.CircleGlyph{}}
		p.Add(sc)
	}
	return svgURL(p, vg.Points(340), vg.Points(320))
}

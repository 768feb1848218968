package gui

import (
	"fmt"
	"image/color"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/data/binding"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"telltale/cnn"
)

// scorecardView shows the held-out evaluation: per-class table, confusion
// heat map (tap a cell to list its texts) and the reliability diagram.
func scorecardView(st *State) fyne.CanvasObject {
	empty := widget.NewLabel("Train a model (Training view) or open one (File › Open model) to see how it does on the held-out split.")
	empty.Wrapping = fyne.TextWrapWord
	headline := widget.NewLabelWithStyle("", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	headline.Wrapping = fyne.TextWrapWord
	classes := newSheet([]string{"label", "precision", "recall", "F1", "support"}, []float32{120, 80, 70, 70, 70})
	confusion := container.NewStack()
	reliability := newPlotImage()
	cellTexts := newSheet([]string{"#", "gold", "predicted", "confidence", "text"}, []float32{50, 110, 110, 90, 520})
	cellNote := widget.NewLabel("Tap a cell of the confusion matrix to list its texts; tap a text to explain it.")
	cellNote.Wrapping = fyne.TextWrapWord
	var cellRows []int // held-out index of each row of cellTexts
	cellTexts.onSelect = func(row int) {
		ms := itemGet(st.model)
		if ms == nil || ms.Eval == nil || row >= len(cellRows) {
			return
		}
		st.explainThis(ms.Eval.Texts[cellRows[row]])
	}
	showCell := func(gold, pred int) {
		ms := itemGet(st.model)
		if ms == nil || ms.Eval == nil {
			return
		}
		ev := ms.Eval
		var rows [][]string
		cellRows = cellRows[:0]
		for i := range ev.Gold {
			if ev.Gold[i] == gold && ev.Pred[i] == pred {
				cellRows = append(cellRows, i)
				rows = append(rows, []string{fmt.Sprint(i + 1), ev.Metrics.Labels[gold], ev.Metrics.Labels[pred],
					fmt.Sprintf("%.3f", ev.Probs[i][pred]), ev.Texts[i]})
			}
		}
		cellTexts.setRows(rows)
		cellNote.SetText(fmt.Sprintf("%d held-out texts with gold label %q predicted as %q. Tap one to explain it.",
			len(rows), ev.Metrics.Labels[gold], ev.Metrics.Labels[pred]))
	}
	st.exports["Scorecard"] = exporter{
		table: func() *sheet { return classes },
		data: func() any {
			if ms := itemGet(st.model); ms != nil && ms.Eval != nil {
				return ms.Eval.Metrics
			}
			return nil
		},
	}
	body := container.NewStack()
	refresh := func() {
		ms := itemGet(st.model)
		if ms == nil || ms.Eval == nil {
			body.Objects = []fyne.CanvasObject{empty}
			body.Refresh()
			return
		}
		m := ms.Eval.Metrics
		headline.SetText(fmt.Sprintf("Held-out split: %d texts — accuracy %.3f, macro-F1 %.3f, weighted F1 %.3f, expected calibration error %.3f (%d bins).",
			m.N, m.Accuracy, m.MacroF1, m.WeightedF1, m.ECE, cnn.DefaultBins))
		var rows [][]string
		for _, c := range m.PerClass {
			rows = append(rows, []string{c.Label, fmt.Sprintf("%.3f", c.Precision), fmt.Sprintf("%.3f", c.Recall),
				fmt.Sprintf("%.3f", c.F1), fmt.Sprint(c.Support)})
		}
		classes.setRows(rows)
		confusion.Objects = []fyne.CanvasObject{confusionGrid(m, showCell)}
		confusion.Refresh()
		reliability.set(reliabilityPlot(ms.Eval))
		// Open on the most frequent confusion, so the list is not empty.
		bg, bp, bn := -1, -1, 0
		for g, row := range m.Confusion {
			for p, n := range row {
				if g != p && n > bn {
					bg, bp, bn = g, p, n
				}
			}
		}
		if bn > 0 {
			showCell(bg, bp)
		} else {
			cellTexts.setRows(nil)
		}
		body.Objects = []fyne.CanvasObject{content(headline, classes, confusion, reliability, cellNote, cellTexts)}
		body.Refresh()
	}
	st.model.AddListener(binding.NewDataListener(refresh))
	st.app.Settings().AddListener(func(fyne.Settings) { refresh() })
	return body
}

func content(headline *widget.Label, classes *sheet, confusion *fyne.Container, rel *plotImage, note *widget.Label, cell *sheet) fyne.CanvasObject {
	top := container.NewGridWithColumns(2,
		container.NewBorder(widget.NewLabelWithStyle("Confusion matrix (rows: gold, columns: predicted)", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}), nil, nil, nil, confusion),
		rel.img)
	bottom := container.NewHSplit(classes.table, container.NewBorder(note, nil, nil, nil, cell.table))
	bottom.Offset = 0.4
	split := container.NewVSplit(top, bottom)
	split.Offset = 0.55
	return container.NewBorder(headline, nil, nil, nil, split)
}

// confusionGrid draws the confusion matrix as a heat map of counts with the
// count in every cell; each row is shaded by its share of the row's texts.
func confusionGrid(m cnn.Metrics, tapped func(gold, pred int)) fyne.CanvasObject {
	n := len(m.Labels)
	grid := container.NewGridWithColumns(n + 1)
	grid.Add(widget.NewLabel(""))
	for _, l := range m.Labels {
		h := widget.NewLabelWithStyle(l, fyne.TextAlignCenter, fyne.TextStyle{Bold: true})
		h.Truncation = fyne.TextTruncateEllipsis
		grid.Add(h)
	}
	for g := range n {
		h := widget.NewLabelWithStyle(m.Labels[g], fyne.TextAlignTrailing, fyne.TextStyle{Bold: true})
		h.Truncation = fyne.TextTruncateEllipsis
		grid.Add(h)
		rowSum := 0
		for _, c := range m.Confusion[g] {
			rowSum += c
		}
		for p := range n {
			c := m.Confusion[g][p]
			share := 0.0
			if rowSum > 0 {
				share = float64(c) / float64(rowSum)
			}
			g, p := g, p
			grid.Add(newHeatCell(fmt.Sprint(c), sequentialColor(share, 1), func() { tapped(g, p) }))
		}
	}
	return grid
}

// heatCell is a tappable coloured cell with a centred number.
type heatCell struct {
	widget.BaseWidget
	text    string
	fill    color.NRGBA
	value   float64 // the number painted, for tests and tooltips
	compact bool    // token chips: as small as the text allows
	onTap   func()
	onHover func()
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
	bg.StrokeColor = theme.Color(theme.ColorNameBackground)
	bg.StrokeWidth = 1
	t := canvas.NewText(c.text, inkOn(c.fill))
	t.Alignment = fyne.TextAlignCenter
	t.TextStyle.Bold = true
	return &heatCellRenderer{cell: c, bg: bg, text: t, objs: []fyne.CanvasObject{bg, t}}
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
	r.text.Text = r.cell.text
	r.text.Color = inkOn(r.cell.fill)
	r.bg.Refresh()
	r.text.Refresh()
}
func (r *heatCellRenderer) Objects() []fyne.CanvasObject { return r.objs }
func (r *heatCellRenderer) Destroy()                     {}

var _ fyne.Tappable = (*heatCell)(nil)
var _ = layout.NewSpacer

// reliabilityPlot draws accuracy against confidence per equal-width bin,
// with the diagonal of perfect calibration.
func reliabilityPlot(ev *evaluation) *plot.Plot {
	p := newPlot("Reliability (held-out split)", "confidence of the predicted label", "accuracy")
	bins := reliabilityBins(ev, cnn.DefaultBins)
	diag, _ := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}, {X: 1, Y: 1}})
	if diag != nil {
		diag.Color = seriesColors[2]
		diag.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		p.Add(diag)
		p.Legend.Add("perfect calibration", diag)
	}
	var pts plotter.XYs
	for _, b := range bins {
		if b.Count > 0 {
			pts = append(pts, plotter.XY{X: b.Conf, Y: b.Acc})
		}
	}
	if len(pts) > 0 {
		if l, s, err := plotter.NewLinePoints(pts); err == nil {
			l.Color = seriesColors[0]
			s.Color = seriesColors[0]
			s.Shape = draw.CircleGlyph{}
			p.Add(l, s)
			p.Legend.Add("model", l, s)
		}
	}
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = 0, 1, 0, 1
	p.Legend.Top = false // bottom right: above the diagonal's far end
	return p
}

// reliabilityBins are the held-out predictions in cnn's equal-width
// confidence bins (confidence: the probability of the predicted class).
func reliabilityBins(ev *evaluation, n int) []cnn.ReliabilityBin {
	conf := make([]float64, len(ev.Pred))
	correct := make([]bool, len(ev.Pred))
	for i, pred := range ev.Pred {
		conf[i] = float64(ev.Probs[i][pred])
		correct[i] = pred == ev.Gold[i]
	}
	return cnn.Reliability(conf, correct, n)
}

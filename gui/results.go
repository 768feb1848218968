package gui

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"telltale/cnn"
	"telltale/internal/wording"
)

// resultsView shows the model on the test split: the headline figures with
// their intervals beside those of the linear baseline the model carries
// and the McNemar test between the two, the confusion matrix (click a cell
// to list its texts), the per-class table and the reliability diagram.
type resultsView struct {
	st *State

	caption, headline, beside, cellNote *widget.Label
	confusion                           *confusionGrid
	classes, cellTexts                  *sheet
	reliability                         *plotView
	lower                               *container.AppTabs
	cellRows                            []int // test index of each row of cellTexts
	empty                               *widget.Label
	full                                fyne.CanvasObject
	body                                *fyne.Container
}

func newResultsView(st *State) *resultsView {
	v := &resultsView{st: st}
	v.caption = wrapped("")
	v.empty = wrapped("No results yet: train a model (Training view) or open one (File › Open model); it is then evaluated on the test split.")
	v.headline = wrapped("")
	v.headline.TextStyle.Bold = true
	v.beside = wrapped("")
	v.classes = newSheet("label", "precision", "recall", "F1", "support")
	v.classes.exportCols = classExportCols
	v.cellTexts = newSheet("#", "gold", "predicted", "p(predicted)", "text").wide(4, capText)
	v.cellNote = wrapped("Click a cell of the confusion matrix to list its texts.")
	v.confusion = newConfusionGrid(v.showCell)
	v.reliability = newPlotView(plotSize)
	v.cellTexts.onSelect = v.explainRow
	v.full = v.layout()
	v.body = container.NewStack(v.empty)
	listen(v.refresh, st.model)
	st.app.Settings().AddListener(func(fyne.Settings) { v.refresh() })
	return v
}

func (v *resultsView) layout() fyne.CanvasObject {
	matrix := container.NewBorder(bold("Confusion matrix: rows are the gold label, columns the predicted one"), nil, nil, nil,
		container.NewScroll(v.confusion.box))
	v.lower = container.NewAppTabs(
		container.NewTabItem("Per class", v.classes.view()),
		container.NewTabItem("Reliability", v.reliability),
	)
	texts := container.NewBorder(v.cellNote, v.cellTexts.detail, nil, nil, v.cellTexts.view())
	bottom := container.NewHSplit(v.lower, texts)
	bottom.Offset = 0.58 // room for the per-class table's five columns at 1366 wide
	split := container.NewVSplit(matrix, bottom)
	split.Offset = 0.58
	return container.NewBorder(container.NewVBox(v.caption, v.headline, v.beside), nil, nil, nil, split)
}

func (v *resultsView) content() fyne.CanvasObject { return v.body }
func (v *resultsView) exportTable() *sheet        { return v.classes }
func (v *resultsView) focusInput()                {}

// resultsJSON is the Results view's data as `telltale eval --json` writes
// it: the CNN's metrics, the figures with their intervals and the baseline.
type resultsJSON struct {
	cnn.Metrics
	Figures   cnn.Figures         `json:"figures"`
	Intervals cnn.MetricIntervals `json:"intervals"`
	Baseline  *resultsBaseline    `json:"baseline,omitempty"`
}

type resultsBaseline struct {
	C       float64     `json:"c"`
	Metrics cnn.Metrics `json:"metrics"`
}

func (v *resultsView) exportData() any {
	ms := itemGet(v.st.model)
	if ms == nil || ms.Eval == nil {
		return nil
	}
	out := resultsJSON{Metrics: ms.Eval.Metrics, Figures: ms.Eval.Figures, Intervals: cnn.IntervalsOf(ms.Eval.Metrics)}
	if b := ms.Eval.Baseline; b != nil && ms.Model.Baseline != nil {
		out.Baseline = &resultsBaseline{C: ms.Model.Baseline.Classifier.C, Metrics: b.Baseline}
	}
	return out
}

// explainRow sends the test text of a row of the cell's list to the
// explanation view.
func (v *resultsView) explainRow(row int) {
	ms := itemGet(v.st.model)
	if ms == nil || ms.Eval == nil || row >= len(v.cellRows) {
		return
	}
	v.st.explainThis(ms.Eval.Texts[v.cellRows[row]], v.cellTexts)
}

// showCell lists the test texts of gold label gold predicted as pred.
func (v *resultsView) showCell(gold, pred int) {
	ms := itemGet(v.st.model)
	if ms == nil || ms.Eval == nil {
		return
	}
	ev := ms.Eval
	var rows [][]string
	v.cellRows = v.cellRows[:0]
	for i := range ev.Gold {
		if ev.Gold[i] == gold && ev.Pred[i] == pred {
			v.cellRows = append(v.cellRows, i)
			rows = append(rows, []string{fmt.Sprint(i), ev.Metrics.Labels[gold], ev.Metrics.Labels[pred],
				fmt.Sprintf("%.3f", ev.Probs[i][pred]), ev.Texts[i]})
		}
	}
	v.cellTexts.setRows(rows)
	v.confusion.selectCell(gold, pred)
	v.cellNote.SetText(fmt.Sprintf("%s of the test split with gold label %s predicted as %s (# is the text's index in the test split, from 0). Click one to explain it.",
		capitalize(wording.Texts(len(rows))), ev.Metrics.Labels[gold], ev.Metrics.Labels[pred]))
}

func (v *resultsView) refresh() {
	ms := itemGet(v.st.model)
	if ms == nil || ms.Eval == nil {
		v.body.Objects = []fyne.CanvasObject{v.empty}
		v.body.Refresh()
		return
	}
	v.caption.SetText(ms.caption())
	m := ms.Eval.Metrics
	head, beside := figureLines(ms.Eval.Figures, ms.Model, ms.BaselineStopped)
	v.headline.SetText(fmt.Sprintf("Test split, %s: %s (%g%% intervals).", wording.Texts(m.N), head, 100*cnn.IntervalLevel))
	v.beside.SetText(beside)
	iv := cnn.IntervalsOf(m)
	var rows, export [][]string
	for i, c := range m.PerClass {
		ci := iv.PerClass[i]
		rows = append(rows, []string{c.Label, ci.Precision.String(), ci.Recall.String(), ci.F1.String(), fmt.Sprint(c.Support)})
		export = append(export, classExportRow(c.Label, ci.Precision, ci.Recall, ci.F1, c.Support))
	}
	rows = append(rows, []string{"(weighted by support)", "", "", iv.WeightedF1.String(), fmt.Sprint(m.N)})
	none := cnn.UndefinedInterval()
	export = append(export, classExportRow("(weighted by support)", none, none, iv.WeightedF1, m.N))
	v.classes.exportRows = export
	v.classes.setRows(rows)
	v.confusion.set(m)
	v.reliability.set(reliabilityPlot(ms.Eval, iv.ECE))
	// Open on the most frequent confusion, so the list is not empty.
	g, p := mostConfused(m)
	v.showCell(g, p)
	v.body.Objects = []fyne.CanvasObject{v.full}
	v.body.Refresh()
}

// classExportCols are the columns of the per-class table as File › Export
// table as CSV writes it: each figure as its value and its interval's
// bounds, as the command line's --export writes intervals.
var classExportCols = []string{"label", "precision", "precision_low", "precision_high", "recall", "recall_low", "recall_high",
	"f1", "f1_low", "f1_high", "support"}

// classExportRow is one row of classExportCols; a figure with nothing to
// measure has empty cells.
func classExportRow(label string, precision, recall, f1 cnn.Interval, support int) []string {
	row := []string{label}
	for _, iv := range []cnn.Interval{precision, recall, f1} {
		row = append(row, numberCell(iv.Estimate), numberCell(iv.Low), numberCell(iv.High))
	}
	return append(row, strconv.Itoa(support))
}

// numberCell writes x for a CSV export as the command line does (eight
// significant digits), empty when x is not a number.
func numberCell(x float64) string {
	if math.IsNaN(x) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', 8, 64)
}

// figureLines words the figures of f as the command line prints them: the
// CNN's accuracy and macro-F1 with their intervals (head), and the line
// beside them: the linear baseline's and the McNemar test between the two,
// or that m carries no baseline: stopped (a run stopped in this window),
// or m's file record of it (cnn.Info.BaselineStopped, train's Ctrl-C), says
// that the run was stopped before the baseline it asked for was fitted.
func figureLines(f cnn.Figures, m *cnn.Model, stopped bool) (head, beside string) {
	head = headlineWords(f.CNN)
	if f.Baseline == nil || f.McNemar == nil || m.Baseline == nil {
		if stopped || m.Info.BaselineStopped {
			return head, "No linear baseline to set beside it: the run was stopped before the baseline was fitted. Train again and let the run end to have one."
		}
		return head, "The model carries no linear baseline to set beside it: train with Linear baseline on (the default) to have one."
	}
	c := fmt.Sprintf("C = %g from the dev split", m.Baseline.Classifier.C)
	if len(m.Baseline.Dev) == 0 {
		c = fmt.Sprintf("C = %g, no dev split", m.Baseline.Classifier.C)
	}
	beside = fmt.Sprintf("Linear baseline (%s): accuracy %s, macro-F1 %s. %s.",
		c, f.Baseline.Accuracy, f.Baseline.MacroF1, capitalize(f.McNemar.Sentence()))
	return head, beside + baselineAdvice(m, *f.McNemar)
}

// headlineWords words a headline as the command line prints it: "accuracy
// 0.912 (0.890–0.931), macro-F1 0.905 (0.880–0.927)".
func headlineWords(h cnn.Headline) string {
	return fmt.Sprintf("accuracy %s, macro-F1 %s", h.Accuracy, h.MacroF1)
}

// baselineAdvice words cnn.BaselineRemedies of m in the Training form's
// words, as a sentence that follows the McNemar test, or "" when the
// baseline is not ahead or nothing is left to try.
func baselineAdvice(m *cnn.Model, t cnn.BaselineTest) string {
	var tries []string
	for _, r := range cnn.BaselineRemedies(m, t) {
		switch {
		case r == cnn.RemedyWideFit && m.Config.Wide:
			tries = append(tries, `Word weights' start "fitted linear model"`)
		case r == cnn.RemedyWideFit:
			tries = append(tries, `Word weights on and Word weights' start "fitted linear model"`)
		case r == cnn.RemedyClassWeight:
			tries = append(tries, `Class weight "balanced" (with unbalanced labels)`)
		}
	}
	if len(tries) == 0 {
		return ""
	}
	return " The baseline is ahead here: in Training, retrain with " + strings.Join(tries, " or ") +
		", and read the cue audit beside the result."
}

// mostConfused is the off-diagonal cell with the most texts (the first
// diagonal cell when there is none).
func mostConfused(m cnn.Metrics) (gold, pred int) {
	bn := 0
	for g, row := range m.Confusion {
		for p, n := range row {
			if g != p && n > bn {
				gold, pred, bn = g, p, n
			}
		}
	}
	return gold, pred
}

// reliabilityPlot draws accuracy against confidence per equal-width bin,
// with the diagonal of perfect calibration; the title gives the ECE with
// its interval ece (nil when the confidences are not known).
func reliabilityPlot(ev *evaluation, ece *cnn.CalibrationFigure) *plot.Plot {
	p := newPlot(reliabilityTitle(ev.Metrics.ECE, ece), "confidence of the predicted label", "accuracy")
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

// reliabilityTitle is the reliability diagram's title in two short lines,
// so that it fits the pane of a small screen: the ECE's bias-corrected
// estimate with its interval, then the observed ECE (biased upward, the
// calibration test's statistic) with the test. The plot's font has no
// "≤": a p-value at its floor reads "p <= …".
func reliabilityTitle(observed float64, ece *cnn.CalibrationFigure) string {
	head := fmt.Sprintf("Reliability (test split, %d bins)", cnn.DefaultBins)
	if ece == nil {
		return fmt.Sprintf("%s: ECE %.3f\nno interval: the confidences are not known", head, observed)
	}
	p := fmt.Sprintf("p = %.2g", ece.P)
	if _, bound, ok := strings.Cut(ece.String(), "calibration p ≤ "); ok && ece.AtFloor {
		p = "p <= " + bound
	}
	return fmt.Sprintf("%s: ECE bias-corrected %.3f (%.3f–%.3f)\nobserved %.3f, calibration test %s", head, ece.Estimate, ece.Low, ece.High, observed, p)
}

// reliabilityBins are the test predictions in cnn's equal-width confidence
// bins (confidence: the probability of the predicted class).
func reliabilityBins(ev *evaluation, n int) []cnn.ReliabilityBin {
	conf := make([]float64, len(ev.Pred))
	correct := make([]bool, len(ev.Pred))
	for i, pred := range ev.Pred {
		conf[i] = float64(ev.Probs[i][pred])
		correct[i] = pred == ev.Gold[i]
	}
	return cnn.Reliability(conf, correct, n)
}

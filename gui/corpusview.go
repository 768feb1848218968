package gui

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"telltale/corpus"
	"telltale/internal/wording"
	"telltale/report"
)

// corpusView shows the open corpus: where it came from, its three splits,
// class balance and text lengths, duplicates and leaks, the words and
// phrases the cue audit found predicting a label, and the reader's warnings.
type corpusView struct {
	st *State

	source, splits, facts *widget.Label
	open, reload          *widget.Button
	textCol, labelCol     *widget.Select
	balance, lengths      *plotView
	dups, cues            *sheet
	cuesNote              *widget.Label
	warnings              *widget.Label
	body                  fyne.CanvasObject
}

func newCorpusView(st *State) *corpusView {
	v := &corpusView{st: st}
	v.source = wrapped("No data open yet: open a labeled file (File › Open data).")
	v.splits = wrapped("")
	v.facts = wrapped("")
	v.open = widget.NewButton("Open data…", st.openDataDialog)
	v.open.Importance = widget.HighImportance
	v.textCol, v.labelCol = widget.NewSelect(nil, nil), widget.NewSelect(nil, nil)
	v.textCol.PlaceHolder, v.labelCol.PlaceHolder = "(found by itself)", "(found by itself)"
	v.reload = widget.NewButton("Read again with these columns", v.readAgain)
	v.reload.Disable()
	v.balance, v.lengths = newPlotView(plotSize), newPlotView(plotSize)
	v.dups = newSheet("kind", "texts", "across splits", "labels differ", "labels", "text").wide(5, capText)
	v.cues = newSheet(associationCols...).wide(0, 260)
	v.cuesNote = wrapped(noCuesYet)
	v.warnings = wrapped("")
	v.body = v.layout()
	listen(v.refresh, st.data)
	listen(v.refreshCues, st.audit)
	st.app.Settings().AddListener(func(fyne.Settings) { v.refresh() })
	return v
}

// wrapped is a word-wrapped label.
func wrapped(text string) *widget.Label {
	l := widget.NewLabel(text)
	l.Wrapping = fyne.TextWrapWord
	return l
}

// bold is a bold one-line label.
func bold(text string) *widget.Label {
	return widget.NewLabelWithStyle(text, fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
}

func (v *corpusView) layout() fyne.CanvasObject {
	picker := container.NewHBox(widget.NewLabel("Text column"), v.textCol, widget.NewLabel("Label column"), v.labelCol, v.reload)
	top := container.NewVBox(container.NewBorder(nil, nil, nil, v.open, v.source), v.splits, container.NewHScroll(picker))
	plots := container.NewGridWithColumns(2, v.balance, v.lengths)
	tabs := container.NewAppTabs(
		container.NewTabItem("Duplicates and leaks", container.NewBorder(nil, v.dups.detail, nil, nil, v.dups.view())),
		container.NewTabItem("Cues", container.NewBorder(v.cuesNote, v.cues.detail, nil, nil, v.cues.view())),
		container.NewTabItem("Reading warnings", container.NewVScroll(v.warnings)),
	)
	body := container.NewVSplit(container.NewBorder(nil, v.facts, nil, nil, plots), tabs)
	body.Offset = 0.55
	return container.NewBorder(top, nil, nil, nil, body)
}

func (v *corpusView) content() fyne.CanvasObject { return v.body }
func (v *corpusView) exportTable() *sheet        { return v.dups }
func (v *corpusView) focusInput()                {}

func (v *corpusView) exportData() any {
	if cs := itemGet(v.st.data); cs != nil {
		return cs.Summary
	}
	return nil
}

// readAgain reads the open file with the chosen columns.
func (v *corpusView) readAgain() {
	cs := itemGet(v.st.data)
	if cs == nil || cs.Path == "" {
		return
	}
	opts := cs.Opts
	opts.TextCol, opts.LabelCol = v.textCol.Selected, v.labelCol.Selected
	v.st.openData(dataSource{path: cs.Path, testPath: cs.TestPath, pipeData: cs.pipeData, pipeTest: cs.pipeTest, opts: opts}, nil)
}

func (v *corpusView) refresh() {
	cs := itemGet(v.st.data)
	if cs == nil {
		return
	}
	v.source.SetText(fmt.Sprintf("Open: %s — %s, labels %s.", cs.Source, wording.Texts(len(cs.All.Examples)), strings.Join(cs.Train.Labels, ", ")))
	v.splits.SetText(splitsLine(cs))
	v.textCol.SetOptions(cs.Columns)
	v.labelCol.SetOptions(cs.Columns)
	v.textCol.Selected, v.labelCol.Selected = cs.Opts.TextCol, cs.Opts.LabelCol
	v.textCol.Refresh()
	v.labelCol.Refresh()
	if cs.Path != "" && len(cs.Columns) > 0 {
		v.reload.Enable()
	} else {
		v.reload.Disable()
	}
	v.balance.set(balancePlot(cs))
	v.lengths.set(lengthPlot(cs))
	v.facts.SetText(summaryFacts(cs))
	v.dups.setRows(duplicateRows(cs.Summary))
	v.warnings.SetText(warningsText(cs.Warnings))
}

const noCuesYet = "The words and phrases that predict a label in the training split appear here once the cue audit has run (Cue audit view)."

func (v *corpusView) refreshCues() {
	a := itemGet(v.st.audit)
	rows := associationRows(a)
	v.cues.setRows(rows)
	if a == nil {
		v.cuesNote.SetText(noCuesYet)
		return
	}
	found := wording.Grouped(a.R.Associated, "word or phrase predicts", "words and phrases predict")
	listed := "listed here: the most associated."
	if n := len(a.R.Ranked) + len(a.R.Task); n > 0 {
		listed = fmt.Sprintf("listed here: the %s the Cue audit view lists, then the most associated of the others.",
			wording.Grouped(n, "cue", "cues"))
	}
	v.cuesNote.SetText(fmt.Sprintf("%s a label in the training split (%s, corrected over the %s word × label tests by %s); %s",
		found, report.AssociationTestName(a.R.Test), wording.Thousands(a.R.Tests), report.CorrectionName(a.R.Correction), listed))
}

// splitsLine says how the three splits were made and how big they are.
func splitsLine(cs *corpusState) string {
	p := cs.Plan
	test := fmt.Sprintf("test %s (%.0f%% of the data)", wording.Texts(len(cs.Test.Examples)), 100*p.TestFrac)
	if cs.TestFile != nil {
		test = fmt.Sprintf("test %s (its own file)", wording.Texts(len(cs.Test.Examples)))
	}
	return fmt.Sprintf("Splits, stratified by label with seed %d: training %s, dev %s (%.0f%% of the data, for early stopping), %s.",
		p.Seed, wording.Texts(len(cs.Train.Examples)), wording.Texts(len(cs.Dev.Examples)), 100*p.DevFrac, test)
}

// warningsText lists the reader's warnings, or says there are none.
func warningsText(ws []corpus.Warning) string {
	if len(ws) == 0 {
		return "None: every record was read as it is."
	}
	lines := make([]string, len(ws))
	for i, w := range ws {
		lines[i] = w.String()
	}
	return strings.Join(lines, "\n")
}

// summaryFacts is the one-paragraph digest of the splits' summary.
func summaryFacts(cs *corpusState) string {
	s := cs.Summary
	var b strings.Builder
	for _, sp := range s.Splits {
		if sp.Examples == 0 {
			continue
		}
		fmt.Fprintf(&b, "%s: tokens per text median %d, 90th percentile %d, longest %d.  ",
			capitalize(splitName(sp.Name)), sp.TokenLength.P50, sp.TokenLength.P90, sp.TokenLength.Max)
	}
	oov := fmt.Sprintf("%.1f%% of test tokens are not in it", 100*s.TestOOVRate)
	if math.IsNaN(s.TestOOVRate) {
		oov = "no test token to compare with it" // no test split, or one of empty texts
	}
	fmt.Fprintf(&b, "\nVocabulary of the training split: %d words; %s. "+
		"Groups of exact duplicates %d, of near-exact duplicates %d; %s of the dev and test splits also in the training split (leaks).",
		s.VocabSize, oov, s.ExactGroups, s.NearGroups, wording.Texts(s.Leaks))
	return b.String()
}

func duplicateRows(s corpus.Summary) [][]string {
	var rows [][]string
	add := func(kind string, gs []corpus.DuplicateGroup) {
		for _, g := range gs {
			labels := map[string]bool{}
			for _, m := range g.Members {
				labels[m.Label] = true
			}
			var ls []string
			for l := range labels {
				ls = append(ls, l)
			}
			sort.Strings(ls)
			rows = append(rows, []string{kind, fmt.Sprint(len(g.Members)), yesNo(g.CrossSplit), yesNo(g.LabelConflict),
				strings.Join(ls, ", "), g.Text})
		}
	}
	add("exact", s.ExactDuplicates)
	add("near", s.NearDuplicates)
	return rows
}

// balancePlot draws the share of each label in each split as grouped
// horizontal bars, the labels down the side where long names fit.
func balancePlot(cs *corpusState) *plot.Plot {
	s := cs.Summary
	p := newPlot("Class balance", "share of the split", "")
	splits := s.Splits
	w := vg.Points(5)
	top := 0.0
	for i, sp := range splits {
		vals := make(plotter.Values, len(s.Labels))
		for j, l := range s.Labels {
			vals[j] = sp.Balance[l]
			top = max(top, vals[j])
		}
		bars, err := plotter.NewBarChart(vals, w)
		if err != nil {
			continue
		}
		bars.Horizontal = true
		bars.Color = seriesColors[i%len(seriesColors)]
		bars.LineStyle.Width = 0
		// The first split on top of each group.
		bars.Offset = vg.Length(float64(len(splits)-1)/2-float64(i)) * w
		p.Add(bars)
		p.Legend.Add(splitName(sp.Name), bars)
	}
	p.NominalY(s.Labels...)
	// Room on the right of the longest bar for the legend.
	p.X.Min, p.X.Max = 0, 1.45*top
	p.Y.Min, p.Y.Max = -0.6, float64(len(s.Labels))-0.4
	return p
}

// lengthPlot draws the distribution of training-text lengths in tokens.
func lengthPlot(cs *corpusState) *plot.Plot {
	p := newPlot("Text length (training split)", "tokens per text", "texts")
	if len(cs.Lengths) == 0 {
		return p
	}
	// Bar b covers the token counts Lo … Hi: [Lo, Hi+1) on the axis.
	h := &plotter.Histogram{FillColor: seriesColors[0], Width: float64(cs.Lengths[0].Hi - cs.Lengths[0].Lo + 1)}
	for _, b := range cs.Lengths {
		h.Bins = append(h.Bins, plotter.HistogramBin{Min: float64(b.Lo), Max: float64(b.Hi + 1), Weight: float64(b.Count)})
	}
	h.LineStyle.Width = 0
	p.Add(h)
	p.X.Tick.Marker, p.Y.Tick.Marker = countTicks{}, countTicks{}
	return p
}

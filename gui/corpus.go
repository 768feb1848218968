package gui

import (
	"context"
	"fmt"
	"path/filepath"
	"sort"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/data/binding"
	"fyne.io/fyne/v2/widget"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"telltale/corpus"
)

// corpusState is an opened corpus: the training and held-out splits with
// their summary.
type corpusState struct {
	Source   string // what was opened, for people
	Path     string // the data file, "" for the demo corpus
	TestPath string
	Opts     corpus.Options
	Columns  []string // columns or keys of the file, when it has any
	Train    *corpus.Dataset
	Test     *corpus.Dataset
	Warnings []corpus.Warning
	Summary  corpus.Summary
	Tok      *corpus.Tokenizer // the tokenizer the summary used
	// Lengths is the histogram of the training texts' token counts, by
	// the same tokenizer, for the length plot.
	Lengths []corpus.LengthBin
}

// dataSource says what to open.
type dataSource struct {
	path, testPath      string
	demoTrain, demoTest []byte
	opts                corpus.Options
}

// splitSeed and testShare fix the held-out split when the data has no
// separate test file.
const (
	splitSeed = 1
	testShare = 0.2
)

// defaultTokenizer is the tokenizer the window trains with.
func defaultTokenizer() corpus.TokenizerConfig {
	return corpus.TokenizerConfig{Lower: true, MinCount: 1}
}

// openData loads src in the background and makes it the open corpus.
func (st *State) openData(src dataSource, then func()) {
	_ = st.status.Set("Opening data…")
	st.start(taskLoad, true, func(ctx context.Context, report reporter) (func(), error) {
		cs, err := loadCorpus(ctx, src)
		if err != nil {
			return then, err
		}
		return func() {
			st.data.Set(cs)
			_ = st.status.Set(fmt.Sprintf("Opened %s: %d training and %d held-out examples, %d labels.",
				cs.Source, len(cs.Train.Examples), len(cs.Test.Examples), len(cs.Train.Labels)))
			if then != nil {
				then()
			}
		}, nil
	})
}

func loadCorpus(ctx context.Context, src dataSource) (*corpusState, error) {
	cs := &corpusState{Path: src.path, TestPath: src.testPath, Opts: src.opts}
	var train, test *corpus.Dataset
	var err error
	if src.path == "" {
		if len(src.demoTrain) == 0 {
			return nil, fmt.Errorf("no data given and no demo corpus built in: open a labeled file with File › Open data")
		}
		cs.Source = "the built-in demo corpus"
		var warns []corpus.Warning
		if train, warns, err = corpus.LoadBytes("demo/train.csv", src.demoTrain, src.opts); err != nil {
			return nil, err
		}
		cs.Warnings = warns
		if len(src.demoTest) > 0 {
			if test, warns, err = corpus.LoadBytes("demo/test.csv", src.demoTest, src.opts); err != nil {
				return nil, err
			}
			cs.Warnings = append(cs.Warnings, warns...)
		}
	} else {
		cs.Source = filepath.Base(src.path)
		// The column pickers; a file whose header cannot be read is
		// reported by Load below.
		cs.Columns, _ = corpus.Columns(src.path, src.opts)
		var warns []corpus.Warning
		if train, warns, err = corpus.Load(src.path, src.opts); err != nil {
			return nil, err
		}
		cs.Warnings = warns
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
		if src.testPath != "" {
			if test, warns, err = corpus.Load(src.testPath, src.opts); err != nil {
				return nil, err
			}
			cs.Warnings = append(cs.Warnings, warns...)
		}
	}
	if test == nil {
		train, test = train.Split(testShare, splitSeed)
	}
	if _, err := test.LabelIndex(train.Labels); err != nil {
		return nil, err
	}
	tok, err := corpus.NewTokenizer(defaultTokenizer())
	if err != nil {
		return nil, err
	}
	cs.Train, cs.Test, cs.Tok = train, test, tok
	cs.Summary = corpus.Summarize(train, test, tok)
	cs.Lengths = corpus.LengthHistogram(corpus.TokenLengths(train, tok), lengthBins)
	return cs, ctx.Err()
}

// lengthBins is the most bars of the length plot.
const lengthBins = 30

// corpusView shows the open corpus.
func corpusView(st *State) fyne.CanvasObject {
	source := widget.NewLabel("No data open yet.")
	source.Wrapping = fyne.TextWrapWord
	open := widget.NewButton("Open data…", st.openDataDialog)
	open.Importance = widget.HighImportance

	textCol := widget.NewSelect(nil, nil)
	labelCol := widget.NewSelect(nil, nil)
	textCol.PlaceHolder, labelCol.PlaceHolder = "(auto)", "(auto)"
	reload := widget.NewButton("Reload with these columns", func() {
		cs := itemGet(st.data)
		if cs == nil || cs.Path == "" {
			return
		}
		opts := cs.Opts
		opts.TextCol, opts.LabelCol = textCol.Selected, labelCol.Selected
		st.openData(dataSource{path: cs.Path, testPath: cs.TestPath, opts: opts}, nil)
	})
	reload.Disable()
	picker := container.NewHBox(widget.NewLabel("Text column"), textCol, widget.NewLabel("Label column"), labelCol, reload)

	balance := newPlotImage()
	lengths := newPlotImage()
	facts := widget.NewLabel("")
	facts.Wrapping = fyne.TextWrapWord

	dups := newSheet([]string{"kind", "members", "across splits", "labels differ", "labels", "text"},
		[]float32{70, 80, 100, 100, 160, 420})
	warns := widget.NewList(func() int {
		if cs := itemGet(st.data); cs != nil {
			return len(cs.Warnings)
		}
		return 0
	}, func() fyne.CanvasObject { return widget.NewLabel("") }, func(i widget.ListItemID, o fyne.CanvasObject) {
		if cs := itemGet(st.data); cs != nil && i < len(cs.Warnings) {
			o.(*widget.Label).SetText(cs.Warnings[i].String())
		}
	})
	flagged := newSheet(flaggedCols, flaggedWidths)
	flaggedNote := widget.NewLabel("Flagged tokens appear once the cue audit has run (Cue audit view).")

	st.exports["Corpus"] = exporter{
		table: func() *sheet { return dups },
		data: func() any {
			if cs := itemGet(st.data); cs != nil {
				return cs.Summary
			}
			return nil
		},
	}

	refresh := func() {
		cs := itemGet(st.data)
		if cs == nil {
			return
		}
		source.SetText(fmt.Sprintf("Open: %s — %d training, %d held-out examples; labels: %s.",
			cs.Source, len(cs.Train.Examples), len(cs.Test.Examples), strings.Join(cs.Train.Labels, ", ")))
		if len(cs.Columns) > 0 {
			textCol.SetOptions(cs.Columns)
			labelCol.SetOptions(cs.Columns)
			textCol.Selected, labelCol.Selected = cs.Opts.TextCol, cs.Opts.LabelCol
			textCol.Refresh()
			labelCol.Refresh()
		}
		if cs.Path != "" && len(cs.Columns) > 0 {
			reload.Enable()
		} else {
			reload.Disable()
		}
		balance.set(balancePlot(cs.Summary))
		lengths.set(lengthPlot(cs))
		facts.SetText(summaryFacts(cs.Summary))
		dups.setRows(duplicateRows(cs.Summary))
		warns.Refresh()
	}
	st.data.AddListener(binding.NewDataListener(refresh))
	st.audit.AddListener(binding.NewDataListener(func() {
		a := itemGet(st.audit)
		if a == nil {
			return
		}
		flagged.setRows(flaggedTokenRows(a))
		flaggedNote.SetText(fmt.Sprintf("%d tokens flagged by the cue audit.", len(flagged.rows)))
	}))
	st.app.Settings().AddListener(func(fyne.Settings) { refresh() })

	top := container.NewVBox(container.NewBorder(nil, nil, nil, open, source), picker)
	plots := container.NewGridWithColumns(2, balance.img, lengths.img)
	tabs := container.NewAppTabs(
		container.NewTabItem("Duplicates and leaks", dups.table),
		container.NewTabItem("Flagged tokens", container.NewBorder(flaggedNote, nil, nil, nil, flagged.table)),
		container.NewTabItem("Reading warnings", warns),
	)
	body := container.NewVSplit(container.NewBorder(nil, facts, nil, nil, plots), tabs)
	body.Offset = 0.55
	return container.NewBorder(top, nil, nil, nil, body)
}

// summaryFacts is the one-paragraph digest of a summary.
func summaryFacts(s corpus.Summary) string {
	var b strings.Builder
	for _, sp := range s.Splits {
		fmt.Fprintf(&b, "%s: %d examples, tokens per text median %d, 90th percentile %d, longest %d.  ",
			sp.Name, sp.Examples, sp.TokenLength.P50, sp.TokenLength.P90, sp.TokenLength.Max)
	}
	fmt.Fprintf(&b, "\nVocabulary %d words; %.1f%% of held-out tokens unknown. Exact duplicate groups %d, near-duplicate groups %d; %d held-out texts also in training (leaks).",
		s.VocabSize, 100*s.TestOOVRate, s.ExactGroups, s.NearGroups, s.Leaks)
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

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}

// balancePlot draws the share of each label in each split as grouped bars.
func balancePlot(s corpus.Summary) *plot.Plot {
	p := newPlot("Class balance", "", "share of examples")
	w := vg.Points(14)
	for i, sp := range s.Splits {
		vals := make(plotter.Values, len(s.Labels))
		for j, l := range s.Labels {
			vals[j] = sp.Balance[l]
		}
		bars, err := plotter.NewBarChart(vals, w)
		if err != nil {
			continue
		}
		bars.Color = seriesColors[i%len(seriesColors)]
		bars.LineStyle.Width = 0
		bars.Offset = vg.Length(float64(i)-float64(len(s.Splits)-1)/2) * w
		p.Add(bars)
		p.Legend.Add(sp.Name, bars)
	}
	p.NominalX(s.Labels...)
	// Head room above the tallest bar for the legend.
	top := 0.0
	for _, sp := range s.Splits {
		for _, v := range sp.Balance {
			top = max(top, v)
		}
	}
	p.Y.Min, p.Y.Max = 0, 1.3*top
	// Room beside the outer bars, which are offset from their label.
	p.X.Min, p.X.Max = -0.7, float64(len(s.Labels))-0.3
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
	return p
}

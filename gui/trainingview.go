package gui

import (
	"fmt"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/data/binding"
	"fyne.io/fyne/v2/widget"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"

	"telltale/cnn"
)

// trainingView is the recipe form, the run's curves and its epochs.
type trainingView struct {
	st *State

	form              *widget.Form
	firstEntry        *widget.Entry // the first field, for Ctrl+F
	testShare         *widget.Entry // disabled when a test file is the test split
	trainBtn, stopBtn *widget.Button
	line              *widget.Label
	loss, dev         *plotView
	epochs            *sheet
	run               *trainRun // the run on screen; nil before the first
	body              fyne.CanvasObject
}

func newTrainingView(st *State) *trainingView {
	v := &trainingView{st: st}
	v.form = v.recipeForm()
	v.trainBtn = widget.NewButton("Train", st.trainNow)
	v.trainBtn.Importance = widget.HighImportance
	v.stopBtn = widget.NewButton("Stop (keep the best so far)", func() { st.cancel(taskTrain) })
	v.stopBtn.Disable()
	v.line = wrapped("No training run yet: set the recipe and press Train.")
	v.loss, v.dev = newPlotView(plotSize), newPlotView(plotSize)
	v.epochs = newSheet("epoch", "loss", "dev accuracy", "dev macro-F1", "examples/s", "seconds")
	v.body = v.layout()
	listen(v.buttons, st.running, st.data)
	listen(v.modelChanged, st.model)
	listen(v.dataChanged, st.data)
	st.app.Settings().AddListener(func(fyne.Settings) { v.redraw(v.run) })
	return v
}

// recipeForm lays out the recipe's fields in the order of `telltale train`'s
// options, each with a hint where the value has a special meaning.
func (v *trainingView) recipeForm() *widget.Form {
	r := v.st.recipe
	// entry is a field bound to b and checked by check as it is typed.
	entry := func(b binding.String, check fyne.StringValidator, hint string) *widget.FormItem {
		e := widget.NewEntryWithData(b)
		e.Validator = check
		return &widget.FormItem{Widget: e, HintText: hint}
	}
	opt := selectFor(r.optimizer, "adam", "adadelta")
	weight := selectFor(r.classWeight, classWeightNone, classWeightBalanced)
	baseline := widget.NewCheckWithData("fit beside the CNN", r.baseline)
	chars := widget.NewCheckWithData("and characters", r.chars)
	wide := widget.NewCheckWithData("beside the filters", r.wide)
	pairs := widget.NewCheckWithData("with word weights", r.wideBigrams)
	fitted := widget.NewCheckWithData("fitted linear model", r.wideFit)
	fitC := widget.NewEntryWithData(r.wideFitC)
	fitC.Validator = checkReal
	// Word pairs and the fitted start count only with the word weights, the
	// C only with the fitted start too (parse); the form greys the labels
	// of what is disabled when it refreshes.
	enable := func(w fyne.Disableable, on bool) {
		if on {
			w.Enable()
		} else {
			w.Disable()
		}
	}
	follow := binding.NewDataListener(func() {
		wide, _ := r.wide.Get()
		fit, _ := r.wideFit.Get()
		enable(pairs, wide)
		enable(fitted, wide)
		enable(fitC, wide && fit)
		if v.form != nil {
			v.form.Refresh()
		}
	})
	r.wide.AddListener(follow)
	r.wideFit.AddListener(follow)
	items := []*widget.FormItem{
		entry(r.widths, checkWidths, ""), entry(r.maps, checkWhole, ""), entry(r.dim, checkWhole, ""), entry(r.epochs, checkWhole, ""),
		entry(r.patience, checkWhole, "0 never stops early"), entry(r.keepFrom, checkWhole, "none before it; 0 keeps any"),
		entry(r.dropout, checkReal, ""), entry(r.maxNorm, checkReal, "0 is off"),
		{Widget: opt}, entry(r.lr, checkRealOrEmpty, "empty: adam 0.002, adadelta 1"), entry(r.batch, checkWhole, ""),
		entry(r.minCount, checkWhole, ""), entry(r.tokenDropout, checkReal, "any token to unknown; 0 is off"),
		entry(r.wordDropout, checkReal, "α, rare words to unknown; 0 is off"),
		{Widget: weight, HintText: "balanced: imbalanced labels"}, {Widget: baseline, HintText: "TF-IDF + logistic regression"},
		{Widget: chars, HintText: "slower; unseen words"},
		{Widget: wide, HintText: "a weight per word and label"},
		{Widget: pairs, HintText: "a weight per pair and label"},
		{Widget: fitted, HintText: "logistic regression"},
		{Widget: fitC, HintText: "0 chooses it on dev"},
		entry(r.seed, checkWhole, "splits, initialisation, shuffling"),
		entry(r.devFrac, checkReal, "share of the data"), entry(r.testFrac, checkReal, "share of the data"),
	}
	names := []string{"Filter widths", "Feature maps per width", "Embedding dimension", "Epochs (at most)",
		"Patience (epochs)", "First epoch kept", "Dropout", "Max-norm of output rows", "Optimizer", "Learning rate",
		"Batch size", "Least word count", "Token dropout", "Word dropout", "Class weight", "Linear baseline", "Word vectors", "Word weights",
		"Word pairs", "Word weights' start", "Fitted start's C", "Seed", "Dev share", "Test share"}
	for i, it := range items {
		it.Text = names[i]
	}
	v.firstEntry = items[0].Widget.(*widget.Entry)
	v.testShare = items[len(items)-1].Widget.(*widget.Entry)
	return widget.NewForm(items...)
}

// fitCWords says how the fitted start's C is set: fixed (c > 0) or
// chosen on the dev split.
func fitCWords(c float64) string {
	if c > 0 {
		return "at C " + formatFloat(c)
	}
	return "its C chosen on the dev split"
}

// selectFor is a choice among options bound to b: it shows b's value and
// sets b (Defaults included, which sets b).
func selectFor(b binding.String, options ...string) *widget.Select {
	sel := widget.NewSelect(options, func(s string) { _ = b.Set(s) })
	sel.SetSelected(stringGet(b))
	b.AddListener(binding.NewDataListener(func() {
		if s := stringGet(b); s != sel.Selected {
			sel.SetSelected(s)
		}
	}))
	return sel
}

func (v *trainingView) layout() fyne.CanvasObject {
	defaults := widget.NewButton("Defaults", v.st.recipe.reset)
	left := container.NewBorder(bold("Recipe"), container.NewHBox(v.trainBtn, v.stopBtn, defaults), nil, nil,
		container.NewVScroll(v.form))
	curves := container.NewGridWithColumns(2, v.loss, v.dev)
	epochs := container.NewBorder(wrapped(epochsCaption), nil, nil, nil, v.epochs.view())
	right := container.NewBorder(v.line, nil, nil, nil, container.NewVSplit(curves, epochs))
	split := container.NewHSplit(left, right)
	split.Offset = 0.36
	return split
}

func (v *trainingView) content() fyne.CanvasObject { return v.body }
func (v *trainingView) exportTable() *sheet        { return v.epochs }
func (v *trainingView) focusInput()                { v.st.win.Canvas().Focus(v.firstEntry) }

func (v *trainingView) exportData() any {
	if ms := itemGet(v.st.model); ms != nil {
		return ms.Model.Info
	}
	return nil
}

// buttons lets Train work when there is data and no run, Stop during one.
func (v *trainingView) buttons() {
	if v.st.isRunning(taskTrain) {
		v.trainBtn.Disable()
		v.stopBtn.Enable()
		return
	}
	v.stopBtn.Disable()
	if itemGet(v.st.data) == nil {
		v.trainBtn.Disable()
	} else {
		v.trainBtn.Enable()
	}
}

// dataChanged disables the test share when a test file is the test split.
func (v *trainingView) dataChanged() {
	if cs := itemGet(v.st.data); cs != nil && cs.TestFile != nil {
		v.testShare.Disable()
		v.form.Items[len(v.form.Items)-1].HintText = "unused: a test file is given"
	} else {
		v.testShare.Enable()
		v.form.Items[len(v.form.Items)-1].HintText = "share of the data"
	}
	v.form.Refresh()
}

// startRun clears the view for a new run.
func (v *trainingView) startRun(run *trainRun) {
	v.run = run
	v.line.SetText("Starting…")
	v.redraw(run)
	v.buttons()
}

// runEnded follows the end of a run (its model, if any, comes through the
// model binding).
func (v *trainingView) runEnded() { v.buttons() }

// redraw draws run's curves and epochs; a run no longer on screen is
// ignored.
func (v *trainingView) redraw(run *trainRun) {
	if run == nil || run != v.run {
		return
	}
	d := run.snapshot()
	v.drawCurves(d.LossX, d.LossY, d.DevX, d.DevAcc, d.DevF1)
	v.epochs.setRows(epochRows(d.Epochs))
	switch running := v.st.isRunning(taskTrain); {
	case d.Last.Phase == cnn.PhaseBaseline && running:
		v.line.SetText("Fitting the linear baseline (TF-IDF n-grams + logistic regression, its C chosen on the dev split)…")
	case d.Last.Phase == cnn.PhaseWideFit && running:
		v.line.SetText("Fitting the start of the word weights (logistic regression on them alone, " + fitCWords(run.fitC) + ")…")
	case d.Last.Epochs > 0 && running:
		pr := d.Last
		v.line.SetText(fmt.Sprintf("Epoch %d of %d, batch %d of %d — loss %.4f — %.0f examples/s",
			pr.Epoch, pr.Epochs, pr.Batch, pr.Batches, pr.Loss, pr.ExamplesPerSec))
	}
}

// drawCurves draws the loss and the dev metrics.
func (v *trainingView) drawCurves(lossX, lossY, devX, devAcc, devF1 []float64) {
	pl := newPlot("Training loss", "epoch", "mean cross-entropy")
	if len(lossX) > 0 {
		_, _ = xyLine(pl, "", lossX, lossY, seriesColors[0])
	}
	pl.X.Tick.Marker = countTicks{}
	v.loss.set(pl)
	v.dev.set(devPlot(devX, devAcc, devF1))
}

func devPlot(devX, devAcc, devF1 []float64) *plot.Plot {
	pd := newPlot("Dev split after each epoch", "epoch", "")
	if len(devX) > 0 {
		_, _ = xyLine(pd, "accuracy", devX, devAcc, seriesColors[0])
		// Dashed: accuracy shows through where the two lines meet, as
		// they do on balanced data.
		if f1, err := xyLine(pd, "macro-F1", devX, devF1, seriesColors[1]); err == nil {
			f1.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
		}
	}
	pd.Y.Min, pd.Y.Max = 0, 1
	pd.X.Tick.Marker = countTicks{}
	// Above the curves, which may lie anywhere from 0 to 1.
	legendAbove(pd)
	return pd
}

// epochsCaption says what the epoch table's dev figures are, as train
// heads them ("used to choose the epoch"): the dev split chose the epoch
// kept, so they measure no model; the test split's, with their intervals,
// are in Results.
const epochsCaption = "Each epoch on the dev split, used to choose the epoch kept: no measure of the model (the test split's figures, with intervals, are in Results)."

// epochRows is one row per epoch.
func epochRows(es []cnn.EpochResult) [][]string {
	var rows [][]string
	for _, e := range es {
		acc, f1 := "—", "—"
		if e.Dev != nil {
			acc, f1 = fmt.Sprintf("%.4f", e.Dev.Accuracy), fmt.Sprintf("%.4f", e.Dev.MacroF1)
		}
		secs := "—"
		if e.Seconds > 0 {
			secs = fmt.Sprintf("%.2f", e.Seconds)
		}
		rows = append(rows, []string{fmt.Sprint(e.Epoch), fmt.Sprintf("%.4f", e.Loss), acc, f1,
			fmt.Sprintf("%.0f", e.ExamplesPerSec), secs})
	}
	return rows
}

// modelChanged shows the open model's training record: the run's final
// epochs, or an opened model's recorded ones.
func (v *trainingView) modelChanged() {
	v.buttons()
	ms := itemGet(v.st.model)
	if ms == nil {
		return
	}
	info := ms.Model.Info
	v.epochs.setRows(epochRows(info.Epochs))
	if ms.Run == nil {
		v.run = nil
		var ex, ey, dx, da, df []float64
		for _, e := range info.Epochs {
			ex, ey = append(ex, float64(e.Epoch)), append(ey, e.Loss)
			if e.Dev != nil {
				dx, da, df = append(dx, float64(e.Epoch)), append(da, e.Dev.Accuracy), append(df, e.Dev.MacroF1)
			}
		}
		v.drawCurves(ex, ey, dx, da, df)
		v.line.SetText(fmt.Sprintf("Opened model %s: trained %s, best epoch %d of %d; the curves show its recorded epochs.",
			ms.name(), orDash(info.Created), info.BestEpoch, len(info.Epochs)))
		return
	}
	tail := ""
	if ms.Run.Cancelled {
		tail = " (stopped by you)"
	} else if ms.Run.StoppedEarly {
		tail = " (stopped early: dev macro-F1 no longer improving)"
	}
	v.line.SetText(fmt.Sprintf("Done%s: best epoch %d of %d kept, %.0f examples/s in steady state.",
		tail, ms.Run.BestEpoch, len(ms.Run.Epochs), ms.Run.ExamplesPerSec))
}

func orDash(s string) string {
	if s == "" {
		return "—"
	}
	return s
}

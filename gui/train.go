package gui

import (
	"context"
	"errors"
	"fmt"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/data/binding"
	"fyne.io/fyne/v2/widget"

	"telltale/cnn"
)

// recipe holds the training form's values as the user typed them.
type recipe struct {
	widths, filters, dim, epochs, dropout, maxNorm, seed, batch, minCount, devShare binding.String
	optimizer                                                                       binding.String
}

func newRecipe() *recipe {
	r := &recipe{}
	for _, p := range []*binding.String{&r.widths, &r.filters, &r.dim, &r.epochs, &r.dropout, &r.maxNorm,
		&r.seed, &r.batch, &r.minCount, &r.devShare, &r.optimizer} {
		*p = binding.NewString()
	}
	// A quick recipe for the window: the published architecture with fewer
	// feature maps and a smaller embedding, so a first model is ready fast.
	_ = r.widths.Set("3,4,5")
	_ = r.filters.Set("50")
	_ = r.dim.Set("64")
	_ = r.epochs.Set("6")
	_ = r.dropout.Set("0.5")
	_ = r.maxNorm.Set("3")
	_ = r.seed.Set("1")
	_ = r.batch.Set("50")
	_ = r.minCount.Set("1")
	_ = r.devShare.Set("0.1")
	_ = r.optimizer.Set("adam")
	return r
}

// parsed is a recipe checked and converted.
type parsed struct {
	cfg      cnn.Config // without VocabSize and Classes
	tc       cnn.TrainConfig
	minCount int
	devShare float64
}

func (r *recipe) parse() (parsed, error) {
	var p parsed
	num := func(b binding.String, name, hint string) (int, error) {
		s := strings.TrimSpace(stringGet(b))
		v, err := strconv.Atoi(s)
		if err != nil {
			return 0, fmt.Errorf("%s %q is not a whole number: %s", name, s, hint)
		}
		return v, nil
	}
	real := func(b binding.String, name, hint string) (float64, error) {
		s := strings.TrimSpace(stringGet(b))
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			return 0, fmt.Errorf("%s %q is not a number: %s", name, s, hint)
		}
		return v, nil
	}
	var errs []error
	for _, f := range strings.Split(stringGet(r.widths), ",") {
		w, err := strconv.Atoi(strings.TrimSpace(f))
		if err != nil {
			errs = append(errs, fmt.Errorf("filter widths %q: give whole numbers separated by commas, e.g. 3,4,5", stringGet(r.widths)))
			break
		}
		p.cfg.Widths = append(p.cfg.Widths, w)
	}
	var err error
	var seed int
	if p.cfg.Filters, err = num(r.filters, "feature maps per width", "e.g. 100"); err != nil {
		errs = append(errs, err)
	}
	if p.cfg.Dim, err = num(r.dim, "embedding size", "e.g. 128"); err != nil {
		errs = append(errs, err)
	}
	if p.tc.Epochs, err = num(r.epochs, "epochs", "e.g. 10"); err != nil {
		errs = append(errs, err)
	}
	if p.tc.Batch, err = num(r.batch, "batch size", "e.g. 50"); err != nil {
		errs = append(errs, err)
	}
	if seed, err = num(r.seed, "seed", "any whole number, e.g. 1"); err != nil {
		errs = append(errs, err)
	}
	if p.minCount, err = num(r.minCount, "minimum word count", "e.g. 1 or 2"); err != nil {
		errs = append(errs, err)
	}
	var d, mn float64
	if d, err = real(r.dropout, "dropout", "a rate in [0, 1), e.g. 0.5"); err != nil {
		errs = append(errs, err)
	}
	if mn, err = real(r.maxNorm, "max-norm", "0 turns it off, Kim (2014) used 3"); err != nil {
		errs = append(errs, err)
	}
	if p.devShare, err = real(r.devShare, "dev share", "a fraction in (0, 0.5], e.g. 0.1"); err != nil {
		errs = append(errs, err)
	} else if p.devShare <= 0 || p.devShare > 0.5 {
		errs = append(errs, fmt.Errorf("dev share %g: use a fraction in (0, 0.5], e.g. 0.1", p.devShare))
	}
	if seed < 0 {
		errs = append(errs, fmt.Errorf("seed %d: use a whole number of 0 or more", seed))
	}
	p.cfg.Dropout, p.cfg.MaxNorm = float32(d), float32(mn)
	p.tc.Seed = uint64(seed)
	p.tc.Optimizer = stringGet(r.optimizer)
	if len(errs) > 0 {
		return p, fmt.Errorf("the training recipe needs fixing:\n%w", errors.Join(errs...))
	}
	// The model's own checks, with placeholder sizes that always pass.
	c := p.cfg
	c.VocabSize, c.Classes = 2, 2
	if err := c.Validate(); err != nil {
		return p, fmt.Errorf("the training recipe needs fixing: %w", err)
	}
	if _, err := p.tc.WithDefaults(); err != nil {
		return p, fmt.Errorf("the training recipe needs fixing: %w", err)
	}
	return p, nil
}

// trainRun is the live record of the training in progress, for the curves.
type trainRun struct {
	lossX, lossY  []float64 // running loss over fractional epochs
	devX          []float64 // epochs with a dev evaluation
	devAcc, devF1 []float64
	last          cnn.Progress
}

// trainNow starts training on the open corpus with the form's recipe.
func (st *State) trainNow() {
	cs := itemGet(st.data)
	if cs == nil {
		st.showError(errors.New("there is no data to train on: open a labeled file with File › Open data"))
		return
	}
	p, err := st.recipe.parse()
	if err != nil {
		st.showError(err)
		return
	}
	run := &trainRun{}
	st.trainRun = run
	_ = st.status.Set("Training…")
	defer st.trainChanged() // after start: the buttons follow the running task
	st.start(taskTrain, true, func(ctx context.Context, report reporter) (func(), error) {
		ms, res, err := trainModel(ctx, cs, p, func(pr cnn.Progress) {
			total := pr.Epochs * max(pr.Batches, 1)
			done := (pr.Epoch-1)*max(pr.Batches, 1) + pr.Batch
			report(done, total, fmt.Sprintf("Training: epoch %d of %d, batch %d of %d, loss %.4f, %.0f examples/s",
				pr.Epoch, pr.Epochs, pr.Batch, pr.Batches, pr.Loss, pr.ExamplesPerSec))
			st.ui(func() {
				if st.trainRun != run {
					return
				}
				run.add(pr)
				st.trainChanged()
			})
		})
		fail := func() {
			st.trainChanged()
			if f := st.afterTrain; f != nil {
				st.afterTrain = nil
				f(false)
			}
		}
		if err != nil {
			return fail, err
		}
		eval, err := evaluate(ms, cs)
		if err != nil {
			return fail, err
		}
		ms.Eval = eval
		ms.Model.Info.Test = &eval.Metrics
		return func() {
			word := "Trained"
			if res.Cancelled {
				word = "Stopped; kept the best model so far"
			}
			_ = st.status.Set(fmt.Sprintf("%s: best epoch %d, held-out accuracy %.3f, macro-F1 %.3f.",
				word, res.BestEpoch, eval.Metrics.Accuracy, eval.Metrics.MacroF1))
			st.setModel(ms)
			if f := st.afterTrain; f != nil {
				st.afterTrain = nil
				f(true)
			}
		}, nil
	})
}

func (r *trainRun) add(pr cnn.Progress) {
	r.last = pr
	if pr.Batches > 0 && (pr.Phase == "train" || pr.Phase == "epoch") {
		r.lossX = append(r.lossX, float64(pr.Epoch-1)+float64(pr.Batch)/float64(pr.Batches))
		r.lossY = append(r.lossY, pr.Loss)
	}
	if pr.Phase == "epoch" && pr.Dev != nil {
		r.devX = append(r.devX, float64(pr.Epoch))
		r.devAcc = append(r.devAcc, pr.Dev.Accuracy)
		r.devF1 = append(r.devF1, pr.Dev.MacroF1)
	}
}

// trainModel trains a new model on the open corpus's training split less
// a dev share (split off with the recipe's seed, as the command line does),
// through the same pipeline as the command line (cnn.TrainText). On cancel
// it returns the best model so far.
func trainModel(ctx context.Context, cs *corpusState, p parsed, progress func(cnn.Progress)) (*modelState, *cnn.TrainResult, error) {
	tcfg := defaultTokenizer()
	tcfg.MinCount = p.minCount
	fit, dev := cs.Train.Split(p.devShare, p.tc.Seed)
	tr, err := cnn.TrainText(ctx, fit, dev, cnn.Recipe{Tokenizer: tcfg, Model: p.cfg, Train: p.tc}, progress)
	if err != nil {
		return nil, nil, err
	}
	res := tr.Result
	if res.BestEpoch == 0 {
		return nil, nil, errCanceled
	}
	m := tr.Model
	m.Info.Notes = map[string]string{"data": cs.Source, "window_split_seed": fmt.Sprint(splitSeed),
		"dev_share": fmt.Sprint(p.devShare), "seed": fmt.Sprint(p.tc.Seed)}
	ms, err := newModelState(m, "")
	if err != nil {
		return nil, nil, err
	}
	ms.Run = res
	return ms, res, nil
}

// trainView is the recipe form, the run's progress and its curves.
func trainView(st *State) fyne.CanvasObject {
	r := st.recipe
	entry := func(b binding.String) *widget.Entry { return widget.NewEntryWithData(b) }
	opt := widget.NewSelect([]string{"adam", "adadelta"}, func(s string) { _ = r.optimizer.Set(s) })
	opt.SetSelected(stringGet(r.optimizer))
	form := widget.NewForm(
		widget.NewFormItem("Filter widths", entry(r.widths)),
		widget.NewFormItem("Feature maps per width", entry(r.filters)),
		widget.NewFormItem("Embedding size", entry(r.dim)),
		widget.NewFormItem("Epochs (at most)", entry(r.epochs)),
		widget.NewFormItem("Dropout", entry(r.dropout)),
		widget.NewFormItem("Max-norm of output rows", entry(r.maxNorm)),
		widget.NewFormItem("Optimizer", opt),
		widget.NewFormItem("Batch size", entry(r.batch)),
		widget.NewFormItem("Minimum word count", entry(r.minCount)),
		widget.NewFormItem("Dev share of training data", entry(r.devShare)),
		widget.NewFormItem("Seed", entry(r.seed)),
	)
	trainBtn := widget.NewButton("Train", st.trainNow)
	trainBtn.Importance = widget.HighImportance
	stopBtn := widget.NewButton("Stop (keep best so far)", func() { st.cancel(taskTrain) })
	stopBtn.Disable()
	st.trainButtons = [2]*widget.Button{trainBtn, stopBtn}
	bar := widget.NewProgressBar()
	line := widget.NewLabel("No training run yet.")
	line.Wrapping = fyne.TextWrapWord
	lossImg, devImg := newPlotImage(), newPlotImage()
	epochs := newSheet([]string{"epoch", "loss", "dev accuracy", "dev macro-F1", "examples/s", "seconds"},
		[]float32{60, 80, 100, 110, 100, 80})
	st.exports["Training"] = exporter{
		table: func() *sheet { return epochs },
		data: func() any {
			if ms := itemGet(st.model); ms != nil {
				return ms.Model.Info
			}
			return nil
		},
	}
	draw := func() {
		run := st.trainRun
		if run == nil {
			lossImg.set(nil)
			devImg.set(nil)
			return
		}
		pl := newPlot("Training loss", "epoch", "mean cross-entropy")
		if len(run.lossX) > 0 {
			_ = xyLine(pl, "", run.lossX, run.lossY, seriesColors[0])
		}
		lossImg.set(pl)
		pd := newPlot("Dev split after each epoch", "epoch", "")
		if len(run.devX) > 0 {
			_ = xyLine(pd, "accuracy", run.devX, run.devAcc, seriesColors[0])
			_ = xyLine(pd, "macro-F1", run.devX, run.devF1, seriesColors[1])
		}
		pd.Y.Min, pd.Y.Max = 0, 1
		pd.Legend.Top = false // dev metrics rise toward the top right
		devImg.set(pd)
		pr := run.last
		if pr.Epochs > 0 {
			bar.SetValue(float64((pr.Epoch-1)*max(pr.Batches, 1)+pr.Batch) / float64(pr.Epochs*max(pr.Batches, 1)))
			line.SetText(fmt.Sprintf("Epoch %d of %d, batch %d of %d — loss %.4f — %.0f examples/s",
				pr.Epoch, pr.Epochs, pr.Batch, pr.Batches, pr.Loss, pr.ExamplesPerSec))
		}
	}
	st.trainChanged = func() {
		draw()
		running := st.running(taskTrain)
		if running {
			trainBtn.Disable()
			stopBtn.Enable()
		} else {
			trainBtn.Enable()
			stopBtn.Disable()
		}
	}
	st.model.AddListener(binding.NewDataListener(func() {
		st.trainChanged()
		ms := itemGet(st.model)
		if ms == nil {
			return
		}
		var rows [][]string
		for _, e := range ms.Model.Info.Epochs {
			acc, f1 := "", ""
			if e.Dev != nil {
				acc, f1 = fmt.Sprintf("%.4f", e.Dev.Accuracy), fmt.Sprintf("%.4f", e.Dev.MacroF1)
			}
			rows = append(rows, []string{fmt.Sprint(e.Epoch), fmt.Sprintf("%.4f", e.Loss), acc, f1,
				fmt.Sprintf("%.0f", e.ExamplesPerSec), fmt.Sprintf("%.2f", e.Seconds)})
		}
		epochs.setRows(rows)
		if ms.Run == nil {
			line.SetText(fmt.Sprintf("Opened model %s (trained %s, best epoch %d).", ms.Path, ms.Model.Info.Created, ms.Model.Info.BestEpoch))
		} else if st.trainRun != nil {
			bar.SetValue(1)
			tail := ""
			if ms.Run.Cancelled {
				tail = " (stopped by you)"
			} else if ms.Run.StoppedEarly {
				tail = " (stopped early: dev macro-F1 no longer improving)"
			}
			line.SetText(fmt.Sprintf("Done%s: best epoch %d of %d, %.0f examples/s in steady state.",
				tail, ms.Run.BestEpoch, len(ms.Run.Epochs), ms.Run.ExamplesPerSec))
		}
	}))
	st.app.Settings().AddListener(func(fyne.Settings) { draw() })

	left := container.NewVBox(widget.NewLabelWithStyle("Recipe", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		form, container.NewHBox(trainBtn, stopBtn))
	curves := container.NewGridWithColumns(2, lossImg.img, devImg.img)
	right := container.NewBorder(container.NewVBox(bar, line), nil, nil, nil,
		container.NewVSplit(curves, epochs.table))
	split := container.NewHSplit(container.NewVScroll(left), right)
	split.Offset = 0.3
	return split
}

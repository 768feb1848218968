package gui

import (
	"context"
	"errors"
	"fmt"
	"sync"
	"time"

	"telltale/cnn"
)

// trainRun is the live record of a training run, written by the training
// goroutine and read by the Training view.
type trainRun struct {
	// fitC is the recipe's fixed C of the word weights' fitted start
	// (cnn.TrainConfig.WideFitC; 0: chosen on dev), for the line the
	// view shows while it is fitted. Set before the run starts.
	fitC float64
	mu   sync.Mutex
	data runData
	// posted: a redraw waits on the UI goroutine; drawn: when the last one ran.
	posted bool
	drawn  time.Time
}

// runData is what the Training view draws of a run.
type runData struct {
	LossX, LossY  []float64 // running loss over fractional epochs
	DevX          []float64 // epochs with a dev evaluation
	DevAcc, DevF1 []float64
	Epochs        []cnn.EpochResult // finished epochs, as the progress reports give them
	Last          cnn.Progress
}

// minRedrawGap is the least time between two redraws of the curves while a
// run goes on (each redraw renders two plots on the UI goroutine).
const minRedrawGap = 500 * time.Millisecond

// add records pr and reports whether a redraw should be posted: none is
// waiting and, for a report within an epoch, the last one is old enough
// (every other report, an epoch's end or a fit beside it, always is).
func (r *trainRun) add(pr cnn.Progress) bool {
	r.mu.Lock()
	defer r.mu.Unlock()
	d := &r.data
	d.Last = pr
	if pr.Batches > 0 && (pr.Phase == "train" || pr.Phase == "epoch") {
		d.LossX = append(d.LossX, float64(pr.Epoch-1)+float64(pr.Batch)/float64(pr.Batches))
		d.LossY = append(d.LossY, pr.Loss)
	}
	if pr.Phase == "epoch" {
		e := cnn.EpochResult{Epoch: pr.Epoch, Loss: pr.Loss, ExamplesPerSec: pr.ExamplesPerSec, Dev: pr.Dev}
		d.Epochs = append(d.Epochs, e)
		if pr.Dev != nil {
			d.DevX = append(d.DevX, float64(pr.Epoch))
			d.DevAcc = append(d.DevAcc, pr.Dev.Accuracy)
			d.DevF1 = append(d.DevF1, pr.Dev.MacroF1)
		}
	}
	if r.posted || (pr.Phase == "train" && time.Since(r.drawn) < minRedrawGap) {
		return false
	}
	r.posted = true
	return true
}

// snapshot returns a copy of the run for drawing and marks the redraw done.
func (r *trainRun) snapshot() runData {
	r.mu.Lock()
	defer r.mu.Unlock()
	r.posted, r.drawn = false, time.Now()
	d := r.data
	d.LossX, d.LossY = append([]float64(nil), d.LossX...), append([]float64(nil), d.LossY...)
	d.DevX, d.DevAcc, d.DevF1 = append([]float64(nil), d.DevX...), append([]float64(nil), d.DevAcc...), append([]float64(nil), d.DevF1...)
	d.Epochs = append([]cnn.EpochResult(nil), d.Epochs...)
	return d
}

// trainNow starts training on the open corpus with the form's recipe; it
// does nothing while a run goes on (the Train button is disabled then).
func (st *State) trainNow() {
	if st.isRunning(taskTrain) {
		return
	}
	cs := itemGet(st.data)
	if cs == nil {
		st.showError(errors.New("there is no data to train on: open a labeled file with File › Open data"))
		return
	}
	rec, plan, err := st.recipe.parse(cs.TestFile != nil)
	if err != nil {
		st.showError(err)
		return
	}
	run := &trainRun{fitC: rec.Train.WideFitC}
	st.trainingView.startRun(run)
	st.setStatus("Training…")
	st.start(taskTrain, true, func(ctx context.Context, report reporter) (func(), error) {
		return st.trainWork(ctx, report, run, cs, rec, plan)
	})
}

// trainWork is the training task: the splits by plan (made again only when
// the plan changed), training, and the evaluation on the test split.
func (st *State) trainWork(ctx context.Context, report reporter, run *trainRun, cs *corpusState, rec cnn.Recipe, plan splitPlan) (func(), error) {
	fail := func() {
		st.trainingView.runEnded()
		if f := st.afterTrain; f != nil {
			st.afterTrain = nil
			f(false)
		}
	}
	if plan != cs.Plan {
		report(0, 1, "Making the training, dev and test splits…")
		var err error
		if cs, err = cs.resplit(ctx, plan); err != nil {
			return fail, err
		}
	}
	ms, res, err := trainModel(ctx, cs, rec, func(pr cnn.Progress) {
		switch pr.Phase {
		case cnn.PhaseWideFit:
			report(0, 1, "Fitting the start of the word weights…")
		case cnn.PhaseBaseline:
			report(0, 1, "Fitting the linear baseline…")
		default:
			total := pr.Epochs * max(pr.Batches, 1)
			done := (pr.Epoch-1)*max(pr.Batches, 1) + pr.Batch
			report(done, total, fmt.Sprintf("Training: epoch %d of %d, batch %d of %d, loss %.4f, %.0f examples/s",
				pr.Epoch, pr.Epochs, pr.Batch, pr.Batches, pr.Loss, pr.ExamplesPerSec))
		}
		if run.add(pr) {
			// toUI, not ui: once the window has closed nothing is redrawn.
			st.tasks.toUI(func() { st.trainingView.redraw(run) })
		}
	})
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
		onDev := res.BestEpoch > 0 && res.Epochs[res.BestEpoch-1].Dev != nil
		st.setStatus(trainedStatus(word, res.BestEpoch, onDev, eval.Figures.CNN))
		if cs != itemGet(st.data) {
			st.data.Set(cs)
		}
		st.setModel(ms)
		st.trainingView.runEnded()
		if f := st.afterTrain; f != nil {
			st.afterTrain = nil
			f(true)
		}
	}, nil
}

// trainedStatus is the status line after a run (word: how it ended): the
// epoch kept, chosen on the dev split (onDev) or, with no dev split, the
// last, and the test split's headline h (cnn.HeadlineOf of its metrics)
// with its intervals, as the Results view writes them.
func trainedStatus(word string, bestEpoch int, onDev bool, h cnn.Headline) string {
	chosen := "chosen on the dev split"
	if !onDev {
		chosen = "kept, the last (no dev split to choose one)"
	}
	return fmt.Sprintf("%s: epoch %d %s; test split: %s (%g%% intervals).",
		word, bestEpoch, chosen, headlineWords(h), 100*cnn.IntervalLevel)
}

// trainModel trains a new model on cs's training split with early stopping
// on its dev split, through the same pipeline as the command line
// (cnn.TrainText), and records how the splits were made (cs.Record), as
// telltale train does. On cancel it returns the best model so far.
func trainModel(ctx context.Context, cs *corpusState, rec cnn.Recipe, progress func(cnn.Progress)) (*modelState, *cnn.TrainResult, error) {
	tr, err := cnn.TrainText(ctx, cs.Train, cs.Dev, rec, progress)
	if err != nil {
		return nil, nil, err
	}
	res := tr.Result
	if res.BestEpoch == 0 {
		return nil, nil, errCanceled
	}
	m := tr.Model
	splits := cs.Record
	m.Info.Splits = &splits
	ms, err := newModelState(m, "")
	if err != nil {
		return nil, nil, err
	}
	ms.Run = res
	ms.BaselineStopped = rec.Baseline != nil && m.Baseline == nil && (res.Cancelled || ctx.Err() != nil)
	return ms, res, nil
}

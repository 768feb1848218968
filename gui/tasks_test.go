package gui

import (
	"context"
	"slices"
	"sync/atomic"
	"testing"
	"time"

	"fyne.io/fyne/v2"
)

// A burst of tasks of one kind runs one goroutine at a time: the first runs,
// each newer one replaces the one waiting, and only the newest applies its
// result. (Work that cannot be stopped midway, like one explanation, must
// not pile up one goroutine per key typed.)
func TestTasksRunOneAtATime(t *testing.T) {
	q := &queue{}
	r := newTaskRunner(q.post)
	release := make(chan struct{})
	var started atomic.Int32
	var applied []int
	for i := range 20 {
		r.start("k", false, func(ctx context.Context, _ reporter) (func(), error) {
			started.Add(1)
			<-release
			return func() { applied = append(applied, i) }, nil
		})
	}
	close(release)
	q.waitFor(t, "the burst to end", func() bool { return r.idle("k") })
	q.drain()
	if got := r.most("k"); got != 1 {
		t.Errorf("%d goroutines of one kind ran at once, want 1", got)
	}
	if got := started.Load(); got != 2 {
		t.Errorf("%d of the 20 tasks ran, want 2: the first and the newest", got)
	}
	if !slices.Equal(applied, []int{19}) {
		t.Errorf("results applied: %v, want only the newest task's [19]", applied)
	}
}

// Progress reported as fast as work can call it leaves at most one update
// waiting on the UI goroutine, and that update shows the latest figures.
func TestProgressDoesNotFloodTheUI(t *testing.T) {
	q := &queue{}
	r := newTaskRunner(q.post)
	var shown []float64
	r.onNote = func(f float64, _ string) {
		if f >= 0 {
			shown = append(shown, f)
		}
	}
	const n = 200000
	r.start("k", true, func(ctx context.Context, report reporter) (func(), error) {
		for i := 1; i <= n; i++ {
			report(i, n, "")
		}
		return nil, nil
	})
	// The UI goroutine is busy elsewhere: nothing is drained meanwhile.
	for !r.idle("k") {
		q.mu.Lock()
		waiting := len(q.fns)
		q.mu.Unlock()
		if waiting > 2 {
			t.Fatalf("%d updates wait on the UI goroutine, want at most a progress update and the result", waiting)
		}
	}
	q.mu.Lock()
	waiting := len(q.fns)
	q.mu.Unlock()
	if waiting > 2 {
		t.Fatalf("%d updates wait on the UI goroutine after the work ended, want at most 2", waiting)
	}
	q.drain()
	if len(shown) == 0 || shown[len(shown)-1] != 1 {
		t.Errorf("progress shown %v, want it to end at 1", shown)
	}
}

// A training run leaves at most a few updates waiting on the UI goroutine
// however many progress reports it makes: the curves are redrawn from the
// latest figures, not once per report.
func TestTrainingDoesNotFloodTheUI(t *testing.T) {
	_, st, q := demoWindow(t, fyne.Size{})
	smallRecipe(st)
	st.trainNow()
	// Nothing drains the queue meanwhile, so its length only grows while
	// the training runs: a look every millisecond sees any excess that a
	// look without pause would, and leaves the training the cores.
	for !st.tasks.idle(taskTrain) {
		q.mu.Lock()
		waiting := len(q.fns)
		q.mu.Unlock()
		if waiting > 3 {
			t.Fatalf("%d updates wait on the UI goroutine during training, want at most 3", waiting)
		}
		time.Sleep(time.Millisecond)
	}
	q.waitFor(t, "the trained model", func() bool { return itemGet(st.model) != nil })
	run := st.trainingView.run.snapshot()
	if len(run.Epochs) != 3 || len(run.LossY) < 3 {
		t.Errorf("the run recorded %d epochs and %d loss points, want 3 epochs and a point per report", len(run.Epochs), len(run.LossY))
	}
}

// An update that comes within minProgressGap of the one shown before it is
// not lost: it reaches the window once the gap has passed, even when the
// work reports nothing more for a while (as training does while it fits the
// baseline after the last epoch's batches).
func TestProgressLatestUpdateArrivesLater(t *testing.T) {
	q := &queue{}
	r := newTaskRunner(q.post)
	var last atomic.Value
	last.Store("")
	r.onNote = func(_ float64, s string) {
		if s != "" {
			last.Store(s)
		}
	}
	release := make(chan struct{})
	defer close(release)
	r.start("k", true, func(ctx context.Context, report reporter) (func(), error) {
		report(1, 10, "batch 1")
		for last.Load() != "batch 1" {
			time.Sleep(time.Millisecond)
		}
		report(2, 10, "Fitting the baseline")
		<-release
		return nil, nil
	})
	deadline := time.Now().Add(10 * minProgressGap)
	for last.Load() != "Fitting the baseline" && time.Now().Before(deadline) {
		q.drain()
		time.Sleep(5 * time.Millisecond)
	}
	if got := last.Load(); got != "Fitting the baseline" {
		t.Errorf("status shows %q %v after the last report, want the last report %q", got, 10*minProgressGap, "Fitting the baseline")
	}
}

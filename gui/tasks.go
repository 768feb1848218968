package gui

import (
	"context"
	"errors"
	"sync"
	"time"
)

// Kinds of background work. One task of each kind runs at a time.
const (
	taskLoad    = "load"
	taskTrain   = "train"
	taskProfile = "profile"
	taskAudit   = "audit"
	taskExplain = "explain"
	taskRetrain = "retrain" // retraining without the cues the audit found
)

// barTasks are the kinds the status bar's Stop button stops.
var barTasks = []string{taskTrain, taskProfile, taskAudit, taskLoad, taskRetrain}

// errCanceled marks work stopped by the user; it is never shown as an error.
var errCanceled = errors.New("canceled")

// reporter is handed to background work to report progress; it may be
// called from any goroutine, as often as the work likes.
type reporter func(done, total int, what string)

// work is a background job: it returns what to do on the UI goroutine
// once it is done (apply may be nil) or an error.
type work func(ctx context.Context, report reporter) (apply func(), err error)

// task is one started job.
type task struct {
	kind     string
	gen      int
	inBar    bool
	ctx      context.Context
	cancel   context.CancelFunc
	work     work
	progress progressNote
	posted   bool        // a progress update waits on the UI goroutine
	lastPost time.Time   // when the last progress update was posted
	flush    *time.Timer // posts an update held back by minProgressGap, once the gap has passed
	ended    bool        // the task's outcome reached the UI goroutine: no more progress is shown
}

// progressNote is the latest progress a task reported.
type progressNote struct {
	done, total int
	what        string
}

// slot holds the task of one kind that runs and the one that waits for it.
type slot struct {
	running, pending *task
	latest           int // generation of the newest task started
	settled          int // generation of the newest task whose outcome reached the UI goroutine
}

// taskRunner runs background work so that the window stays responsive:
//
//   - at most one goroutine per kind of work: a new task cancels the running
//     one and starts when that goroutine has returned (work that cannot be
//     stopped at once, such as one explanation, never piles up: typing fast
//     starts one explanation after another, not one per key);
//   - a task superseded by a newer one of its kind never applies its result;
//   - progress reaches the UI goroutine as at most one pending update per
//     task, holding the latest figures, so a fast job cannot flood the UI
//     goroutine's queue.
//
// The State's fields are touched on the UI goroutine only; the runner's own
// fields are guarded by mu.
type taskRunner struct {
	ui      func(func())
	onBusy  func(busy bool)                  // UI goroutine: a status-bar task started or all ended
	onNote  func(fraction float64, s string) // UI goroutine: progress of a status-bar task
	onError func(err error)                  // UI goroutine: a task failed

	mu    sync.Mutex
	slots map[string]*slot
	gen   int
	// maxRunning is the most goroutines of one kind seen at once, for tests.
	maxRunning map[string]int
	running    map[string]int
	// starts counts the tasks started of each kind, for tests.
	starts map[string]int
	// closed is set when the window closes (close): nothing more is handed
	// to the UI goroutine.
	closed bool
}

func newTaskRunner(ui func(func())) *taskRunner {
	return &taskRunner{ui: ui, slots: map[string]*slot{}, maxRunning: map[string]int{}, running: map[string]int{}, starts: map[string]int{},
		onBusy: func(bool) {}, onNote: func(float64, string) {}, onError: func(error) {}}
}

// minProgressGap is the least time between two progress updates of a task
// that reach the window (an update held back by it is posted once the gap
// has passed, so the latest always gets through): each update redraws
// the window, which a software renderer does slowly.
const minProgressGap = 200 * time.Millisecond

// start runs w in the background as the newest task of kind, cancelling the
// task of that kind that runs now. Tasks with inBar show in the status bar.
// Must be called on the UI goroutine.
func (r *taskRunner) start(kind string, inBar bool, w work) {
	ctx, cancel := context.WithCancel(context.Background())
	r.mu.Lock()
	r.gen++
	r.starts[kind]++
	t := &task{kind: kind, gen: r.gen, inBar: inBar, ctx: ctx, cancel: cancel, work: w}
	s := r.slots[kind]
	if s == nil {
		s = &slot{}
		r.slots[kind] = s
	}
	s.latest = t.gen
	if s.pending != nil {
		s.pending.cancel()
	}
	if s.running != nil {
		s.running.cancel()
		s.pending = t
	} else {
		s.running, s.pending = t, nil
		r.launch(t)
	}
	r.mu.Unlock()
	if inBar {
		r.onBusy(true)
		r.onNote(0, "")
	}
}

// launch starts t's goroutine; r.mu is held.
func (r *taskRunner) launch(t *task) {
	r.running[t.kind]++
	r.maxRunning[t.kind] = max(r.maxRunning[t.kind], r.running[t.kind])
	go r.run(t)
}

// run does t's work, starts the task that waited for it, and hands the
// outcome to the UI goroutine.
func (r *taskRunner) run(t *task) {
	apply, err := t.work(t.ctx, func(done, total int, what string) { r.report(t, done, total, what) })
	if err == nil && t.ctx.Err() != nil {
		err = errCanceled
	}
	t.cancel()
	r.mu.Lock()
	r.running[t.kind]--
	s := r.slots[t.kind]
	var skipped *task // a waiting task stopped before it began
	if s.running == t {
		s.running = nil
		if next := s.pending; next != nil {
			s.pending = nil
			if next.ctx.Err() != nil {
				skipped = next
			} else {
				s.running = next
				r.launch(next)
			}
		}
	}
	r.mu.Unlock()
	r.toUI(func() {
		r.finish(t, apply, err)
		if skipped != nil {
			r.finish(skipped, nil, errCanceled)
		}
	})
}

// finish applies t's outcome on the UI goroutine, unless a newer task of
// its kind was started meanwhile.
func (r *taskRunner) finish(t *task, apply func(), err error) {
	r.mu.Lock()
	t.ended = true
	if t.flush != nil {
		t.flush.Stop()
		t.flush = nil
	}
	r.mu.Unlock()
	cur := r.current(t)
	if cur {
		r.mu.Lock()
		r.slots[t.kind].settled = t.gen
		r.mu.Unlock()
	}
	if t.inBar {
		r.onBusy(r.anyBarTask())
	}
	if !cur {
		return
	}
	if apply != nil {
		apply()
	}
	switch {
	case err == nil:
	case errors.Is(err, errCanceled), errors.Is(err, context.Canceled):
		if t.inBar {
			r.onNote(-1, "Stopped.")
		}
	default:
		r.onError(err)
	}
}

// report records t's progress and posts it to the UI goroutine unless an
// update is already waiting there (which will show the latest figures). An
// update that comes sooner than minProgressGap after the last one posted is
// held back, not dropped: a timer posts the latest figures once the gap has
// passed, so the window never keeps showing an older update while the work
// goes quiet.
func (r *taskRunner) report(t *task, done, total int, what string) {
	if !t.inBar {
		return
	}
	r.mu.Lock()
	t.progress = progressNote{done, total, what}
	now := time.Now()
	wait := minProgressGap - now.Sub(t.lastPost)
	post := !t.posted && (done >= total || wait <= 0)
	switch {
	case post:
		t.posted, t.lastPost = true, now
	case !t.posted && t.flush == nil:
		t.flush = time.AfterFunc(wait, func() { r.flushProgress(t) })
	}
	r.mu.Unlock()
	if post {
		r.postProgress(t)
	}
}

// flushProgress posts t's latest progress, held back by minProgressGap,
// unless an update already waits on the UI goroutine or t has ended.
func (r *taskRunner) flushProgress(t *task) {
	r.mu.Lock()
	t.flush = nil
	post := !t.posted && !t.ended
	if post {
		t.posted, t.lastPost = true, time.Now()
	}
	r.mu.Unlock()
	if post {
		r.postProgress(t)
	}
}

// postProgress hands t's latest progress to the UI goroutine; t.posted is set.
func (r *taskRunner) postProgress(t *task) {
	r.toUI(func() {
		r.mu.Lock()
		t.posted = false
		p, ended := t.progress, t.ended
		r.mu.Unlock()
		if ended || !r.current(t) {
			return
		}
		f := -1.0
		if p.total > 0 {
			f = float64(p.done) / float64(p.total)
		}
		r.onNote(f, p.what)
	})
}

// current reports whether t is the newest task of its kind.
func (r *taskRunner) current(t *task) bool {
	r.mu.Lock()
	defer r.mu.Unlock()
	return r.slots[t.kind].latest == t.gen
}

// anyBarTask reports whether a status-bar task runs or waits.
func (r *taskRunner) anyBarTask() bool {
	r.mu.Lock()
	defer r.mu.Unlock()
	for _, s := range r.slots {
		for _, t := range []*task{s.running, s.pending} {
			if t != nil && t.inBar && t.ctx.Err() == nil {
				return true
			}
		}
	}
	return false
}

// busy reports whether a task of kind runs or waits and is not cancelled.
func (r *taskRunner) busy(kind string) bool {
	r.mu.Lock()
	defer r.mu.Unlock()
	s := r.slots[kind]
	if s == nil {
		return false
	}
	for _, t := range []*task{s.running, s.pending} {
		if t != nil && t.ctx.Err() == nil {
			return true
		}
	}
	return false
}

// settled reports whether the newest task of kind, if any, has ended and
// its outcome has been handed to the UI goroutine (applied, or dropped as
// an error). A task that has ended may still wait for that on the UI
// goroutine's queue.
func (r *taskRunner) settled(kind string) bool {
	r.mu.Lock()
	defer r.mu.Unlock()
	s := r.slots[kind]
	return s == nil || s.settled == s.latest
}

// idle reports whether no goroutine of kind runs.
func (r *taskRunner) idle(kind string) bool {
	r.mu.Lock()
	defer r.mu.Unlock()
	s := r.slots[kind]
	return s == nil || (s.running == nil && s.pending == nil)
}

// cancel stops the tasks of kind, if any. A cancelled task's result is
// still applied when no newer task of its kind was started (so a stopped
// training keeps the best model so far).
func (r *taskRunner) cancel(kind string) {
	r.mu.Lock()
	defer r.mu.Unlock()
	if s := r.slots[kind]; s != nil {
		for _, t := range []*task{s.running, s.pending} {
			if t != nil {
				t.cancel()
			}
		}
	}
}

// toUI hands fn to the UI goroutine, unless the window has closed: once the
// toolkit's loop has ended, fn would run on the calling goroutine and
// reach widgets from there.
func (r *taskRunner) toUI(fn func()) {
	r.mu.Lock()
	closed := r.closed
	r.mu.Unlock()
	if !closed {
		r.ui(fn)
	}
}

// close stops every task for good, as the window closes: their outcomes
// and progress are no longer shown. Safe on any goroutine.
func (r *taskRunner) close() {
	r.mu.Lock()
	r.closed = true
	r.mu.Unlock()
	r.cancelAll()
}

// cancelAll stops every task.
func (r *taskRunner) cancelAll() {
	r.mu.Lock()
	kinds := make([]string, 0, len(r.slots))
	for k := range r.slots {
		kinds = append(kinds, k)
	}
	r.mu.Unlock()
	for _, k := range kinds {
		r.cancel(k)
	}
}

// most returns the most goroutines of kind that ever ran at once.
func (r *taskRunner) most(kind string) int {
	r.mu.Lock()
	defer r.mu.Unlock()
	return r.maxRunning[kind]
}

// started returns how many tasks of kind were started.
func (r *taskRunner) started(kind string) int {
	r.mu.Lock()
	defer r.mu.Unlock()
	return r.starts[kind]
}

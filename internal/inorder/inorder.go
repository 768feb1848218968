package inorder

import (
	"context"
	"errors"
	"sync"
)

type job[T any] struct {
	seq  int
	item T
}

type result[T, R any] struct {
	job[T]
	r   R
	err error
}

// fedAll is the feed's end: how many items it put, and its own error.
type fedAll struct {
	n   int
	err error
}

// errStopped ends the feed after an earlier error; Run returns that error,
// not this one.
var errStopped = errors.New("inorder: stopped after an earlier error")

// Run calls feed, which calls put once per item in order; each item goes to
// work on one of workers goroutines (1 or more; w is the worker's number,
// 0 to workers−1, for per-worker scratch), and emit gets every item's
// result in the order the items were put, on the goroutine that called Run.
//
// Errors come as a sequential loop would give them: Run returns the first
// error in item order (work's error for an item, emit's, or, after every
// item put, feed's own), after emitting the results of all earlier items
// and none of the later ones. Once an error or ctx's end is known, put
// returns an error and the context given to feed ends, so that feed stops
// even while it waits for its next item (ctx's error when ctx ended); work
// already started is finished and dropped. At most 4·workers items are in
// flight at any time.
//
// Work must be safe to call from several goroutines at once for different
// items; emit and feed are each called from one goroutine.
func Run[T, R any](ctx context.Context, workers int, feed func(ctx context.Context, put func(T) error) error,
	work func(w int, item T) (R, error), emit func(item T, r R) error) error {
	workers = max(1, workers)
	ctx, stop := context.WithCancelCause(ctx)
	defer stop(nil)
	jobs := make(chan job[T])
	results := make(chan result[T, R], workers)
	slots := make(chan struct{}, 4*workers) // items put and not yet emitted
	var wg sync.WaitGroup
	for w := range workers {
		wg.Go(func() {
			for j := range jobs {
				r, err := work(w, j.item)
				results <- result[T, R]{j, r, err}
			}
		})
	}
	fed := make(chan fedAll, 1)
	go func() {
		n := 0
		err := feed(ctx, func(item T) error {
			if ctx.Err() != nil { // select picks at random among ready cases
				return context.Cause(ctx)
			}
			select {
			case slots <- struct{}{}:
			case <-ctx.Done():
				return context.Cause(ctx)
			}
			select {
			case jobs <- job[T]{n, item}:
				n++
				return nil
			case <-ctx.Done():
				return context.Cause(ctx)
			}
		})
		close(jobs)
		fed <- fedAll{n, err}
	}()
	go func() { wg.Wait(); close(results) }()

	err := collect(ctx, results, fed, slots, emit)
	stop(errStopped)
	for range results { // no goroutine outlives Run
	}
	return err
}

// collect emits the results in order until every item put is emitted or
// an error is known, and returns that error (nil at the end).
func collect[T, R any](ctx context.Context, results <-chan result[T, R], fed <-chan fedAll,
	slots <-chan struct{}, emit func(T, R) error) error {
	pending := map[int]result[T, R]{}
	next, total := 0, -1 // total: the items put, once the feed has ended
	var feedErr error
	for total < 0 || next < total {
		select {
		case r, ok := <-results:
			if !ok {
				results = nil // every worker done; the feed's end is on its way
				continue
			}
			pending[r.seq] = r
		case f := <-fed:
			total, feedErr = f.n, f.err
			continue
		case <-ctx.Done():
			return context.Cause(ctx)
		}
		for r, ok := pending[next]; ok; r, ok = pending[next] {
			delete(pending, next)
			if ctx.Err() != nil { // as a loop's next turn would see it
				return context.Cause(ctx)
			}
			if r.err != nil {
				return r.err
			}
			if err := emit(r.item, r.r); err != nil {
				return err
			}
			next++
			<-slots
		}
	}
	return feedErr
}

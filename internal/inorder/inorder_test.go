package inorder

import (
	"context"
	"errors"
	"fmt"
	"math/rand/v2"
	"runtime"
	"sync/atomic"
	"testing"
	"time"
)

// feedN puts 0, 1, …, n−1 and then returns end.
func feedN(n int, end error) func(context.Context, func(int) error) error {
	return func(_ context.Context, put func(int) error) error {
		for i := range n {
			if err := put(i); err != nil {
				return err
			}
		}
		return end
	}
}

// jittered squares i after a random pause, so that results come out of
// order.
func jittered(_ int, i int) (int, error) {
	time.Sleep(time.Duration(rand.IntN(200)) * time.Microsecond)
	return i * i, nil
}

// TestRunKeepsTheOrder: whatever the number of workers, emit sees every
// item once, in order, with its own result (the loop's output; common
// practice, no source).
func TestRunKeepsTheOrder(t *testing.T) {
	for _, workers := range []int{0, 1, 2, 7} {
		var got []int
		err := Run(t.Context(), workers, feedN(300, nil), jittered, func(i, r int) error {
			if r != i*i {
				t.Fatalf("workers %d: item %d got result %d", workers, i, r)
			}
			got = append(got, i)
			return nil
		})
		if err != nil {
			t.Fatalf("workers %d: %v", workers, err)
		}
		if len(got) != 300 {
			t.Fatalf("workers %d: %d items emitted, want 300", workers, len(got))
		}
		for k, i := range got {
			if k != i {
				t.Fatalf("workers %d: position %d holds item %d", workers, k, i)
			}
		}
	}
}

// TestRunErrorsAsALoop: the first error in item order wins, every earlier
// item is emitted and no later one, and the goroutines are gone after Run.
func TestRunErrorsAsALoop(t *testing.T) {
	bad := errors.New("bad item")
	emitBad := errors.New("emit refused")
	feedBad := errors.New("bad line")
	cases := []struct {
		name      string
		feed      func(context.Context, func(int) error) error
		work      func(int, int) (int, error)
		emitFails int // item at which emit fails; −1: never
		want      error
		emitted   int
	}{
		{"work fails at 40, later items fail too", feedN(200, nil), func(w, i int) (int, error) {
			if i == 40 || i == 41 || i > 150 {
				return 0, fmt.Errorf("item %d: %w", i, bad)
			}
			return jittered(w, i)
		}, -1, bad, 40},
		{"emit fails at 17", feedN(200, nil), jittered, 17, emitBad, 17},
		{"feed fails after 60 items", feedN(60, feedBad), jittered, -1, feedBad, 60},
		{"feed fails before any item", feedN(0, feedBad), jittered, -1, feedBad, 0},
		{"no items", feedN(0, nil), jittered, -1, nil, 0},
	}
	before := runtime.NumGoroutine()
	for _, c := range cases {
		emitted := 0
		err := Run(t.Context(), 3, c.feed, c.work, func(i, _ int) error {
			if i == c.emitFails {
				return emitBad
			}
			if i != emitted {
				t.Fatalf("%s: item %d emitted at position %d", c.name, i, emitted)
			}
			emitted++
			return nil
		})
		if !errors.Is(err, c.want) || (c.want == nil) != (err == nil) {
			t.Errorf("%s: error %v, want %v", c.name, err, c.want)
		}
		if c.name == "work fails at 40, later items fail too" && err != nil && err.Error() != "item 40: bad item" {
			t.Errorf("%s: error %q, want item 40's", c.name, err)
		}
		if emitted != c.emitted {
			t.Errorf("%s: %d items emitted, want %d", c.name, emitted, c.emitted)
		}
	}
	waitGoroutines(t, before)
}

// TestRunStopsOnCancel: a cancelled context ends Run with its error, stops
// the feed, and leaves no goroutine behind.
func TestRunStopsOnCancel(t *testing.T) {
	before := runtime.NumGoroutine()
	ctx, cancel := context.WithCancel(t.Context())
	var put atomic.Int64
	endless := func(_ context.Context, p func(int) error) error {
		for i := 0; ; i++ {
			if err := p(i); err != nil {
				return err
			}
			put.Add(1)
		}
	}
	after := 0 // items emitted after the cancel
	err := Run(ctx, 2, endless, jittered, func(i, _ int) error {
		if i > 25 {
			after++
		}
		if i == 25 {
			cancel()
		}
		return nil
	})
	if after > 0 {
		t.Errorf("%d items emitted after the cancel, want none (a loop stops at its next turn)", after)
	}
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("error %v, want context.Canceled", err)
	}
	if n := put.Load(); n > 25+1+4*2 {
		t.Errorf("%d items put after a cancel at item 25: more than the 8 in flight", n)
	}
	waitGoroutines(t, before)
}

// TestRunBoundsItemsInFlight: with one slow item at the head, the feed
// stops at 4·workers items put and not emitted.
func TestRunBoundsItemsInFlight(t *testing.T) {
	var put, emitted atomic.Int64
	most := int64(0)
	feed := func(_ context.Context, p func(int) error) error {
		for i := range 100 {
			if err := p(i); err != nil {
				return err
			}
			if d := put.Add(1) - emitted.Load(); d > most {
				most = d
			}
		}
		return nil
	}
	work := func(_ int, i int) (int, error) {
		if i == 0 {
			time.Sleep(50 * time.Millisecond)
		}
		return i, nil
	}
	if err := Run(t.Context(), 2, feed, work, func(int, int) error { emitted.Add(1); return nil }); err != nil {
		t.Fatal(err)
	}
	if most > 8 {
		t.Errorf("%d items in flight, want at most 8", most)
	}
	if emitted.Load() != 100 {
		t.Errorf("%d emitted, want 100", emitted.Load())
	}
}

// waitGoroutines fails when the goroutine count does not come back to
// before within a second.
func waitGoroutines(t *testing.T, before int) {
	t.Helper()
	for range 100 {
		if runtime.NumGoroutine() <= before {
			return
		}
		time.Sleep(10 * time.Millisecond)
	}
	t.Errorf("%d goroutines left running, %d before", runtime.NumGoroutine(), before)
}

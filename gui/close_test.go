package gui

import (
	"context"
	"testing"
	"time"
)

// TestClosingStopsBackgroundWork: when the window closes (Close, which the
// user's close also ends in) or quits, the background work is cancelled and
// hands nothing more to the UI goroutine: once the toolkit's loop has
// ended, that work would reach widgets from its own goroutine.
func TestClosingStopsBackgroundWork(t *testing.T) {
	for _, how := range []string{"Close", "quit"} {
		t.Run(how, func(t *testing.T) {
			w, st, q := demoWindow(t, defaultSize)
			q.drain()
			returned := make(chan struct{})
			st.tasks.start("close-test", true, func(ctx context.Context, report reporter) (func(), error) {
				defer close(returned)
				<-ctx.Done()
				report(1, 1, "after the close")
				return func() { t.Error("a task's outcome was applied after the window closed") }, nil
			})
			q.drain()
			if how == "Close" {
				w.Close()
			} else {
				st.tasks.close() // what NewWindow's quit does before the app quits
			}
			select {
			case <-returned:
			case <-time.After(time.Minute):
				t.Fatal("the background task was not cancelled when the window closed")
			}
			// run's last step, the hand-over, follows the work's return.
			time.Sleep(100 * time.Millisecond)
			q.mu.Lock()
			n := len(q.fns)
			q.mu.Unlock()
			if n != 0 {
				t.Errorf("%d functions handed to the UI goroutine after the window closed", n)
			}
		})
	}
}

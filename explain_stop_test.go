package main

import (
	"bytes"
	"context"
	"errors"
	"io"
	"testing"
	"time"
)

// failingWriter refuses every write, as a full disk or a closed pipe does.
type failingWriter struct{}

func (failingWriter) Write([]byte) (int, error) { return 0, errors.New("disk full") }

// TestExplainStopsAtWriteErrorWithStdinOpen: when standard output fails,
// explain stops at once with the error, as a loop over the lines does,
// even while standard input stays open with no next line yet (a terminal
// or a slow pipe); it must not wait for more input first.
func TestExplainStopsAtWriteErrorWithStdinOpen(t *testing.T) {
	model := tinyModel(t)
	pr, pw := io.Pipe()
	defer pw.Close()
	go pw.Write([]byte("a fine text to explain\n")) // then stdin stays open
	done := make(chan int, 1)
	var errb bytes.Buffer
	go func() {
		done <- run(context.Background(), []string{"explain", "--model", model, "--color", "never"}, pr, failingWriter{}, &errb)
	}()
	select {
	case code := <-done:
		if code != 1 {
			t.Fatalf("explain with a failing stdout: exit %d, want 1: %s", code, errb.String())
		}
	case <-time.After(5 * time.Second):
		pw.Close()
		<-done
		t.Fatalf("explain with a failing stdout waited for more input instead of stopping at the write error")
	}
}

package main

import (
	"context"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
)

// cancelOnWrite is a standard output that ends a run's context at its
// first write, as an interrupt that comes once output has begun.
type cancelOnWrite struct {
	mu     sync.Mutex
	b      strings.Builder
	cancel context.CancelFunc
}

func (w *cancelOnWrite) Write(p []byte) (int, error) {
	w.mu.Lock()
	defer w.mu.Unlock()
	w.cancel()
	return w.b.Write(p)
}

// TestStopSaysWhatWasKept: predict and explain stopped once their output
// has begun say how many texts' output they printed — the count checked
// against the output itself — and that the export was not written (the
// file is absent afterwards); stopped before any output, they say so.
func TestStopSaysWhatWasKept(t *testing.T) {
	model := tinyModel(t)
	data := smallDemo(t, 700)
	count := regexp.MustCompile(`stopped after printing the \w+ of (\d+) texts?, the first in the input; nothing was written to `)
	for _, c := range []struct {
		cmd  string
		args []string
		unit func(out string) int // texts in the output
	}{
		{"predict", nil, func(out string) int { return strings.Count(out, "\n") }},
		{"explain", []string{"--threads", "1"}, func(out string) int { return strings.Count(out, "\nlabel: ") }},
	} {
		exp := filepath.Join(t.TempDir(), "e.csv")
		ctx, cancel := context.WithCancel(context.Background())
		w := &cancelOnWrite{cancel: cancel}
		var stderr strings.Builder
		args := append([]string{c.cmd, "--model", model, "--data", data, "--export", exp}, c.args...)
		code := run(ctx, args, strings.NewReader(""), w, &stderr)
		cancel()
		m := count.FindStringSubmatch(stderr.String())
		if code != 130 || m == nil || !strings.Contains(stderr.String(), "nothing was written to "+exp) {
			t.Fatalf("%s: exit %d, stderr %q: want 130 and the count of texts printed", c.cmd, code, stderr.String())
		}
		n, _ := strconv.Atoi(m[1])
		if got := c.unit(w.b.String()); n != got || n == 0 {
			t.Errorf("%s: says %d texts were printed; the output holds %d", c.cmd, n, got)
		}
		if _, err := os.Stat(exp); !os.IsNotExist(err) {
			t.Errorf("%s: the export exists after the stop (%v)", c.cmd, err)
		}
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	var stdout, stderr strings.Builder
	if code := run(ctx, []string{"predict", "--model", model, "--data", data}, strings.NewReader(""), &stdout, &stderr); code != 130 ||
		!strings.Contains(stderr.String(), "interrupted: stopped before any output was printed") || stdout.Len() > 0 {
		t.Errorf("predict stopped at once: exit %d, stderr %q, %d bytes printed", code, stderr.String(), stdout.Len())
	}
}

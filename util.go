package main

import (
	"context"
	"encoding/json"
	"io"
	"sort"
	"strings"
)

// oneLine shortens s to at most n runes on one line.
func oneLine(s string, n int) string {
	s = strings.Join(strings.Fields(s), " ")
	r := []rune(s)
	if len(r) > n {
		return string(r[:n-1]) + "…"
	}
	return s
}

// jsonLine encodes v as one line of JSON.
func jsonLine(v any) ([]byte, error) {
	b, err := json.Marshal(v)
	return append(b, '\n'), err
}

// writeJSON writes v as indented JSON.
func writeJSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}

// sortBy sorts idx by key, stably.
func sortBy(idx []int, key func(int) float64) {
	sort.SliceStable(idx, func(a, b int) bool { return key(idx[a]) < key(idx[b]) })
}

// maxStdinLine is the longest line read from standard input.
const maxStdinLine = 16 << 20

// eachLine calls fn with every line of r, a line of white space only as a
// Blank text (read as lineBatches reads them, cut to limit bytes, warnings
// on warn). The lines are read on a goroutine of their own (see lineBatches), so that
// a cancelled ctx ends the loop even while r blocks (a terminal waiting for
// input); that goroutine then ends with r.
func eachLine(ctx context.Context, r io.Reader, warn io.Writer, limit int, fn func(text) error) error {
	type batch struct {
		texts []text
		err   error
	}
	batches := make(chan batch)
	done := make(chan struct{})
	defer close(done)
	go func() {
		defer close(batches)
		next := lineBatches(r, warn, limit)
		for {
			var b textBatch
			more, err := next(&b)
			select {
			case batches <- batch{texts: b.texts, err: err}:
			case <-done:
				return
			}
			if !more || err != nil {
				return
			}
		}
	}()
	for {
		select {
		case <-ctx.Done():
			return ctx.Err()
		case b, ok := <-batches:
			if !ok {
				return nil
			}
			for _, t := range b.texts {
				if err := ctx.Err(); err != nil {
					return err
				}
				if err := fn(t); err != nil {
					return err
				}
			}
			if b.err != nil {
				return b.err
			}
		}
	}
}

// warnTo is w, or nil (no warnings) with quiet.
func warnTo(w io.Writer, quiet bool) io.Writer {
	if quiet {
		return nil
	}
	return w
}

// lineCell is an input line number as an export table's cell: nil (an
// empty cell) for a text without one (0).
func lineCell(line int) any {
	if line > 0 {
		return line
	}
	return nil
}

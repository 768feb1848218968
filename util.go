package main

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
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

// eachLine calls fn with every line of r that holds more than white space.
// The lines are read on a goroutine of their own, so that a cancelled ctx
// ends the loop even while r blocks (a terminal waiting for input); that
// goroutine then ends with r.
func eachLine(ctx context.Context, r io.Reader, fn func(string) error) error {
	type line struct {
		text string
		err  error
	}
	lines := make(chan line)
	done := make(chan struct{})
	defer close(done)
	go func() {
		defer close(lines)
		sc := bufio.NewScanner(r)
		sc.Buffer(make([]byte, 64*1024), maxStdinLine)
		for sc.Scan() {
			select {
			case lines <- line{text: sc.Text()}:
			case <-done:
				return
			}
		}
		if err := sc.Err(); err != nil {
			select {
			case lines <- line{err: err}:
			case <-done:
			}
		}
	}()
	for {
		select {
		case <-ctx.Done():
			return ctx.Err()
		case l, ok := <-lines:
			switch {
			case !ok:
				return nil
			case l.err != nil:
				return fmt.Errorf("reading standard input: %w (lines are limited to 16 MiB)", l.err)
			case strings.TrimSpace(l.text) == "":
			default:
				if err := fn(l.text); err != nil {
					return err
				}
			}
		}
	}
}

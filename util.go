package main

import (
	"bufio"
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"sort"
	"strconv"
	"strings"
)

// splitList splits a comma-separated option value, dropping empty entries.
func splitList(s string) []string {
	var out []string
	for _, p := range strings.Split(s, ",") {
		if p = strings.TrimSpace(p); p != "" {
			out = append(out, p)
		}
	}
	return out
}

// cutEq splits "a=b".
func cutEq(s string) (string, string, bool) {
	a, b, ok := strings.Cut(s, "=")
	return strings.TrimSpace(a), strings.TrimSpace(b), ok
}

// parseInts parses a comma-separated list of integers.
func parseInts(s, flagName string) ([]int, error) {
	var out []int
	for _, p := range splitList(s) {
		n, err := strconv.Atoi(p)
		if err != nil {
			return nil, usagef("--%s %q: %q is not a whole number", flagName, s, p)
		}
		out = append(out, n)
	}
	return out, nil
}

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

// sortBy sorts idx by key, stably.
func sortBy(idx []int, key func(int) float64) {
	sort.SliceStable(idx, func(a, b int) bool { return key(idx[a]) < key(idx[b]) })
}

// eachLine calls fn with every line of r that holds more than white space.
func eachLine(ctx context.Context, r io.Reader, fn func(string) error) error {
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 64*1024), 16<<20)
	for sc.Scan() {
		if err := ctx.Err(); err != nil {
			return err
		}
		if strings.TrimSpace(sc.Text()) == "" {
			continue
		}
		if err := fn(sc.Text()); err != nil {
			return err
		}
	}
	if err := sc.Err(); err != nil {
		return fmt.Errorf("reading standard input: %w (lines are limited to 16 MiB)", err)
	}
	return nil
}

// isSet reports whether the flag name was given on the command line.
func isSet(fs *flag.FlagSet, name string) bool {
	set := false
	fs.Visit(func(f *flag.Flag) { set = set || f.Name == name })
	return set
}

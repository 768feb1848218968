package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"runtime"
	"slices"
	"strconv"
	"strings"
)

// Option values whose parse errors say what is accepted. The flag
// package's own numeric options answer a bad value with "parse error";
// these name the kind of value wanted, and the float options refuse NaN
// and infinities, which no option of telltale means.

// intValue is an option holding a whole number.
type intValue struct{ p *int }

func (v intValue) String() string {
	if v.p == nil {
		return "0"
	}
	return strconv.Itoa(*v.p)
}

func (v intValue) Set(s string) error {
	n, err := strconv.ParseInt(strings.TrimSpace(s), 10, 0)
	if err != nil {
		return errors.New("not a whole number")
	}
	*v.p = int(n)
	return nil
}

func (intValue) typeName() string { return "int" }

// seedValue is an option holding a seed: a whole number from 0 to 2⁶⁴−1.
type seedValue struct{ p *uint64 }

func (v seedValue) String() string {
	if v.p == nil {
		return "0"
	}
	return strconv.FormatUint(*v.p, 10)
}

func (v seedValue) Set(s string) error {
	n, err := strconv.ParseUint(strings.TrimSpace(s), 10, 64)
	if err != nil {
		return fmt.Errorf("a seed is a whole number from 0 to %d", uint64(math.MaxUint64))
	}
	*v.p = n
	return nil
}

func (seedValue) typeName() string { return "uint" }

// floatValue is an option holding a finite number.
type floatValue struct{ p *float64 }

func (v floatValue) String() string {
	if v.p == nil {
		return "0"
	}
	return strconv.FormatFloat(*v.p, 'g', -1, 64)
}

func (v floatValue) Set(s string) error {
	x, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	if err != nil && !errors.Is(err, strconv.ErrRange) {
		return errors.New("not a number")
	}
	if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
		return errors.New("not a finite number")
	}
	*v.p = x
	return nil
}

func (floatValue) typeName() string { return "float" }

func intVar(fs *flag.FlagSet, p *int, name string, def int, usage string) {
	*p = def
	fs.Var(intValue{p}, name, usage)
}

func floatVar(fs *flag.FlagSet, p *float64, name string, def float64, usage string) {
	*p = def
	fs.Var(floatValue{p}, name, usage)
}

func seedVar(fs *flag.FlagSet, p *uint64, name string, def uint64, usage string) {
	*p = def
	fs.Var(seedValue{p}, name, usage)
}

// isSet reports whether the option name was given on the command line.
func isSet(fs *flag.FlagSet, name string) bool {
	set := false
	fs.Visit(func(f *flag.Flag) { set = set || f.Name == name })
	return set
}

// listItems splits a comma-separated option value into its items, trimmed
// of white space; an empty item (as in "3,,5") is a usage error naming the
// option. An empty value is an empty list.
func listItems(option, value string) ([]string, error) {
	if strings.TrimSpace(value) == "" {
		return nil, nil
	}
	parts := strings.Split(value, ",")
	for i, p := range parts {
		parts[i] = strings.TrimSpace(p)
		if parts[i] == "" {
			return nil, usagef("--%s %q: item %d of %d is empty: separate the items by single commas", option, clip(value), i+1, len(parts))
		}
	}
	return parts, nil
}

// listInts parses a comma-separated list of whole numbers, each at least
// lo, for the option named.
func listInts(option, value string, lo int, what string) ([]int, error) {
	items, err := listItems(option, value)
	if err != nil {
		return nil, err
	}
	out := make([]int, len(items))
	for i, it := range items {
		n, err := strconv.Atoi(it)
		if err != nil {
			return nil, usagef("--%s %q: %q is not a whole number", option, clip(value), clip(it))
		}
		if n < lo {
			return nil, usagef("--%s %q: %d is not %s", option, clip(value), n, what)
		}
		out[i] = n
	}
	return out, nil
}

// filterIndexes is --filters: a comma-separated list of filter indexes
// (0 or more), each given once.
func filterIndexes(value string) ([]int, error) {
	out, err := listInts("filters", value, 0, "a filter index (0 or more)")
	if err != nil {
		return nil, err
	}
	for i, n := range out {
		if slices.Contains(out[:i], n) {
			return nil, usagef("--filters %q: filter %d is given twice: give each index once", clip(value), n)
		}
	}
	return out, nil
}

// maxThreadsPerCore bounds --threads: more goroutines than this many per
// core only add memory (every training thread holds its own gradients) and
// waiting.
const maxThreadsPerCore = 4

// threadsOption is --threads, the number of worker goroutines.
type threadsOption struct{ N int }

func (t *threadsOption) register(fs *flag.FlagSet) {
	intVar(fs, &t.N, "threads", 0, fmt.Sprintf("worker goroutines: 0 is one per core; at most %d per core", maxThreadsPerCore))
}

// check refuses a negative count and lowers one above the cap, with a
// warning on w.
func (t *threadsOption) check(w io.Writer) error {
	if t.N < 0 {
		return usagef("--threads %d: give 1 or more worker goroutines, or 0 for one per core", t.N)
	}
	if most := maxThreadsPerCore * runtime.NumCPU(); t.N > most {
		fmt.Fprintf(w, "warning: --threads %d is more than %d per core on this machine's %d cores: using %d\n", t.N, maxThreadsPerCore, runtime.NumCPU(), most)
		t.N = most
	}
	return nil
}

// checkShare refuses a share that is not strictly between 0 and 1.
func checkShare(option string, x float64, what string) error {
	if x <= 0 || x >= 1 {
		return usagef("--%s %g: give a share between 0 and 1 (exclusive) %s", option, x, what)
	}
	return nil
}

// checkAtLeast refuses an option value below lo.
func checkAtLeast(option string, n, lo int, what string) error {
	if n < lo {
		return usagef("--%s %d: give %d or more (%s)", option, n, lo, what)
	}
	return nil
}

// maxEcho is the most bytes of a value typed or read that a message repeats.
const maxEcho = 200

// clip cuts s to maxEcho bytes at a character boundary, noting the length.
func clip(s string) string {
	if len(s) <= maxEcho {
		return s
	}
	cut := maxEcho
	for cut > 0 && s[cut]&0xC0 == 0x80 {
		cut--
	}
	return fmt.Sprintf("%s… (%d bytes)", s[:cut], len(s))
}

package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/exec"
	"syscall"
	"time"
)

// cliResult is one timed run of a command line as a user runs it (a
// process of its own, its input from a file, its output read through a
// pipe), or one run of the reference that the table sets beside it.
type cliResult struct {
	Impl    string  `json:"impl"` // "cli"; the reference writes "torch-forward" or "torch-text"
	Case    string  `json:"case"` // the table row group, e.g. "predict spam"
	Texts   int     `json:"texts"`
	Seconds float64 `json:"seconds"` // wall time of the whole process
	// PeakRSSMB is the process's peak resident set (getrusage's ru_maxrss).
	PeakRSSMB float64 `json:"peak_rss_mb"`
	OutLines  int     `json:"out_lines"`
	// Numbers are the top-level numbers of the command's standard output
	// when it is one JSON object (-stdout-json), e.g. train's
	// examples_per_second.
	Numbers map[string]float64 `json:"numbers,omitempty"`
	Load    string             `json:"loadavg"` // /proc/loadavg at the end
}

// cmdCLI runs one command line (the arguments after --), timing it:
//
//	bench cli -case C [-impl cli|torch-text] -texts N [-stdin FILE] [-out-lines N] [-stdout-json] -json RES -- bin/telltale predict …
//
// Standard output is counted (lines) and, with -stdout-json, kept and
// parsed; standard error passes through. A run that fails, or whose output
// has another number of lines than -out-lines, is an error and records
// nothing.
func cmdCLI(args []string) error {
	fs := flag.NewFlagSet("cli", flag.ExitOnError)
	name := fs.String("case", "", "the table row group, e.g. \"predict spam\"")
	impl := fs.String("impl", "cli", "what runs: cli (telltale) or torch-text (the reference script)")
	texts := fs.Int("texts", 0, "texts the command handles (for the rates)")
	stdin := fs.String("stdin", "", "file given as standard input (default: none)")
	wantLines := fs.Int("out-lines", -1, "lines the output must have (-1: any)")
	stdoutJSON := fs.Bool("stdout-json", false, "keep the top-level numbers of the JSON object printed on standard output")
	out := fs.String("json", "", "append the result to this file (JSON lines)")
	fs.Parse(args)
	argv := fs.Args()
	if *name == "" || len(argv) == 0 {
		return fmt.Errorf("cli: give -case and, after --, the command line to time")
	}
	cmd := exec.Command(argv[0], argv[1:]...)
	cmd.Stderr = os.Stderr
	if *stdin != "" {
		f, err := os.Open(*stdin)
		if err != nil {
			return fmt.Errorf("cli: %w", err)
		}
		defer f.Close()
		cmd.Stdin = f
	}
	pipe, err := cmd.StdoutPipe()
	if err != nil {
		return err
	}
	var kept bytes.Buffer
	counter := &lineCounter{keep: *stdoutJSON, buf: &kept}
	start := time.Now()
	if err := cmd.Start(); err != nil {
		return fmt.Errorf("cli: %w", err)
	}
	_, copyErr := io.Copy(counter, pipe)
	waitErr := cmd.Wait()
	secs := time.Since(start).Seconds()
	if waitErr != nil {
		return fmt.Errorf("cli: %s: %w", *name, waitErr)
	}
	if copyErr != nil {
		return fmt.Errorf("cli: %s: reading its output: %w", *name, copyErr)
	}
	if *wantLines >= 0 && counter.lines != *wantLines {
		return fmt.Errorf("cli: %s printed %d lines, want %d", *name, counter.lines, *wantLines)
	}
	r := cliResult{Impl: *impl, Case: *name, Texts: *texts, Seconds: secs, OutLines: counter.lines, Load: loadavg()}
	if ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage); ok {
		r.PeakRSSMB = float64(ru.Maxrss) / 1024 // kilobytes on Linux
	}
	if *stdoutJSON {
		if r.Numbers, err = topNumbers(kept.Bytes()); err != nil {
			return fmt.Errorf("cli: %s: %w", *name, err)
		}
	}
	return emit(*out, r)
}

// lineCounter counts the newlines written to it and, when keep is set,
// keeps what is written in buf.
type lineCounter struct {
	lines int
	keep  bool
	buf   *bytes.Buffer
}

func (c *lineCounter) Write(p []byte) (int, error) {
	c.lines += bytes.Count(p, []byte{'\n'})
	if c.keep {
		c.buf.Write(p)
	}
	return len(p), nil
}

// topNumbers returns the top-level numeric fields of one JSON object.
func topNumbers(b []byte) (map[string]float64, error) {
	var obj map[string]json.RawMessage
	if err := json.Unmarshal(b, &obj); err != nil {
		return nil, errors.New("its standard output is not one JSON object")
	}
	nums := map[string]float64{}
	for k, v := range obj {
		var x float64
		if json.Unmarshal(v, &x) == nil {
			nums[k] = x
		}
	}
	return nums, nil
}

//go:build linux

package main

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"os"
	"strings"
	"syscall"
	"testing"

	"golang.org/x/sys/unix"
)

// openPTY opens a pseudo-terminal and returns its controlling side and
// its terminal side, which term.IsTerminal accepts as a terminal (Linux's
// /dev/ptmx, as posix_openpt, unlockpt and ptsname do it).
func openPTY(t *testing.T) (ptm, pts *os.File) {
	t.Helper()
	ptm, err := os.OpenFile("/dev/ptmx", os.O_RDWR|syscall.O_NOCTTY, 0)
	if err != nil {
		t.Skipf("no pseudo-terminal here: %v", err)
	}
	fd := int(ptm.Fd())
	if err := unix.IoctlSetPointerInt(fd, unix.TIOCSPTLCK, 0); err != nil {
		ptm.Close()
		t.Fatal(err)
	}
	n, err := unix.IoctlGetInt(fd, unix.TIOCGPTN)
	if err != nil {
		ptm.Close()
		t.Fatal(err)
	}
	pts, err = os.OpenFile(fmt.Sprintf("/dev/pts/%d", n), os.O_RDWR|syscall.O_NOCTTY, 0)
	if err != nil {
		ptm.Close()
		t.Fatal(err)
	}
	return ptm, pts
}

// runOnTerminal runs one command line in-process with its standard error
// on a pseudo-terminal and returns the exit code, standard output and what
// the terminal received.
func runOnTerminal(t *testing.T, stdin string, args ...string) (int, string, string) {
	t.Helper()
	ptm, pts := openPTY(t)
	defer ptm.Close()
	got := make(chan []byte)
	go func() {
		b, _ := io.ReadAll(ptm) // ends with EIO once the terminal side is closed
		got <- b
	}()
	var out bytes.Buffer
	code := run(context.Background(), args, strings.NewReader(stdin), &out, pts)
	pts.Close()
	return code, out.String(), string(<-got)
}

// TestProgressOnTerminal: explain and predict draw their progress on
// standard error when it is a terminal (a pseudo-terminal here) — a bar
// with the count of --data's texts, a running count for standard input —
// and none with --quiet or when standard error is not a terminal; standard
// output is byte for byte what it is without a terminal.
func TestProgressOnTerminal(t *testing.T) {
	model := tinyModel(t)
	data := smallDemo(t, 120)
	var lines strings.Builder
	for i := range 40 {
		fmt.Fprintf(&lines, "the ferry %d was late\n", i)
	}
	cases := []struct {
		name, stdin string
		args        []string
		want        string // on the terminal
	}{
		{"explain --data", "", []string{"explain", "--model", model, "--data", data, "--threads", "1"}, "explaining: 1 of "},
		{"explain stdin", lines.String(), []string{"explain", "--model", model, "--json"}, "explaining: 1 text so far"},
		{"predict --data", "", []string{"predict", "--model", model, "--data", data}, "labeling: 1 of "},
		{"predict stdin", lines.String(), []string{"predict", "--model", model}, "labeling: 1 text so far"},
	}
	for _, c := range cases {
		code, plain, stderr := runCmd(t, c.stdin, c.args...)
		if code != 0 {
			t.Fatalf("%s: exit %d: %s", c.name, code, stderr)
		}
		if strings.Contains(stderr, "\r") || strings.Contains(stderr, c.want[:9]) {
			t.Errorf("%s: progress on a standard error that is not a terminal: %q", c.name, stderr)
		}
		code, out, term := runOnTerminal(t, c.stdin, c.args...)
		if code != 0 {
			t.Fatalf("%s on a terminal: exit %d: %s", c.name, code, term)
		}
		if !strings.Contains(term, c.want) || !strings.Contains(term, "\r") {
			t.Errorf("%s: the terminal shows no progress %q:\n%q", c.name, c.want, term)
		}
		if out != plain {
			t.Errorf("%s: standard output differs with a terminal on standard error:\n%s\nwithout:\n%s", c.name, out, plain)
		}
		code, out, term = runOnTerminal(t, c.stdin, append(c.args, "--quiet")...)
		if code != 0 || out != plain {
			t.Fatalf("%s --quiet on a terminal: exit %d, standard output differs: %s", c.name, code, term)
		}
		if strings.Contains(term, c.want[:9]) {
			t.Errorf("%s --quiet: progress on the terminal: %q", c.name, term)
		}
	}
}

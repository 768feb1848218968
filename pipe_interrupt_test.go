//go:build unix

package main

import (
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// TestInterruptWaitingForPipe: a named pipe given as an input that never
// gets a writer holds the command in open(2), which blocks until a writer
// opens the pipe (fifo(7)); SIGINT or SIGTERM then ends the command as
// any interrupt does, with 128 + the signal's number (the shells'
// convention: 130, 143) and "interrupted", within a few seconds, and
// leaves no output, whole or partial, in the output's folder.
func TestInterruptWaitingForPipe(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and runs it in a child process; skipped with -short")
	}
	bin := buildBinary(t)
	for _, sig := range []syscall.Signal{syscall.SIGINT, syscall.SIGTERM} {
		dir := t.TempDir()
		data := filepath.Join(dir, "data.csv")
		if err := syscall.Mkfifo(data, 0o600); err != nil {
			t.Skipf("mkfifo: %v", err)
		}
		outDir := filepath.Join(dir, "out")
		if err := os.Mkdir(outDir, 0o755); err != nil {
			t.Fatal(err)
		}
		cmd, _, finish := startTrain(t, bin, nil, "--data", data, "--out", filepath.Join(outDir, "m.tt"), "--epochs", "1")
		time.Sleep(300 * time.Millisecond)
		if err := cmd.Process.Signal(sig); err != nil {
			t.Fatal(err)
		}
		ended := make(chan struct{})
		var code int
		var stderr string
		go func() {
			code, stderr = finish()
			close(ended)
		}()
		select {
		case <-ended:
		case <-time.After(10 * time.Second):
			cmd.Process.Kill()
			<-ended
			t.Fatalf("%v: train waiting for the named pipe %s still runs 10 s after the signal; stderr %q", sig, data, stderr)
		}
		if want := 128 + int(sig); code != want || !strings.Contains(stderr, "telltale train: interrupted") {
			t.Errorf("%v: exit %d, stderr %q; want exit %d and \"telltale train: interrupted\"", sig, code, stderr, want)
		}
		if left, _ := os.ReadDir(outDir); len(left) > 0 {
			t.Errorf("%v: the output folder holds %v after the interrupt", sig, left)
		}
	}
}

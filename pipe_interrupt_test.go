//go:build unix

package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"telltale/cnn"
	"telltale/explain"
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

// TestFiltersReadsAPipeOnce: filters profiles a named pipe, written once,
// of a model that records no splits, reading it a single time: filters
// whose negative n-grams would need a second reading have them marked
// inexact (as explain.ProfileStream without a Reopen does), the note says
// why, and the command does not wait for a second writer that never comes
// (fifo(7): a second open blocks until one does).
func TestFiltersReadsAPipeOnce(t *testing.T) {
	if testing.Short() {
		t.Skip("trains a model; skipped with -short")
	}
	dir := t.TempDir()
	model := filepath.Join(dir, "m.tt")
	if code, _, stderr := tt(t, "train", "--data", demoPart(t, dir, 1000), "--out", model, "--epochs", "1", "--dim", "16",
		"--maps", "60", "--threads", "1", "--baseline=false", "--quiet"); code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	m.Info.Splits = nil // as an imported model: filters then streams --data
	if err := m.Save(model); err != nil {
		t.Fatal(err)
	}
	text, err := os.ReadFile(filepath.Join("testdata", "demo", "train.csv"))
	if err != nil {
		t.Fatal(err)
	}
	fifo := filepath.Join(dir, "data.csv")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("mkfifo: %v", err)
	}
	go func() { // one writer, once
		if f, err := os.OpenFile(fifo, os.O_WRONLY, 0); err == nil {
			f.Write(text)
			f.Close()
		}
	}()
	type result struct {
		code           int
		stdout, stderr string
	}
	done := make(chan result, 1)
	go func() {
		code, stdout, stderr := tt(t, "filters", "--model", model, "--data", fifo, "--threads", "1", "--top", "3", "--json")
		done <- result{code, stdout, stderr}
	}()
	var r result
	select {
	case r = <-done:
	case <-time.After(2 * time.Minute):
		if f, err := os.OpenFile(fifo, os.O_WRONLY, 0); err == nil { // a second writer with nothing: ends the wait
			f.Close()
		}
		t.Fatalf("filters on a pipe still runs after 2 minutes: it waits for a second writer; stderr %q", (<-done).stderr)
	}
	if r.code != 0 {
		t.Fatalf("filters on a pipe: exit %d: %s", r.code, r.stderr)
	}
	var p explain.Profiles
	if err := json.Unmarshal([]byte(r.stdout), &p); err != nil {
		t.Fatal(err)
	}
	// On one thread the demo corpus leaves some filters' negative n-grams
	// to a second reading (TestFiltersTextAndReopen).
	if inexactNegatives(&p) == 0 {
		t.Errorf("read once from a pipe, every filter's negative n-grams are marked exact")
	}
	if !strings.Contains(r.stderr, "a pipe, read once") {
		t.Errorf("stderr does not say the pipe was read once: %q", r.stderr)
	}
}

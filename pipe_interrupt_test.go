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
	fifo := fifoOnce(t, filepath.Join(dir, "data.csv"), text)
	code, stdout, stderr := ttWithin(t, 2*time.Minute, []string{fifo}, "filters", "--model", model, "--data", fifo, "--threads", "1", "--top", "3", "--json")
	if code != 0 {
		t.Fatalf("filters on a pipe: exit %d: %s", code, stderr)
	}
	var p explain.Profiles
	if err := json.Unmarshal([]byte(stdout), &p); err != nil {
		t.Fatal(err)
	}
	// On one thread the demo corpus leaves some filters' negative n-grams
	// to a second reading (TestFiltersTextAndReopen).
	if inexactNegatives(&p) == 0 {
		t.Errorf("read once from a pipe, every filter's negative n-grams are marked exact")
	}
	if !strings.Contains(stderr, "a pipe, read once") {
		t.Errorf("stderr does not say the pipe was read once: %q", stderr)
	}
}

// fifoOnce makes a named pipe at path and, when content is not nil, writes
// content into it once from a goroutine (one writer, as `cat f > pipe &`).
// A pipe left without a writer is refused or never opened by the command
// under test. Cleanup opens each pipe's other end without blocking, so no
// goroutine or command stays waiting on it.
func fifoOnce(t *testing.T, path string, content []byte) string {
	t.Helper()
	if err := syscall.Mkfifo(path, 0o600); err != nil {
		t.Skipf("mkfifo: %v", err)
	}
	if content != nil {
		go func() {
			if f, err := os.OpenFile(path, os.O_WRONLY, 0); err == nil {
				f.Write(content)
				f.Close()
			}
		}()
	}
	t.Cleanup(func() {
		for _, flag := range []int{os.O_RDONLY, os.O_WRONLY} {
			if f, err := os.OpenFile(path, flag|syscall.O_NONBLOCK, 0); err == nil {
				f.Close()
			}
		}
	})
	return path
}

// ttWithin is tt that fails t when the command has not ended within
// limit (a wait for a pipe's second writer, say); pipes are then opened
// for writing without blocking, which ends such a wait.
func ttWithin(t *testing.T, limit time.Duration, pipes []string, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	type result struct {
		code           int
		stdout, stderr string
	}
	done := make(chan result, 1)
	go func() {
		c, o, e := tt(t, args...)
		done <- result{c, o, e}
	}()
	select {
	case r := <-done:
		return r.code, r.stdout, r.stderr
	case <-time.After(limit):
		for _, p := range pipes {
			if f, err := os.OpenFile(p, os.O_WRONLY|syscall.O_NONBLOCK, 0); err == nil {
				f.Close()
			}
		}
		r := <-done
		t.Fatalf("%v still ran after %v: it waits on a pipe; stderr %q", args, limit, r.stderr)
		return
	}
}

// TestPipedInputsReadOnceOrRefused: every input given as a pipe either
// works as the file does, read once, or is refused before any work with a
// message that names the option and asks for a regular file; none waits
// for a second writer (fifo(7)). Train records a test file that was a
// pipe as such, and eval then asks for the test file instead of opening
// the pipe again.
func TestPipedInputsReadOnceOrRefused(t *testing.T) {
	if testing.Short() {
		t.Skip("trains small models; skipped with -short")
	}
	dir := t.TempDir()
	data := smallDemo(t, 300)
	tiny := []string{"--epochs", "1", "--dim", "8", "--maps", "4", "--baseline=false", "--quiet"}
	tok, err := os.ReadFile(filepath.Join("testdata", "tokenizer-wordlevel.json"))
	if err != nil {
		t.Fatal(err)
	}
	limit := time.Minute

	// --tokenizer: read once, kept whole in the model.
	model := filepath.Join(dir, "tok.tt")
	p := fifoOnce(t, filepath.Join(dir, "tok.json"), tok)
	if code, _, stderr := ttWithin(t, limit, []string{p}, append([]string{"train", "--data", data, "--tokenizer", p, "--out", model}, tiny...)...); code != 0 {
		t.Fatalf("train --tokenizer PIPE: exit %d: %s", code, stderr)
	}
	if m, err := cnn.Load(model); err != nil {
		t.Fatal(err)
	} else if string(m.Tokenizer.FileJSON) != string(tok) {
		t.Errorf("train --tokenizer PIPE: the model holds %d bytes of tokenizer, want the file's %d", len(m.Tokenizer.FileJSON), len(tok))
	}

	// --dev and --test: read once, recorded as such; eval asks for the
	// test file and leaves the dev split out without a word; audit
	// --retrain, which needs the dev split, says why it cannot.
	lines, err := os.ReadFile(filepath.Join("testdata", "demo", "test.csv"))
	if err != nil {
		t.Fatal(err)
	}
	rows := strings.SplitAfter(string(lines), "\n")
	model = filepath.Join(dir, "m.tt")
	dev := fifoOnce(t, filepath.Join(dir, "dev.csv"), []byte(rows[0]+strings.Join(rows[61:121], "")))
	test := fifoOnce(t, filepath.Join(dir, "test.csv"), []byte(strings.Join(rows[:61], "")))
	code, _, stderr := ttWithin(t, limit, []string{dev, test}, "train", "--data", data, "--dev", dev, "--test", test, "--out", model,
		"--epochs", "1", "--dim", "8", "--maps", "4", "--baseline=false")
	for _, p := range []string{"--dev " + dev, "--test " + test} {
		if code != 0 || !strings.Contains(stderr, p+" can be read only once") {
			t.Fatalf("train --dev PIPE --test PIPE: exit %d, stderr %q; want exit 0 and a note on %s", code, stderr, p)
		}
	}
	if m, err := cnn.Load(model); err != nil || !m.Info.Splits.DevPipe || !m.Info.Splits.TestPipe {
		t.Fatalf("train --dev PIPE --test PIPE: the split record does not say both were read once (%v)", err)
	}
	code, _, stderr = ttWithin(t, limit, []string{dev, test}, "eval", "--model", model, "--data", data)
	if code != 2 || !strings.Contains(stderr, "test split was read once at training") || !strings.Contains(stderr, "give the test file with --test") || strings.Contains(stderr, "dev") {
		t.Errorf("eval of a model whose test file was a pipe: exit %d, stderr %q; want exit 2 asking for --test, and nothing of the dev split", code, stderr)
	}
	testFile := filepath.Join(dir, "test-file.csv")
	if err := os.WriteFile(testFile, []byte(strings.Join(rows[:61], "")), 0o600); err != nil {
		t.Fatal(err)
	}
	code, _, stderr = ttWithin(t, limit, []string{dev, test}, "audit", "--model", model, "--data", data, "--test", testFile, "--retrain")
	if code == 0 || !strings.Contains(stderr, "dev split was read once at training") || !strings.Contains(stderr, "train --dev FILE") {
		t.Errorf("audit --retrain of a model whose dev file was a pipe: exit %d, stderr %q; want a refusal naming train --dev FILE", code, stderr)
	}

	refusedPipes(t, data, model)
}

// refusedPipes checks the inputs that are refused as pipes before any work
// (TestPipedInputsReadOnceOrRefused): each pipe is left without a writer,
// so a command that opened it would wait. Model is a trained model of
// data.
func refusedPipes(t *testing.T, data, model string) {
	t.Helper()
	dir := t.TempDir()
	for _, c := range []struct {
		name string
		args func(p string) []string
		want string
	}{
		{"train --vectors without --dim", func(p string) []string {
			return []string{"train", "--data", data, "--vectors", p, "--out", filepath.Join(dir, "v.tt"), "--epochs", "1"}
		}, "give --dim"},
		{"audit --vectors with --seeds 2", func(p string) []string {
			return []string{"audit", "--model", model, "--data", data, "--seeds", "2", "--vectors", p}
		}, "every model the audit trains reads it"},
		{"audit --marks written", func(p string) []string {
			return []string{"audit", "--model", model, "--marks", p, "--mark-task", "hello"}
		}, "the marks are written back to that file"},
		{"import --state-dict", func(p string) []string {
			return []string{"import", "--state-dict", p, "--vocab", data, "--labels", "a,b", "--out", filepath.Join(dir, "i.tt")}
		}, "reads the archive by position"},
	} {
		p := fifoOnce(t, filepath.Join(dir, strings.ReplaceAll(c.name, " ", "_")), nil)
		code, _, stderr := ttWithin(t, time.Minute, []string{p}, c.args(p)...)
		if code != 2 || !strings.Contains(stderr, p+" is a pipe") || !strings.Contains(stderr, c.want) {
			t.Errorf("%s: exit %d, stderr %q; want exit 2, %q and %q", c.name, code, stderr, p+" is a pipe", c.want)
		}
	}
}

// TestImportCheckLogitsFromAPipe: --check-logits given as a pipe is read
// whole once (a NumPy file's reader needs its size, which a pipe does not
// have), and the check passes as with the file (TestImportCommandCheck).
func TestImportCheckLogitsFromAPipe(t *testing.T) {
	dir := t.TempDir()
	o, _, _ := checkedImport(t, dir)
	b, err := os.ReadFile(o.CheckLogits)
	if err != nil {
		t.Fatal(err)
	}
	o.CheckLogits = fifoOnce(t, filepath.Join(dir, "logits.npy"), b)
	code, _, stderr := ttWithin(t, time.Minute, []string{o.CheckLogits}, importArgs(o)...)
	if code != 0 {
		t.Fatalf("import --check-logits PIPE: exit %d: %s", code, stderr)
	}
	m, err := cnn.Load(o.Out)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(m.Info.Notes["origin_check"], "logits of 3 texts") {
		t.Errorf("import --check-logits PIPE: notes %v; want the check recorded", m.Info.Notes)
	}
}

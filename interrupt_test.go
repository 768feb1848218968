package main

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"telltale/cnn"
)

// built is the binary buildBinary makes once for the package's tests, in a
// folder of its own that TestMain removes at the end.
var built struct {
	once sync.Once
	dir  string
	bin  string
	err  error
}

// buildBinary builds the command with the ci tag into a temporary folder,
// once for all the tests of the package (each go build links the whole
// program again), and returns its path. Callers only run the binary; the
// folder holds nothing else.
func buildBinary(t *testing.T) string {
	t.Helper()
	built.once.Do(func() {
		if built.dir, built.err = os.MkdirTemp("", "telltale-test-bin-"); built.err != nil {
			return
		}
		bin := filepath.Join(built.dir, "telltale")
		cmd := exec.Command("go", "build", "-tags", "ci", "-o", bin, ".")
		if out, err := cmd.CombinedOutput(); err != nil {
			built.err = fmt.Errorf("go build: %v\n%s", err, out)
			return
		}
		built.bin = bin
	})
	if built.err != nil {
		t.Fatal(built.err)
	}
	return built.bin
}

// TestMain runs the tests, then removes the binary buildBinary made.
func TestMain(m *testing.M) {
	code := m.Run()
	if built.dir != "" {
		os.RemoveAll(built.dir)
	}
	os.Exit(code)
}

// startTrain starts `telltale train` with args (see startCommand).
func startTrain(t *testing.T, bin string, stdout io.Writer, args ...string) (cmd *exec.Cmd, waitLine func(want string) bool, finish func() (int, string)) {
	t.Helper()
	return startCommand(t, bin, stdout, append([]string{"train"}, args...)...)
}

// startCommand starts the binary with args and returns the process, a
// function that waits for a line of stderr containing want (or the end of
// stderr), and one that waits for the process and returns its exit code and
// all of stderr. Standard output goes to stdout.
func startCommand(t *testing.T, bin string, stdout io.Writer, args ...string) (cmd *exec.Cmd, waitLine func(want string) bool, finish func() (int, string)) {
	t.Helper()
	cmd = exec.Command(bin, args...)
	cmd.Stdout = stdout
	pipe, err := cmd.StderrPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	var mu sync.Mutex
	var all bytes.Buffer
	lines := make(chan string, 100)
	done := make(chan struct{})
	go func() {
		defer close(done)
		sc := bufio.NewScanner(pipe)
		for sc.Scan() {
			mu.Lock()
			all.WriteString(sc.Text() + "\n")
			mu.Unlock()
			select {
			case lines <- sc.Text():
			default:
			}
		}
		close(lines)
	}()
	t.Cleanup(func() { cmd.Process.Kill() })
	waitLine = func(want string) bool {
		for l := range lines {
			if strings.Contains(l, want) {
				return true
			}
		}
		return false
	}
	finish = func() (int, string) {
		go func() {
			for range lines {
			}
		}()
		<-done
		err := cmd.Wait()
		code := 0
		var ee *exec.ExitError
		if errors.As(err, &ee) {
			code = ee.ExitCode() // -1 when killed by a signal
		} else if err != nil {
			t.Fatal(err)
		}
		mu.Lock()
		defer mu.Unlock()
		return code, all.String()
	}
	return cmd, waitLine, finish
}

// TestInterruptKeepsBestModel: SIGINT during `telltale train` stops it
// with exit 130 (128 + SIGINT, the shells' convention) and "interrupted",
// not a crash; the best model of the finished epochs is saved where the
// message says, it loads and evaluates, and no temporary file is left;
// before the first epoch ends, nothing is saved and the message says so.
func TestInterruptKeepsBestModel(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and trains in a child process; skipped with -short")
	}
	bin := buildBinary(t)

	t.Run("after an epoch", func(t *testing.T) {
		out := t.TempDir()
		model := filepath.Join(out, "model.tt")
		var stdout bytes.Buffer
		cmd, waitLine, finish := startTrain(t, bin, &stdout, "--data", "testdata/demo/train.csv", "--out", model,
			"--epochs", "1000", "--patience", "0", "--dim", "16", "--maps", "8", "--threads", "1", "--json")
		if !waitLine("epoch 1/1000") {
			_, stderr := finish()
			t.Fatalf("no end of the first epoch on stderr:\n%s", stderr)
		}
		if err := cmd.Process.Signal(syscall.SIGINT); err != nil {
			t.Fatal(err)
		}
		code, stderr := finish()
		noCrash(t, "interrupted train", stderr)
		if code != 130 || !strings.Contains(stderr, "telltale train: interrupted: ") {
			t.Errorf("exit %d after SIGINT, want 130 and \"interrupted\"; stderr:\n%s", code, stderr)
		}
		abs, _ := filepath.Abs(model)
		if !strings.Contains(stderr, "the best model so far (epoch ") || !strings.Contains(stderr, "is saved in "+abs) {
			t.Errorf("stderr does not say that and where the best model was saved:\n%s", stderr)
		}
		var summary trainSummary
		if err := json.Unmarshal(stdout.Bytes(), &summary); err != nil {
			t.Errorf("--json output: %v\n%s", err, stdout.String())
		}
		if !summary.Cancelled || summary.Model != abs || summary.BestEpoch < 1 {
			t.Errorf("--json output after SIGINT: %+v", summary)
		}
		m, err := cnn.Load(model)
		if err != nil {
			t.Fatalf("saved model does not load: %v", err)
		}
		if m.Info.BestEpoch < 1 {
			t.Errorf("saved model records best epoch %d", m.Info.BestEpoch)
		}
		// Stopped before its baseline was fitted: the model records it, and
		// eval and compare say so where the baseline's figures would be.
		if m.Baseline != nil || !m.Info.BaselineStopped {
			t.Errorf("saved model: baseline %v, baseline_stopped %v; want none, and it recorded", m.Baseline != nil, m.Info.BaselineStopped)
		}
		const none = "linear baseline  none: " + baselineStopped
		if code, outp, errs := tt(t, "eval", "--model", model, "--data", "testdata/demo/test.csv"); code != 0 || !strings.Contains(outp, "accuracy") || !strings.Contains(outp, none) {
			t.Errorf("eval of the saved model: exit %d, want %q\n%s%s", code, none, outp, errs)
		}
		var ev evalOutput
		jsonOf(t, &ev, "eval", "--model", model, "--data", "testdata/demo/test.csv", "--json")
		var rows []compareRow
		jsonOf(t, &rows, "compare", "--models", model+","+model, "--data", "testdata/demo/test.csv", "--json")
		if ev.BaselineNote != baselineStopped || len(rows) != 2 || rows[1].BaselineNote != baselineStopped {
			t.Errorf("eval --json baseline_note %q, compare --json rows %+v; want %q", ev.BaselineNote, rows, baselineStopped)
		}
		if _, outp, _ := tt(t, "compare", "--models", model+","+model, "--data", "testdata/demo/test.csv"); !strings.Contains(outp, "model 2 has no linear baseline: "+baselineStopped) {
			t.Errorf("compare of the saved model does not say why it has no baseline:\n%s", outp)
		}
		if got := listTree(t, out); fmt.Sprint(got) != "[model.tt]" {
			t.Errorf("output folder holds %q, want only model.tt", got)
		}
	})

	t.Run("before the first epoch ends", func(t *testing.T) {
		// Ten copies of the demo corpus and the default model size make the
		// first epoch long enough to interrupt it.
		src, err := os.ReadFile("testdata/demo/train.csv")
		if err != nil {
			t.Fatal(err)
		}
		header, body, _ := bytes.Cut(src, []byte("\n"))
		big := append(append([]byte(nil), header...), '\n')
		for i := 0; i < 10; i++ {
			big = append(big, body...)
		}
		data := filepath.Join(t.TempDir(), "big.csv")
		if err := os.WriteFile(data, big, 0o644); err != nil {
			t.Fatal(err)
		}
		out := t.TempDir()
		model := filepath.Join(out, "model.tt")
		cmd, waitLine, finish := startTrain(t, bin, io.Discard, "--data", data, "--out", model, "--epochs", "5", "--threads", "1")
		if !waitLine("training on") {
			_, stderr := finish()
			t.Fatalf("training did not start:\n%s", stderr)
		}
		time.Sleep(100 * time.Millisecond) // into the first batches; not a timing assertion
		if err := cmd.Process.Signal(syscall.SIGINT); err != nil {
			t.Fatal(err)
		}
		code, stderr := finish()
		noCrash(t, "interrupted train", stderr)
		if strings.Contains(stderr, "epoch 1/5") {
			t.Skipf("the first epoch ended before the interrupt arrived; nothing to check:\n%s", stderr)
		}
		if code != 130 || !strings.Contains(stderr, "telltale train: interrupted: ") {
			t.Errorf("exit %d after SIGINT, want 130 and \"interrupted\"; stderr:\n%s", code, stderr)
		}
		if !strings.Contains(stderr, "nothing saved to "+model) {
			t.Errorf("stderr does not say that nothing was saved:\n%s", stderr)
		}
		if got := listTree(t, out); len(got) != 0 {
			t.Errorf("output folder holds %q, want nothing", got)
		}
	})
}

// TestInterruptAudit: SIGINT while the audit runs ends it with exit 130
// and "interrupted", not "context canceled" and exit 1.
func TestInterruptAudit(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and audits in a child process; skipped with -short")
	}
	bin := buildBinary(t)
	model := tinyModel(t)
	cmd, waitLine, finish := startCommand(t, bin, io.Discard, "audit", "--model", model, "--data", "testdata/demo/train.csv", "--threads", "1")
	if !waitLine("note: ") {
		_, stderr := finish()
		t.Fatalf("the audit did not start:\n%s", stderr)
	}
	if err := cmd.Process.Signal(syscall.SIGINT); err != nil {
		t.Fatal(err)
	}
	code, stderr := finish()
	noCrash(t, "interrupted audit", stderr)
	if code == 0 {
		t.Skipf("the audit ended before the interrupt arrived; nothing to check:\n%s", stderr)
	}
	if code != 130 || !strings.Contains(stderr, "telltale audit: interrupted") || strings.Contains(stderr, "context canceled") {
		t.Errorf("exit %d, stderr:\n%s\nwant exit 130 and \"telltale audit: interrupted\"", code, stderr)
	}
	if !strings.Contains(stderr, "the audit was stopped before it ended: nothing was printed and nothing was written") {
		t.Errorf("stderr does not say what was kept:\n%s", stderr)
	}
}

// TestInterruptAuditRetrain: SIGINT while --retrain trains, after the
// audit itself finished, still prints the audit, says the retraining was
// stopped, and writes no file (not the marks the command line changed).
func TestInterruptAuditRetrain(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary, trains and audits in a child process; skipped with -short")
	}
	bin := buildBinary(t)
	dir := t.TempDir()
	m, err := cnn.Load(smallTestFileModel(t, dir, "m.tt"))
	if err != nil {
		t.Fatal(err)
	}
	// A recipe of many epochs without early stopping, so that the
	// retraining is still running when the signal comes.
	m.Info.Recipe.Epochs, m.Info.Recipe.Patience = 1000, -1
	model := filepath.Join(dir, "long.tt")
	if err := m.Save(model); err != nil {
		t.Fatal(err)
	}
	marks, out := filepath.Join(dir, "long.marks"), filepath.Join(dir, "without.tt")
	var stdout bytes.Buffer
	cmd, waitLine, finish := startCommand(t, bin, &stdout, "audit", "--model", model, "--data", "testdata/demo/train.csv",
		"--marks", marks, "--mark-artifact", "tkref - <number>", "--retrain", "--retrain-out", out, "--threads", "1")
	if !waitLine("retraining without the cues") {
		_, stderr := finish()
		t.Fatalf("the retraining did not start:\n%s", stderr)
	}
	if err := cmd.Process.Signal(syscall.SIGINT); err != nil {
		t.Fatal(err)
	}
	code, stderr := finish()
	noCrash(t, "interrupted audit", stderr)
	want := "telltale audit: interrupted: the audit of " + model + " is complete and printed above, but the retraining without the cues " +
		"(--retrain) was stopped; nothing was written (not " + out + ", " + marks + ")"
	if code != 130 || !strings.Contains(stderr, want) {
		t.Errorf("exit %d, stderr:\n%s\nwant exit 130 and %q", code, stderr, want)
	}
	if !strings.HasPrefix(stdout.String(), "Cue audit of "+model) || !strings.Contains(stdout.String(), "How the numbers are made.") {
		t.Errorf("the finished audit is not printed:\n%s", stdout.String())
	}
	for _, p := range []string{marks, out} {
		if _, err := os.Stat(p); !os.IsNotExist(err) {
			t.Errorf("%s was written (%v)", p, err)
		}
	}
}

// TestInterruptFiltersAndReport: SIGINT while filters or report works says
// what was kept: nothing printed, nothing written.
func TestInterruptFiltersAndReport(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and runs commands in child processes; skipped with -short")
	}
	bin := buildBinary(t)
	model := tinyModel(t)
	dir := t.TempDir()
	src, err := os.ReadFile("testdata/demo/train.csv")
	if err != nil {
		t.Fatal(err)
	}
	// Ten copies of the demo corpus keep the filters' profiles busy.
	header, body, _ := bytes.Cut(src, []byte("\n"))
	big := append(append([]byte(nil), header...), '\n')
	for range 10 {
		big = append(big, body...)
	}
	data := filepath.Join(dir, "big.csv")
	if err := os.WriteFile(data, big, 0o644); err != nil {
		t.Fatal(err)
	}
	html, export := filepath.Join(dir, "r.html"), filepath.Join(dir, "f.csv")
	for _, c := range []struct {
		args []string
		want string
		file string
	}{
		{[]string{"filters", "--model", model, "--data", data, "--export", export, "--threads", "1"},
			"telltale filters: interrupted: the filters' profiles were stopped before the texts were all read: nothing was printed and nothing written to " + export, export},
		{[]string{"report", "--model", model, "--data", data, "--out", html, "--threads", "1"},
			"telltale report: interrupted: the report was stopped before its figures were all measured: nothing was written to " + html, html},
	} {
		var stdout bytes.Buffer
		cmd, waitLine, finish := startCommand(t, bin, &stdout, c.args...)
		if !waitLine("note: ") {
			_, stderr := finish()
			t.Fatalf("%s did not start:\n%s", c.args[0], stderr)
		}
		if err := cmd.Process.Signal(syscall.SIGINT); err != nil {
			t.Fatal(err)
		}
		code, stderr := finish()
		noCrash(t, c.args[0], stderr)
		if code == 0 {
			t.Logf("%s ended before the interrupt arrived; nothing to check:\n%s", c.args[0], stderr)
			continue
		}
		if code != 130 || !strings.Contains(stderr, c.want) || stdout.Len() > 0 {
			t.Errorf("%s: exit %d, stdout %q, stderr:\n%s\nwant exit 130 and %q", c.args[0], code, stdout.String(), stderr, c.want)
		}
		if _, err := os.Stat(c.file); !os.IsNotExist(err) {
			t.Errorf("%s: %s was written (%v)", c.args[0], c.file, err)
		}
	}
}

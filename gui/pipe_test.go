//go:build unix

package gui

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"syscall"
	"testing"
	"time"

	"fyne.io/fyne/v2/storage"

	"telltale/cnn"
	"telltale/corpus"
)

// A named pipe given as the data file (mkfifo) is read once: its columns and examples are those of the same file read
// from disk, and reading it again with other columns takes them from memory,
// with no writer. Reading it twice from the pipe, as before, gave the data
// from where the column list had stopped, or waited for a second writer
// (common practice, no source: a pipe's content can be read only once).
func TestLoadCorpusFromNamedPipe(t *testing.T) {
	train, _ := demoBytes(t)
	fifo := filepath.Join(t.TempDir(), "data.csv")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("no named pipe here: %v", err)
	}
	// Should the load never open the pipe, a reader that does not wait
	// releases the writer below before the folder goes.
	t.Cleanup(func() {
		if f, err := os.OpenFile(fifo, os.O_RDONLY|syscall.O_NONBLOCK, 0); err == nil {
			f.Close()
		}
	})
	go func() {
		f, err := os.OpenFile(fifo, os.O_WRONLY, 0)
		if err != nil {
			return
		}
		defer f.Close()
		f.Write(train)
	}()
	plan := splitPlan{DevFrac: cnn.DefaultDevFrac, TestFrac: cnn.DefaultTestFrac, Seed: 1}
	load := func(src dataSource) *corpusState {
		t.Helper()
		type result struct {
			cs  *corpusState
			err error
		}
		done := make(chan result, 1)
		go func() {
			cs, err := loadCorpus(context.Background(), src, plan)
			done <- result{cs, err}
		}()
		select {
		case r := <-done:
			if r.err != nil {
				t.Fatal(r.err)
			}
			return r.cs
		case <-time.After(60 * time.Second):
			t.Fatal("the window still reads the pipe after 60 s: it waits for a second writer")
		}
		return nil
	}
	cs := load(dataSource{path: fifo})

	onDisk := filepath.Join(t.TempDir(), "data.csv")
	if err := os.WriteFile(onDisk, train, 0o644); err != nil {
		t.Fatal(err)
	}
	want, _, err := corpus.Load(onDisk, corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	wantColumns, err := corpus.Columns(onDisk, corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	check := func(what string, cs *corpusState) {
		t.Helper()
		if !reflect.DeepEqual(cs.Columns, wantColumns) {
			t.Errorf("%s: columns %v, want %v", what, cs.Columns, wantColumns)
		}
		if len(cs.All.Examples) != len(want.Examples) || !reflect.DeepEqual(cs.All.Labels, want.Labels) {
			t.Fatalf("%s: %d examples, labels %v; want %d, %v", what, len(cs.All.Examples), cs.All.Labels, len(want.Examples), want.Labels)
		}
		for i, e := range cs.All.Examples {
			if e.Text != want.Examples[i].Text || e.Label != want.Examples[i].Label {
				t.Fatalf("%s: example %d is %q (%s), want %q (%s)", what, i, e.Text, e.Label, want.Examples[i].Text, want.Examples[i].Label)
			}
		}
	}
	check("read from the pipe", cs)

	// Again, as "Read again with these columns" does: the pipe has no
	// writer now.
	again := load(dataSource{path: cs.Path, pipeData: cs.pipeData, opts: corpus.Options{TextCol: wantColumns[0], LabelCol: wantColumns[1]}})
	check("read again", again)
}

// The status bar's Stop (the task's context) ends the wait for a named
// pipe's writer; the load ends as cancelled.
func TestLoadCorpusFromNamedPipeStops(t *testing.T) {
	fifo := filepath.Join(t.TempDir(), "data.csv")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("no named pipe here: %v", err)
	}
	t.Cleanup(func() { // releases an open still waiting for a writer
		if w, err := os.OpenFile(fifo, os.O_WRONLY|syscall.O_NONBLOCK, 0); err == nil {
			w.Close()
		}
	})
	ctx, cancel := context.WithCancel(context.Background())
	time.AfterFunc(200*time.Millisecond, cancel)
	done := make(chan error, 1)
	go func() {
		_, err := loadCorpus(ctx, dataSource{path: fifo}, splitPlan{DevFrac: cnn.DefaultDevFrac, TestFrac: cnn.DefaultTestFrac, Seed: 1})
		done <- err
	}()
	select {
	case err := <-done:
		if !errors.Is(err, context.Canceled) {
			t.Fatalf("load of a pipe with no writer, stopped: %v; want a cancellation", err)
		}
	case <-time.After(10 * time.Second):
		t.Fatal("the load still waits for the pipe's writer 10 s after Stop")
	}
}

// A named pipe whose line grows beyond the readers' record limit (8 ×
// MaxTextBytes) is refused at that line with the readers' error, while its
// writer still writes: the window does not hold it in memory whole first.
func TestLoadCorpusFromNamedPipeBoundsALine(t *testing.T) {
	fifo := filepath.Join(t.TempDir(), "data.csv")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("no named pipe here: %v", err)
	}
	release := make(chan struct{})
	defer close(release)
	go func() {
		f, err := os.OpenFile(fifo, os.O_WRONLY, 0)
		if err != nil {
			return
		}
		defer f.Close()
		f.Write([]byte("text,label\nlost bag,lost-property\n"))
		for range 64 { // 4 MiB with no line break, then the pipe held open
			if _, err := f.Write(make([]byte, 64<<10)); err != nil {
				return
			}
		}
		<-release
	}()
	done := make(chan error, 1)
	go func() {
		src := dataSource{path: fifo, opts: corpus.Options{MaxTextBytes: 64 << 10}}
		_, err := loadCorpus(context.Background(), src, splitPlan{DevFrac: cnn.DefaultDevFrac, TestFrac: cnn.DefaultTestFrac, Seed: 1})
		done <- err
	}()
	select {
	case err := <-done:
		if !errors.Is(err, corpus.ErrTooLong) || !strings.Contains(err.Error(), fifo+" line 3:") {
			t.Fatalf("load of a pipe with a 4 MiB line: %v; want ErrTooLong at line 3", err)
		}
	case <-time.After(10 * time.Second):
		t.Fatal("the load waited for the writer to finish")
	}
}

// The file dialogs list no named pipe: the toolkit's dialog would open one
// on the UI goroutine, waiting for a writer, and the window would then
// need a second writer. Regular files pass as the inner filter says.
func TestFileDialogsListNoPipes(t *testing.T) {
	dir := t.TempDir()
	fifo, file, other := filepath.Join(dir, "p.csv"), filepath.Join(dir, "d.csv"), filepath.Join(dir, "m.tt")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("mkfifo: %v", err)
	}
	for _, p := range []string{file, other} {
		if err := os.WriteFile(p, []byte("text,label\n"), 0o600); err != nil {
			t.Fatal(err)
		}
	}
	data := notPipes{storage.NewExtensionFileFilter([]string{".csv"})}
	for _, c := range []struct {
		f    storage.FileFilter
		path string
		want bool
	}{
		{data, fifo, false}, {data, file, true}, {data, other, false},
		{notPipes{}, fifo, false}, {notPipes{}, file, true}, {notPipes{}, other, true},
	} {
		if got := c.f.Matches(storage.NewFileURI(c.path)); got != c.want {
			t.Errorf("%#v matches %s: %v, want %v", c.f, filepath.Base(c.path), got, c.want)
		}
	}
}

// The split record of a test file read from a pipe says so
// (cnn.SplitRecord.TestPipe), so that no later command opens the pipe
// again; a test file on disk is recorded as a file.
func TestSplitRecordOfAPipedTestFile(t *testing.T) {
	d := &corpus.Dataset{Path: "/data/d.csv", Examples: []corpus.Example{{Text: "a", Label: "x"}}}
	for _, piped := range []bool{false, true} {
		cs := &corpusState{Path: d.Path, TestPath: "/data/test.csv", All: d, TestFile: d, Train: d, Dev: d, Test: d}
		if piped {
			cs.pipeTest = []byte("text,label\na,x\n")
		}
		if r := cs.record(0.1, 0, 1, cs); r.TestPipe != piped || r.TestFile != "/data/test.csv" {
			t.Errorf("test file piped %v: record says pipe %v, file %q", piped, r.TestPipe, r.TestFile)
		}
	}
}

// A save onto a named pipe, or onto a link to a process's descriptor, is
// refused before "Replace it?" is asked, in the words the writer
// (atomicfile.Write) refuses it in; nothing is written.
func TestSaveRefusesAPipeBeforeAsking(t *testing.T) {
	dir := t.TempDir()
	fifo, link := filepath.Join(dir, "p.csv"), filepath.Join(dir, "out.csv")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("no named pipe here: %v", err)
	}
	if err := os.Symlink("/dev/stdout", link); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct{ name, says string }{
		{"p.csv", "is a named pipe, not a file"},
		{"out.csv", "a process's descriptor, not a file"},
	} {
		st, _ := saveState(t, dir)
		if asked, written := saveCSVAs(t, st, c.name); asked || written != 0 {
			t.Errorf("saving as %s asked to replace it (%v) or wrote it (%d writes)", c.name, asked, written)
		}
		path := filepath.Join(dir, c.name)
		if s := st.statusText(); !strings.Contains(s, "could not write "+path) || !strings.Contains(s, c.says) {
			t.Errorf("saving as %s: status %q, want it refused as %q", c.name, s, c.says)
		}
	}
}

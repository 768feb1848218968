//go:build unix

package inputfile

import (
	"context"
	"errors"
	"io"
	"os"
	"path/filepath"
	"syscall"
	"testing"
	"time"
)

// fifo makes a named pipe in a temporary folder, or skips the test where
// the system cannot.
func fifo(t *testing.T) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "in.csv")
	if err := syscall.Mkfifo(p, 0o600); err != nil {
		t.Skipf("mkfifo: %v", err)
	}
	// A writer that does not wait releases an open left waiting for one.
	t.Cleanup(func() {
		if w, err := os.OpenFile(p, os.O_WRONLY|syscall.O_NONBLOCK, 0); err == nil {
			w.Close()
		}
	})
	return p
}

// within runs f and fails the test when it has not returned within 5 s;
// what names the wait in the message.
func within[T any](t *testing.T, what string, f func() (T, error)) (T, error) {
	t.Helper()
	type result struct {
		v   T
		err error
	}
	done := make(chan result, 1)
	go func() {
		v, err := f()
		done <- result{v, err}
	}()
	select {
	case r := <-done:
		return r.v, r.err
	case <-time.After(5 * time.Second):
		t.Fatalf("%s still waits after 5 s", what)
		var zero T
		return zero, nil
	}
}

// openWithin runs o.open(p) within 5 s.
func openWithin(t *testing.T, o *opener, p string) (*os.File, error) {
	t.Helper()
	return within(t, "open of "+p, func() (*os.File, error) { return o.open(p) })
}

// TestOpenPipeInterrupted: opening a named pipe for reading blocks until a
// writer opens it (fifo(7)); with no writer, an interrupt ends the wait
// with ErrInterrupted, which matches context.Canceled, and so does every
// later open of a pipe. A regular file still opens after it.
func TestOpenPipeInterrupted(t *testing.T) {
	o := newOpener()
	p := fifo(t)
	go func() {
		time.Sleep(200 * time.Millisecond)
		o.interrupt()
	}()
	start := time.Now()
	f, err := openWithin(t, o, p)
	if f != nil || !errors.Is(err, ErrInterrupted) || !errors.Is(err, context.Canceled) {
		t.Fatalf("open of a pipe with no writer, interrupted: %v, %v; want ErrInterrupted", f, err)
	}
	if waited := time.Since(start); waited < 150*time.Millisecond {
		t.Errorf("open returned after %v, before the interrupt", waited)
	}
	if _, err := openWithin(t, o, p); !errors.Is(err, ErrInterrupted) {
		t.Errorf("open of a pipe after the interrupt: %v; want ErrInterrupted", err)
	}
	o.interrupt() // a second signal
	reg := filepath.Join(t.TempDir(), "plain.csv")
	if err := os.WriteFile(reg, []byte("text,label\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	if f, err := openWithin(t, o, reg); err != nil {
		t.Errorf("open of a regular file after the interrupt: %v", err)
	} else {
		f.Close()
	}
}

// TestOpenPipeLateWriter: a writer that opens the pipe after the reader
// started waiting (as a shell's process substitution may) reaches it
// whole, as pipe(7) delivers a stream to its one reader.
func TestOpenPipeLateWriter(t *testing.T) {
	o := newOpener()
	p := fifo(t)
	want := "text,label\nlost bag,lost-property\nlate ferry,complaints\n"
	wrote := make(chan error, 1)
	go func() {
		time.Sleep(200 * time.Millisecond)
		w, err := os.OpenFile(p, os.O_WRONLY, 0)
		if err == nil {
			_, err = io.WriteString(w, want)
			w.Close()
		}
		wrote <- err
	}()
	f, err := openWithin(t, o, p)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	got, err := io.ReadAll(f)
	if err != nil || string(got) != want {
		t.Errorf("read %q, %v; want %q", got, err, want)
	}
	if err := <-wrote; err != nil {
		t.Errorf("writer: %v", err)
	}
}

// TestReadFile: ReadFile reads a regular file as os.ReadFile does, and
// says a missing one is missing (fs.ErrNotExist).
func TestReadFile(t *testing.T) {
	p := filepath.Join(t.TempDir(), "words.txt")
	if err := os.WriteFile(p, []byte("refund\nferry\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	want, _ := os.ReadFile(p)
	if got, err := ReadFile(p); err != nil || string(got) != string(want) {
		t.Errorf("ReadFile: %q, %v; want %q", got, err, want)
	}
	if _, err := ReadFile(p + ".missing"); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("ReadFile of a missing file: %v; want ErrNotExist", err)
	}
}

// readWithin runs ReadFileContext(ctx, p) within 5 s.
func readWithin(t *testing.T, ctx context.Context, p string) ([]byte, error) {
	t.Helper()
	return within(t, "read of "+p, func() ([]byte, error) { return ReadFileContext(ctx, p) })
}

// TestReadFileContext: a cancelled context ends the wait for a pipe's
// writer, and the wait for more from a writer that keeps the pipe open,
// with ErrInterrupted (matching context.Canceled); it stops nothing else,
// so a later read of a pipe whose writer comes gets it whole.
func TestReadFileContext(t *testing.T) {
	t.Run("no writer", func(t *testing.T) {
		p := fifo(t)
		ctx, cancel := context.WithCancel(context.Background())
		time.AfterFunc(200*time.Millisecond, cancel)
		if data, err := readWithin(t, ctx, p); data != nil || !errors.Is(err, ErrInterrupted) || !errors.Is(err, context.Canceled) {
			t.Fatalf("read of a pipe with no writer, cancelled: %q, %v; want ErrInterrupted", data, err)
		}
	})
	t.Run("writer that stalls", func(t *testing.T) {
		p := fifo(t)
		release := make(chan struct{})
		defer close(release)
		go func() {
			w, err := os.OpenFile(p, os.O_WRONLY, 0)
			if err != nil {
				return
			}
			defer w.Close()
			io.WriteString(w, "text,label\n")
			<-release // holds the pipe open, writing nothing more
		}()
		ctx, cancel := context.WithCancel(context.Background())
		time.AfterFunc(300*time.Millisecond, cancel)
		if data, err := readWithin(t, ctx, p); data != nil || !errors.Is(err, ErrInterrupted) {
			t.Fatalf("read of a stalled pipe, cancelled: %q, %v; want ErrInterrupted", data, err)
		}
	})
	t.Run("writer that comes", func(t *testing.T) {
		p := fifo(t)
		want := "text,label\nlost bag,lost-property\n"
		go func() {
			w, err := os.OpenFile(p, os.O_WRONLY, 0)
			if err == nil {
				io.WriteString(w, want)
				w.Close()
			}
		}()
		if data, err := readWithin(t, context.Background(), p); err != nil || string(data) != want {
			t.Fatalf("read %q, %v; want %q", data, err, want)
		}
	})
}

// ReadOnce: a named pipe and the per-process names of a shell's <(…) and
// of standard input can be read only once, or name another file in the
// next process; a regular file, a missing one and a folder can be read
// again.
func TestReadOnce(t *testing.T) {
	dir := t.TempDir()
	fifo, file := filepath.Join(dir, "p.csv"), filepath.Join(dir, "d.csv")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("mkfifo: %v", err)
	}
	if err := os.WriteFile(file, []byte("text,label\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		path string
		want bool
	}{
		{fifo, true}, {"/dev/stdin", true}, {"/dev/fd/63", true}, {"/proc/self/fd/0", true}, {"/dev/fd/../fd/5", true},
		{file, false}, {filepath.Join(dir, "none.csv"), false}, {dir, false},
	} {
		if got := ReadOnce(c.path); got != c.want {
			t.Errorf("ReadOnce(%s) = %v, want %v", c.path, got, c.want)
		}
	}
}

// ReadFileBounded stops at the first line beyond its bound, naming that
// line, without waiting for the writer to finish; within the bound it reads
// what ReadFileContext reads.
func TestReadFileBounded(t *testing.T) {
	t.Run("within", func(t *testing.T) {
		p := fifo(t)
		want := "text,label\nlost bag,lost-property\n"
		go func() {
			if w, err := os.OpenFile(p, os.O_WRONLY, 0); err == nil {
				io.WriteString(w, want)
				w.Close()
			}
		}()
		data, err := ReadFileBounded(context.Background(), p, len("lost bag,lost-property"))
		if err != nil || string(data) != want {
			t.Fatalf("read %q, %v; want %q", data, err, want)
		}
	})
	t.Run("a line beyond", func(t *testing.T) {
		p := fifo(t)
		release := make(chan struct{})
		defer close(release)
		go func() {
			w, err := os.OpenFile(p, os.O_WRONLY, 0)
			if err != nil {
				return
			}
			defer w.Close()
			io.WriteString(w, "text,label\n")
			for range 64 { // 4 MiB with no line break, then the pipe held open
				if _, err := w.Write(make([]byte, 64<<10)); err != nil {
					return
				}
			}
			<-release
		}()
		done := make(chan error, 1)
		go func() { _, err := ReadFileBounded(context.Background(), p, 1<<20); done <- err }()
		select {
		case err := <-done:
			long, ok := errors.AsType[*LineTooLongError](err)
			if !ok || long.Line != 2 || long.Limit != 1<<20 || long.Path != p {
				t.Fatalf("error %v; want line 2 beyond 1 MiB of %s", err, p)
			}
		case <-time.After(10 * time.Second):
			t.Fatal("the read waited for the writer to finish")
		}
	})
}

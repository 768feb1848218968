package inputfile

import (
	"context"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"sync"
)

// ErrInterrupted is the error (inside an *fs.PathError) of an open that
// was waiting for a named pipe's writer when Interrupt was called. It
// matches context.Canceled under errors.Is, as the command's other work
// stopped by the same signal does.
var ErrInterrupted = fmt.Errorf("the wait for the named pipe's writer was interrupted: %w", context.Canceled)

// opener opens files until it is interrupted. The zero value is not
// usable: make one with newOpener.
type opener struct {
	stop chan struct{}
	once sync.Once
}

func newOpener() *opener { return &opener{stop: make(chan struct{})} }

// process is the opener of this process, the one Interrupt stops.
var process = newOpener()

// Interrupt makes every open that waits for a named pipe's writer, now or
// later in this process, return ErrInterrupted. It is safe to call more
// than once and from any goroutine (a signal handler's).
func Interrupt() { process.interrupt() }

// Open opens the file at path for reading, as os.Open does, except that
// the wait for a named pipe's writer ends with ErrInterrupted once
// Interrupt is called. The caller closes the file.
func Open(path string) (*os.File, error) { return process.open(path) }

// ReadFile reads the whole file at path, as os.ReadFile does, except that
// the wait for a named pipe's writer ends with ErrInterrupted once
// Interrupt is called.
func ReadFile(path string) ([]byte, error) {
	return ReadFileContext(context.Background(), path) // a context never done
}

// IsPipe reports whether path names a named pipe (after links): one that
// can be read only once.
func IsPipe(path string) bool {
	st, err := os.Stat(path)
	return err == nil && st.Mode()&fs.ModeNamedPipe != 0
}

// ReadOnce reports whether path can be read only once or names another
// file in every process: a pipe (named, or the anonymous one behind a
// shell's <(…)), or a per-process name (/dev/stdin, /dev/fd/N,
// /proc/self/fd/N). A later command cannot read such a path again.
func ReadOnce(path string) bool {
	if IsPipe(path) {
		return true
	}
	p := filepath.Clean(path)
	return p == "/dev/stdin" || strings.HasPrefix(p, "/dev/fd/") || strings.HasPrefix(p, "/proc/self/fd/")
}

func (o *opener) interrupt() { o.once.Do(func() { close(o.stop) }) }

// open opens path; a named pipe is opened on a goroutine that is left to
// finish on its own when o is interrupted first (it closes the file it
// gets, should a writer come after all).
func (o *opener) open(path string) (*os.File, error) { return o.openUntil(path, nil) }

// openUntil is open that also stops waiting for a pipe's writer when
// cancel is closed (nil: never).
func (o *opener) openUntil(path string, cancel <-chan struct{}) (*os.File, error) {
	if !IsPipe(path) {
		return os.Open(path) // not a pipe: os.Open says what is wrong, if anything
	}
	interrupted := &fs.PathError{Op: "open", Path: path, Err: ErrInterrupted}
	select {
	case <-o.stop:
		return nil, interrupted
	case <-cancel:
		return nil, interrupted
	default:
	}
	type opened struct {
		f   *os.File
		err error
	}
	done := make(chan opened, 1)
	go func() {
		f, err := os.Open(path)
		done <- opened{f, err}
	}()
	select {
	case r := <-done:
		return r.f, r.err
	case <-o.stop:
	case <-cancel:
	}
	go func() {
		if r := <-done; r.f != nil {
			r.f.Close()
		}
	}()
	return nil, interrupted
}

// ReadFileContext reads the whole file at path as ReadFile does, and also
// ends with ErrInterrupted when ctx is done while a named pipe is waited
// for: for its writer to open it, or for the writer to write more or close
// it. (The window's Stop reaches a pipe this way; Interrupt reaches it too.)
func ReadFileContext(ctx context.Context, path string) ([]byte, error) {
	return ReadFileBounded(ctx, path, 0)
}

// LineTooLongError is the error of ReadFileBounded at the first line
// longer than its bound; Line counts from 1.
type LineTooLongError struct {
	Path        string
	Line, Limit int
}

func (e *LineTooLongError) Error() string {
	return fmt.Sprintf("%s line %d: longer than %d bytes", e.Path, e.Line, e.Limit)
}

// ReadFileBounded is ReadFileContext that, for a named pipe, stops with a
// *LineTooLongError as soon as a line grows beyond maxLine bytes (no bound
// when maxLine ≤ 0), so that a pipe without line breaks is not read whole
// before a reader would refuse its first record. A regular file is read
// as ReadFileContext reads it: its size is known before the read.
func ReadFileBounded(ctx context.Context, path string, maxLine int) ([]byte, error) {
	if !IsPipe(path) {
		return os.ReadFile(path) // reads a regular file in one buffer of its size
	}
	f, err := process.openUntil(path, ctx.Done())
	if err != nil {
		return nil, err
	}
	defer f.Close()
	// Closing the file ends a read that waits on the pipe: the runtime
	// polls pipes, and a close wakes the poller.
	stop := context.AfterFunc(ctx, func() { f.Close() })
	defer stop()
	data, err := readBounded(f, path, maxLine)
	if err != nil && ctx.Err() != nil {
		return nil, &fs.PathError{Op: "read", Path: path, Err: ErrInterrupted}
	}
	return data, err
}

// readBounded reads r to its end as io.ReadAll does, checking the length
// of each line as it arrives when maxLine > 0.
func readBounded(r io.Reader, path string, maxLine int) ([]byte, error) {
	if maxLine <= 0 {
		return io.ReadAll(r)
	}
	data := make([]byte, 0, 64<<10)
	line, run := 1, 0 // the current line's number and its bytes so far
	for {
		if len(data) == cap(data) {
			data = append(data, 0)[:len(data)]
		}
		n, err := r.Read(data[len(data):cap(data)])
		for _, b := range data[len(data) : len(data)+n] {
			if b == '\n' {
				line, run = line+1, 0
			} else if run++; run > maxLine {
				return nil, &LineTooLongError{Path: path, Line: line, Limit: maxLine}
			}
		}
		data = data[:len(data)+n]
		if err == io.EOF {
			return data, nil
		}
		if err != nil {
			return data, err
		}
	}
}

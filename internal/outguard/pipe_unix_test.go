//go:build unix

package outguard

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// checkWithin runs CheckInput on the named pipe p and fails the test when
// it has not returned within a few seconds (it waited for a writer).
func checkWithin(t *testing.T, p string) error {
	t.Helper()
	done := make(chan error, 1)
	go func() { done <- CheckInput(File{"--test", p}, true) }()
	select {
	case err := <-done:
		return err
	case <-time.After(5 * time.Second):
		t.Fatalf("CheckInput on the named pipe %s still waits after 5 s", p)
		return nil
	}
}

// TestCheckInputNamedPipe checks that a named pipe (mkfifo, as a shell's
// process substitution gives) is checked without being opened: with no
// writer CheckInput returns at once, and a writer's stream reaches the
// reader that opens the pipe afterwards whole, as POSIX pipe semantics
// (pipe(7)) deliver it to a single open by the reader.
func TestCheckInputNamedPipe(t *testing.T) {
	cases := []struct {
		name   string
		writer bool
	}{
		{"no writer yet", false},
		{"a writer waiting", true},
	}
	for _, c := range cases {
		p := filepath.Join(t.TempDir(), "test.csv")
		if err := syscall.Mkfifo(p, 0o600); err != nil {
			t.Skipf("mkfifo: %v", err)
		}
		want := "text,label\nlost bag,lost-property\n"
		wrote := make(chan error, 1)
		if c.writer {
			go func() {
				f, err := os.OpenFile(p, os.O_WRONLY, 0)
				if err == nil {
					_, err = io.WriteString(f, want)
					f.Close()
				}
				wrote <- err
			}()
			time.Sleep(100 * time.Millisecond) // let the writer wait in its open
		}
		if err := checkWithin(t, p); err != nil {
			t.Errorf("%s: refused: %v", c.name, err)
			continue
		}
		if !c.writer {
			continue
		}
		got, err := os.ReadFile(p)
		if err != nil || string(got) != want {
			t.Errorf("%s: the reader got %q (%v), want %q", c.name, got, err, want)
		}
		if err := <-wrote; err != nil {
			t.Errorf("%s: the writer failed: %v", c.name, err)
		}
	}
}

func TestCheckInputNamedPipeUnreadable(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("the superuser may read a pipe without read permission")
	}
	p := filepath.Join(t.TempDir(), "test.csv")
	if err := syscall.Mkfifo(p, 0o200); err != nil {
		t.Skipf("mkfifo: %v", err)
	}
	want := "--test " + p + " cannot be read (permission denied): make it readable or give another --test"
	if err := checkWithin(t, p); !errors.Is(err, ErrInput) || err.Error() != want {
		t.Errorf("got %v, want %q", err, want)
	}
}

// TestCheckRefusesStreamsAndDanglingLinks: an output that is a named pipe,
// a link to a process's descriptor (as /dev/stdout is) or a link to a
// missing file is refused before the work (ErrNotWritable), naming the
// option and the path, and stays what it was; a link to a file is
// checked at its target. All made in the test's folder.
func TestCheckRefusesStreamsAndDanglingLinks(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "p.csv")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("no named pipes here: %v", err)
	}
	stdout, dangling := filepath.Join(dir, "so.html"), filepath.Join(dir, "d.csv")
	os.Symlink("/proc/self/fd/1", stdout)
	os.Symlink(filepath.Join(dir, "missing", "x.csv"), dangling)
	for _, c := range []struct{ path, want string }{
		{fifo, "is a named pipe, not a file"},
		{stdout, "leads to /proc/self/fd/1, a process's descriptor"},
		{dangling, "which cannot be followed"},
	} {
		before, _ := os.Lstat(c.path)
		err := Check([]File{{"--out", c.path}}, nil)
		if !errors.Is(err, ErrNotWritable) || !strings.Contains(err.Error(), "--out "+c.path+" ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want a refusal that says %q", c.path, err, c.want)
		}
		if after, _ := os.Lstat(c.path); after.Mode() != before.Mode() {
			t.Errorf("%s changed: %v → %v", c.path, before.Mode(), after.Mode())
		}
	}
	target, link := filepath.Join(dir, "t.csv"), filepath.Join(dir, "l.csv")
	os.WriteFile(target, nil, 0o644)
	os.Symlink(target, link)
	if err := Check([]File{{"--out", link}}, nil); err != nil {
		t.Errorf("a link to a file: %v", err)
	}
}

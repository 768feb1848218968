package atomicfile

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestWrite(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "out.txt")
	if err := os.WriteFile(p, []byte("old"), 0o600); err != nil {
		t.Fatal(err)
	}
	// A failing writer leaves the old file and no temporary file.
	boom := errors.New("boom")
	err := Write(p, func(w io.Writer) error {
		io.WriteString(w, "half")
		return boom
	})
	if !errors.Is(err, boom) || !strings.Contains(err.Error(), p) {
		t.Fatalf("error %v, want one wrapping the writer's and naming the path", err)
	}
	if b, _ := os.ReadFile(p); string(b) != "old" {
		t.Fatalf("after a failed write the file holds %q", b)
	}
	// A good write replaces it, readable by others.
	if err := Write(p, func(w io.Writer) error { _, err := io.WriteString(w, "new"); return err }); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(p)
	st, _ := os.Stat(p)
	if string(b) != "new" || st.Mode().Perm() != 0o644 {
		t.Fatalf("file holds %q with mode %v", b, st.Mode().Perm())
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 {
		t.Fatalf("%d entries in the folder, want 1", len(ents))
	}
	// A missing folder is an error naming the path.
	if err := Write(filepath.Join(dir, "no", "x"), func(io.Writer) error { return nil }); err == nil || !strings.Contains(err.Error(), "writable") {
		t.Fatalf("missing folder: %v", err)
	}
}

// TestWriteThroughLinksAndStreams: a link is written through (its target
// replaced, the link kept, also a link to a file not there yet); a named
// pipe gets the content as a stream and stays a pipe; a link to the
// process's own descriptor, as /dev/stdout is, is written to as a stream,
// not replaced by a file.
func TestWriteThroughLinksAndStreams(t *testing.T) {
	dir := t.TempDir()
	content := func(w io.Writer) error { _, err := io.WriteString(w, "new"); return err }
	target, link := filepath.Join(dir, "target.txt"), filepath.Join(dir, "link.txt")
	if err := os.WriteFile(target, []byte("old"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink("target.txt", link); err != nil {
		t.Fatal(err)
	}
	if err := Write(link, content); err != nil {
		t.Fatal(err)
	}
	if fi, err := os.Lstat(link); err != nil || fi.Mode()&os.ModeSymlink == 0 {
		t.Errorf("the link is no longer a link: %v %v", fi, err)
	}
	if b, _ := os.ReadFile(target); string(b) != "new" {
		t.Errorf("the link's target holds %q, want new", b)
	}
	dangling, later := filepath.Join(dir, "dangling.txt"), filepath.Join(dir, "later.txt")
	if err := os.Symlink(later, dangling); err != nil {
		t.Fatal(err)
	}
	if err := Write(dangling, content); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(later); string(b) != "new" {
		t.Errorf("the dangling link's target holds %q, want new", b)
	}

	fifo := filepath.Join(dir, "pipe")
	if err := syscallMkfifo(fifo); err != nil {
		t.Skipf("no named pipes here: %v", err)
	}
	got := make(chan string)
	go func() {
		b, _ := os.ReadFile(fifo)
		got <- string(b)
	}()
	if err := Write(fifo, content); err != nil {
		t.Fatal(err)
	}
	if s := <-got; s != "new" {
		t.Errorf("the pipe's reader got %q", s)
	}
	if fi, _ := os.Lstat(fifo); fi.Mode()&os.ModeNamedPipe == 0 {
		t.Errorf("the pipe became %v", fi.Mode())
	}
	// A link to a process's own descriptor, as /dev/stdout is (made here
	// in the test's folder, so that a regression replaces nothing of the
	// system's).
	r, w, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	fd := fmt.Sprintf("/proc/self/fd/%d", w.Fd())
	if _, err := os.Stat(fd); err != nil {
		w.Close()
		t.Skipf("no %s here: %v", fd, err)
	}
	stdout := filepath.Join(dir, "stdout")
	if err := os.Symlink(fd, stdout); err != nil {
		t.Fatal(err)
	}
	go func() {
		b, _ := io.ReadAll(r)
		got <- string(b)
	}()
	err = Write(stdout, content)
	w.Close()
	if err != nil {
		t.Fatal(err)
	}
	if s := <-got; s != "new" {
		t.Errorf("the descriptor's reader got %q", s)
	}
	if fi, err := os.Lstat(stdout); err != nil || fi.Mode()&os.ModeSymlink == 0 {
		t.Errorf("the link to the descriptor is no longer a link: %v %v", fi, err)
	}
}

package atomicfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"strconv"
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
	// A good write replaces it and keeps its permissions: a private file
	// stays private.
	if err := Write(p, func(w io.Writer) error { _, err := io.WriteString(w, "new"); return err }); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(p)
	st, _ := os.Stat(p)
	if string(b) != "new" || st.Mode().Perm() != 0o600 {
		t.Fatalf("file holds %q with mode %v, want 0600 as before", b, st.Mode().Perm())
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

// TestWriteThroughLinksRefuseStreams: a link is written through as the
// system follows it (its target replaced, the link kept), also a relative
// link in a folder reached through another link, where "../" leads from
// the folder's real place; a link to a missing file, a named pipe, and a
// link to a process's descriptor (as /dev/stdout is) are refused before
// anything is written, and stay what they were. Everything is made in the
// test's folder, so that a regression can replace nothing of the system's.
func TestWriteThroughLinksRefuseStreams(t *testing.T) {
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

	// sub → other/deep; other/deep/out.txt → ../data.txt, which the system
	// resolves from other/deep: other/data.txt, not dir/data.txt.
	for _, d := range []string{"other/deep"} {
		os.MkdirAll(filepath.Join(dir, d), 0o755)
	}
	os.WriteFile(filepath.Join(dir, "data.txt"), []byte("input"), 0o644)
	os.Symlink(filepath.Join(dir, "other", "deep"), filepath.Join(dir, "sub"))
	os.Symlink("../data.txt", filepath.Join(dir, "other", "deep", "out.txt"))
	os.WriteFile(filepath.Join(dir, "other", "data.txt"), []byte("old"), 0o644)
	if err := Write(filepath.Join(dir, "sub", "out.txt"), content); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(filepath.Join(dir, "data.txt")); string(b) != "input" {
		t.Errorf("a file the link does not lead to was written: %q", b)
	}
	if b, _ := os.ReadFile(filepath.Join(dir, "other", "data.txt")); string(b) != "new" {
		t.Errorf("the file the system reaches holds %q", b)
	}

	dangling := filepath.Join(dir, "dangling.txt")
	os.Symlink(filepath.Join(dir, "missing", "x.txt"), dangling)
	fifo := filepath.Join(dir, "pipe")
	if err := syscallMkfifo(fifo); err != nil {
		t.Skipf("no named pipes here: %v", err)
	}
	// A link to a descriptor of a pipe of the test's own, as /dev/stdout
	// is a link to /proc/self/fd/1 (so that a regression writes nothing
	// the test run needs), a chain of links to it, and the descriptor in a
	// folder linked to /proc/self/fd.
	r, w, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	defer w.Close()
	fd := strconv.Itoa(int(w.Fd()))
	stdout := filepath.Join(dir, "stdout")
	os.Symlink("/proc/self/fd/"+fd, stdout)
	chain, fds := filepath.Join(dir, "chain"), filepath.Join(dir, "fds")
	os.Symlink("stdout", chain)
	os.Symlink("/proc/self/fd", fds)
	for _, p := range []string{dangling, fifo, stdout, chain, filepath.Join(fds, fd)} {
		before, _ := os.Lstat(p)
		if err := Write(p, content); !errors.Is(err, ErrNotAFile) || !strings.Contains(err.Error(), p) {
			t.Errorf("%s: %v, want a refusal naming it", p, err)
		}
		if after, _ := os.Lstat(p); after.Mode() != before.Mode() {
			t.Errorf("%s was %v, is now %v", p, before.Mode(), after.Mode())
		}
	}
}

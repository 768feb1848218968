package atomicfile

import (
	"errors"
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

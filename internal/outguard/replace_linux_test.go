//go:build linux

package outguard

import (
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// chattr sets or clears (mode "+i", "-i", "+a", "-a") a file's flag with
// the chattr program, skipping the test where it cannot (no chattr, not
// the superuser, a file system without the flags).
func chattr(t *testing.T, mode, path string) {
	t.Helper()
	if out, err := exec.Command("chattr", mode, path).CombinedOutput(); err != nil {
		t.Skipf("chattr %s cannot run here (it needs the superuser and a file system with the flags): %v: %s", mode, err, out)
	}
}

// TestCheckUnreplaceable: an output that exists but is marked immutable or
// append-only is refused before the work, naming the mark and the fix,
// since the rename over it at the end would fail (rename(2): EPERM); the
// reference is the rename itself, tried here, which the system refuses.
// The file is left as it was; once the mark is cleared it is accepted.
func TestCheckUnreplaceable(t *testing.T) {
	for _, c := range []struct{ set, clear, want string }{
		{"+i", "-i", "marked immutable (chattr +i): clear the mark (chattr -i "},
		{"+a", "-a", "marked append-only (chattr +a): clear the mark (chattr -a "},
	} {
		t.Run(c.set, func(t *testing.T) {
			dir := t.TempDir()
			out := filepath.Join(dir, "m.tt")
			if err := os.WriteFile(out, []byte("old model\n"), 0o644); err != nil {
				t.Fatal(err)
			}
			chattr(t, c.set, out)
			defer exec.Command("chattr", c.clear, out).Run()
			other := filepath.Join(dir, "other")
			os.WriteFile(other, nil, 0o644)
			if err := os.Rename(other, out); err == nil {
				t.Fatalf("the system replaced a file marked %s: the check has nothing to find", c.set)
			}
			err := Check([]File{{"--out", out}}, nil)
			want := "--out " + out + " exists and cannot be replaced: it is " + c.want + out + "), or choose another --out"
			if !errors.Is(err, ErrNotWritable) || err.Error() != want {
				t.Errorf("got %v, want %q", err, want)
			}
			// The same through a link, which is written through to its target.
			link := filepath.Join(t.TempDir(), "link.tt")
			if err := os.Symlink(out, link); err != nil {
				t.Fatal(err)
			}
			if err := Check([]File{{"--out", link}}, nil); !errors.Is(err, ErrNotWritable) {
				t.Errorf("through a link: got %v, want the target refused", err)
			}
			if b, _ := os.ReadFile(out); string(b) != "old model\n" {
				t.Errorf("the output now holds %q", b)
			}
			chattr(t, c.clear, out)
			if err := Check([]File{{"--out", out}}, nil); err != nil {
				t.Errorf("with the mark cleared: %v", err)
			}
		})
	}
}

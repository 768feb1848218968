//go:build unix

package atomicfile

import (
	"io"
	"os"
	"path/filepath"
	"syscall"
	"testing"
)

// A new file gets 0666 less the umask, as os.Create gives (POSIX open(2):
// the mode is masked by the process's umask; common practice, no source
// beyond the standard); a replaced one keeps its own mode whatever the
// umask, and while its new content is written the temporary file is
// readable by no more than the old file was. Not parallel: the umask is
// the process's.
func TestWritePermissions(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		umask    int
		replaced bool // a file is there, with mode existing
		existing os.FileMode
		want     os.FileMode
	}{
		{0o022, false, 0, 0o644},
		{0o077, false, 0, 0o600},
		{0o002, false, 0, 0o664},
		{0o022, true, 0o600, 0o600},
		{0o077, true, 0o644, 0o644},
		{0o022, true, 0o640, 0o640},
		{0o022, true, 0o400, 0o400},
		{0o022, true, 0o000, 0o000},
	} {
		p := filepath.Join(dir, "out.txt")
		os.Remove(p)
		if c.replaced {
			if err := os.WriteFile(p, []byte("old"), c.existing); err != nil {
				t.Fatal(err)
			}
			if err := os.Chmod(p, c.existing); err != nil {
				t.Fatal(err)
			}
		}
		old := syscall.Umask(c.umask)
		var during os.FileMode
		err := Write(p, func(w io.Writer) error {
			if st, err := w.(*os.File).Stat(); err == nil {
				during = st.Mode().Perm()
			}
			_, err := io.WriteString(w, "new")
			return err
		})
		syscall.Umask(old)
		if err != nil {
			t.Fatal(err)
		}
		st, err := os.Stat(p)
		if err != nil {
			t.Fatal(err)
		}
		if st.Mode().Perm() != c.want {
			t.Errorf("umask %03o, existing %v: mode %v, want %v", c.umask, c.existing, st.Mode().Perm(), c.want)
		}
		if c.replaced && during&^c.existing != 0 {
			t.Errorf("umask %03o, existing %v: mode %v while the new content was written, more open than the old file's", c.umask, c.existing, during)
		}
	}
}

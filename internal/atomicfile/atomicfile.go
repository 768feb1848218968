// Package atomicfile writes files so that a reader never sees a partial one:
// the content goes to a temporary file in the destination's folder, which is
// synced, given the usual permissions and renamed over the destination. A
// failure at any step removes the temporary file and leaves the destination
// as it was.
package atomicfile

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// Write creates or replaces path with what write produces. Errors name the
// path; write's own error is wrapped.
func Write(path string, write func(io.Writer) error) (err error) {
	dir := filepath.Dir(path)
	f, err := os.CreateTemp(dir, "."+filepath.Base(path)+".*.tmp")
	if err != nil {
		return fmt.Errorf("%s: %w (is the folder there and writable?)", path, err)
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	if err = write(f); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = f.Chmod(0o644); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = f.Sync(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = f.Close(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = os.Rename(tmp, path); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if d, derr := os.Open(dir); derr == nil {
		d.Sync() // make the rename durable where the system supports it
		d.Close()
	}
	return nil
}

// Package atomicfile writes files so that a reader never sees a partial one:
// the content goes to a temporary file in the destination's folder, which is
// synced, given the usual permissions and renamed over the destination. A
// failure at any step removes the temporary file and leaves the destination
// as it was.
//
// A destination that is a symbolic link is written through: its target is
// replaced so, and the link kept. A destination that is not a regular file
// (a named pipe, a device such as /dev/stdout or /dev/null) is a stream,
// not a file a reader could see half-written: it is opened and written to
// as it is, never replaced by a file.
package atomicfile

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
)

// maxLinks bounds the symbolic links followed to a destination, as the
// system does (40 on Linux).
const maxLinks = 40

// Write creates or replaces path with what write produces (a link's
// target, a stream as it is: see the package comment). Errors name the
// path; write's own error is wrapped.
func Write(path string, write func(io.Writer) error) error {
	for range maxLinks {
		fi, err := os.Lstat(path)
		switch {
		case err != nil || fi.Mode().IsRegular():
			return writeFile(path, write)
		case fi.Mode()&os.ModeSymlink == 0:
			return writeStream(path, write)
		}
		if st, err := os.Stat(path); err == nil && !st.Mode().IsRegular() {
			return writeStream(path, write) // e.g. /dev/stdout, a link the system resolves itself
		}
		target, err := os.Readlink(path)
		if err != nil {
			return fmt.Errorf("%s: %w", path, err)
		}
		if strings.HasPrefix(target, "/proc/") || strings.HasPrefix(target, "/dev/fd/") {
			// A process's own descriptor (/dev/stdout → /proc/self/fd/1),
			// even one redirected to a file: written as the stream it is,
			// so the shell's redirection gets it.
			return writeStream(path, write)
		}
		if !filepath.IsAbs(target) {
			target = filepath.Join(filepath.Dir(path), target)
		}
		path = target
	}
	return fmt.Errorf("%s: more than %d symbolic links in a row: give the file's own path", path, maxLinks)
}

// writeStream writes to the existing non-regular file at path (a pipe, a
// device) as it is.
func writeStream(path string, write func(io.Writer) error) error {
	f, err := os.OpenFile(path, os.O_WRONLY, 0)
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err := write(f); err != nil {
		f.Close()
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return nil
}

// writeFile writes the regular file (or the new file) at path through a
// temporary file renamed over it.
func writeFile(path string, write func(io.Writer) error) (err error) {
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

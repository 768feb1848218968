// Package atomicfile writes files so that a reader never sees a partial one:
// the content goes to a temporary file in the destination's folder, which is
// synced, given the replaced file's permissions (or, for a new file, those
// os.Create gives) and renamed over the destination. A
// failure at any step removes the temporary file and leaves the destination
// as it was.
//
// A destination that is a symbolic link is followed as the system follows
// it (Resolve): its target is replaced so, and the link kept. A destination
// that is not a regular file (a named pipe, a device, a process's own
// descriptor such as /dev/stdout) is refused, never replaced by a file.
package atomicfile

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// ErrNotAFile marks a destination that is not a regular file or a new
// one: a pipe, a device, a descriptor, or a link that cannot be followed.
var ErrNotAFile = errors.New("not a file to write")

// Resolve returns the path a file written at path lands on: path itself,
// or for a symbolic link its target as the system resolves it
// (filepath.EvalSymlinks). It refuses (ErrNotAFile) a process's own
// descriptor (/dev/stdout, /dev/fd/N, /proc/…, or a link to one: a file
// it leads to is the shell's, which a rename would take from it), a link
// that cannot be followed (a link to a missing file: give the target
// itself), and an existing destination that is not a regular file (a
// pipe, a device).
func Resolve(path string) (string, error) {
	if abs, err := filepath.Abs(path); err == nil && descriptor(abs) {
		return "", fmt.Errorf("%s is a process's descriptor, not a file: give a file's path: %w", path, ErrNotAFile)
	}
	if d := viaDescriptor(path); d != "" {
		return "", fmt.Errorf("%s leads to %s, a process's descriptor, not a file: give a file's path: %w", path, d, ErrNotAFile)
	}
	real := path
	if fi, err := os.Lstat(path); err == nil && fi.Mode()&os.ModeSymlink != 0 {
		target, _ := os.Readlink(path)
		if real, err = filepath.EvalSymlinks(path); err != nil {
			return "", fmt.Errorf("%s is a link to %s, which cannot be followed (%v): give the file's own path: %w", path, target, err, ErrNotAFile)
		}
	}
	if st, err := os.Stat(real); err == nil && !st.Mode().IsRegular() && !st.IsDir() {
		return "", fmt.Errorf("%s is a %s, not a file: give a file's path: %w", path, kind(st.Mode()), ErrNotAFile)
	}
	return real, nil
}

// viaDescriptor is the first of the places path's folder resolves to and
// each link it follows in turn leads to (at most maxLinks) that is a
// process's descriptor (descriptor), or "" when none is: a chain of links,
// or a linked folder, may lead to /proc/self/fd/1 beyond the first link.
func viaDescriptor(path string) string {
	cur, err := filepath.Abs(path)
	if err != nil {
		return ""
	}
	for range maxLinks {
		if dir, err := filepath.EvalSymlinks(filepath.Dir(cur)); err == nil {
			if descriptor(dir + string(filepath.Separator)) {
				return dir
			}
			cur = filepath.Join(dir, filepath.Base(cur))
		}
		fi, err := os.Lstat(cur)
		if err != nil || fi.Mode()&os.ModeSymlink == 0 {
			return ""
		}
		target, err := os.Readlink(cur)
		if err != nil {
			return ""
		}
		if !filepath.IsAbs(target) {
			target = filepath.Join(filepath.Dir(cur), target)
		}
		if descriptor(target) {
			return target
		}
		cur = target
	}
	return ""
}

// maxLinks bounds the links viaDescriptor follows, as the system does (40
// on Linux).
const maxLinks = 40

// descriptor reports whether the absolute path p names a process's own
// descriptor or stream rather than a file.
func descriptor(p string) bool {
	for _, pre := range []string{"/dev/std", "/dev/fd/", "/proc/"} {
		if strings.HasPrefix(p, pre) {
			return true
		}
	}
	return false
}

// kind names a file mode that is not a regular file's.
func kind(m os.FileMode) string {
	switch {
	case m&os.ModeNamedPipe != 0:
		return "named pipe"
	case m&os.ModeSocket != 0:
		return "socket"
	case m&os.ModeDevice != 0:
		return "device"
	}
	return "special file"
}

// Write creates or replaces path (a link's target: Resolve) with what
// write produces. Errors name the path; write's own error is wrapped.
func Write(path string, write func(io.Writer) error) error {
	real, err := Resolve(path)
	if err != nil {
		return err
	}
	return writeFile(real, write)
}

// writeFile writes the regular file (or the new file) at path through a
// temporary file renamed over it. A file replaced keeps its permissions
// (a private file stays private); a new one gets those os.Create gives,
// 0666 less the process's umask.
func writeFile(path string, write func(io.Writer) error) (err error) {
	dir := filepath.Dir(path)
	// A file replaced: the temporary file is made private at once and
	// given the old file's mode before anything is written, so the new
	// content is never readable by more than the old was.
	replacing, keep := false, os.FileMode(0)
	if fi, serr := os.Stat(path); serr == nil && fi.Mode().IsRegular() {
		replacing, keep = true, fi.Mode().Perm()
	}
	perm := os.FileMode(0o666)
	if replacing {
		perm = 0o600
	}
	f, err := createTemp(dir, "."+filepath.Base(path)+".", perm)
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
	if replacing {
		if err = f.Chmod(keep); err != nil {
			return fmt.Errorf("writing %s: %w", path, err)
		}
	}
	if err = write(f); err != nil {
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

// createTemp creates a new file dir/prefix<random>.tmp for writing, as
// os.CreateTemp does but with mode perm less the umask (os.CreateTemp's is
// 0600), so that a new destination gets the permissions os.Create gives
// (perm 0666).
func createTemp(dir, prefix string, perm os.FileMode) (*os.File, error) {
	for range 10000 {
		name := filepath.Join(dir, prefix+strconv.FormatUint(uint64(rand.Uint32()), 10)+".tmp")
		f, err := os.OpenFile(name, os.O_RDWR|os.O_CREATE|os.O_EXCL, perm)
		if !errors.Is(err, fs.ErrExist) {
			return f, err
		}
	}
	return nil, &fs.PathError{Op: "createtemp", Path: filepath.Join(dir, prefix+"*.tmp"), Err: fs.ErrExist}
}

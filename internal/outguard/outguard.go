package outguard

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"telltale/internal/atomicfile"
)

// File is one path a run reads or writes, with the name the user gave it
// (an option such as "--out", or a field of a form), used in messages.
type File struct {
	Name string
	Path string
}

// ErrOntoInput is wrapped by the error of an output that is an input (or
// lies inside an input folder), or that another output also names: a
// mistake in what the user asked for.
var ErrOntoInput = errors.New("outguard: output would overwrite an input")

// ErrNotWritable is wrapped by the error of an output that cannot be
// written: it is a folder, its folder is missing or not writable, or it
// exists and cannot be replaced.
var ErrNotWritable = errors.New("outguard: output cannot be written")

// Error is a problem Check found. It wraps ErrOntoInput or ErrNotWritable.
type Error struct {
	msg  string
	kind error
}

func (e *Error) Error() string { return e.msg }
func (e *Error) Unwrap() error { return e.kind }

func fail(kind error, format string, args ...any) error {
	return &Error{msg: fmt.Sprintf(format, args...), kind: kind}
}

// Check returns nil when every output can be written without touching an
// input or another output. Outputs and inputs with an empty Path are left
// out. Inputs need not exist (a missing input is the reader's error). The
// first problem found is returned, wrapping ErrOntoInput or ErrNotWritable;
// its message names both files and says what to do.
//
// Check writes nothing but a probe file in each output's folder, which it
// removes at once.
func Check(outputs, inputs []File) error {
	var ins []resolved
	for _, in := range inputs {
		if in.Path != "" {
			ins = append(ins, resolve(in))
		}
	}
	var outs []resolved
	for _, out := range outputs {
		if out.Path == "" {
			continue
		}
		o := resolve(out)
		if err := o.ontoInput(ins); err != nil {
			return err
		}
		for _, prev := range outs {
			if o.same(prev) {
				return fail(ErrOntoInput, "%s %s and %s %s are one file: give each output its own name",
					prev.Name, prev.Path, o.Name, o.Path)
			}
		}
		if err := writable(out); err != nil {
			return err
		}
		outs = append(outs, o)
	}
	return nil
}

// resolved is a File with what identifies it on disk: the file's own
// status when it exists (which follows symbolic links), else its absolute
// path with the links of its folders resolved.
type resolved struct {
	File
	info os.FileInfo // nil when the path does not exist
	abs  string
	link os.FileInfo // the output path's own status when it is a symbolic link
}

func resolve(f File) resolved {
	r := resolved{File: f, abs: absPath(f.Path)}
	r.info, _ = os.Stat(f.Path)
	if li, err := os.Lstat(f.Path); err == nil && li.Mode()&os.ModeSymlink != 0 {
		r.link = li
	}
	return r
}

// absPath is path made absolute and cleaned, with symbolic links in its
// folders resolved as far as they exist.
func absPath(path string) string {
	abs, err := filepath.Abs(path)
	if err != nil {
		return filepath.Clean(path)
	}
	dir, base := filepath.Split(abs)
	if real, err := filepath.EvalSymlinks(dir); err == nil {
		return filepath.Join(real, base)
	}
	return abs
}

// same reports whether r and o are one file.
func (r resolved) same(o resolved) bool {
	if r.info != nil && o.info != nil {
		return os.SameFile(r.info, o.info)
	}
	return r.abs == o.abs
}

// ontoInput returns the error for an output that is one of ins or lies
// inside an input folder.
func (r resolved) ontoInput(ins []resolved) error {
	for _, in := range ins {
		var how string
		switch {
		case r.link != nil && r.info != nil && in.info != nil && os.SameFile(r.info, in.info):
			how = "is a symbolic link to"
		case r.same(in) && r.abs == in.abs:
			how = "is"
		case r.same(in):
			how = "is the same file (through a hard or symbolic link) as"
		case in.info != nil && in.info.IsDir() && r.inside(in.info):
			return fail(ErrOntoInput, "%s %s is inside the %s folder %s, and writing there would change the data: "+
				"telltale never writes onto its inputs: put the output elsewhere", r.Name, r.Path, in.Name, in.Path)
		default:
			continue
		}
		return fail(ErrOntoInput, "%s %s %s %s %s: telltale never writes onto its inputs: give the output another file name",
			r.Name, r.Path, how, in.Name, in.Path)
	}
	return nil
}

// inside reports whether r's folder, or one above it, is dir.
func (r resolved) inside(dir os.FileInfo) bool {
	for p := filepath.Dir(r.abs); ; p = filepath.Dir(p) {
		if st, err := os.Stat(p); err == nil && os.SameFile(st, dir) {
			return true
		}
		if parent := filepath.Dir(p); parent == p {
			return false
		}
	}
}

// writable returns the error for an output that cannot be written: a
// folder, or a path whose folder is missing or refuses a new file (found by
// creating and removing a probe file there). The message names the path
// the user gave and the option to change, never the probe.
func writable(f File) error {
	if st, err := os.Stat(f.Path); err == nil && st.IsDir() {
		return fail(ErrNotWritable, "%s %s is a folder: give a file name", f.Name, f.Path)
	}
	// Where the file lands, as atomicfile writes it: a link's target; a
	// pipe, a device or a process's descriptor is refused.
	target, err := atomicfile.Resolve(f.Path)
	if err != nil {
		return fail(ErrNotWritable, "%s %s", f.Name, strings.TrimSuffix(err.Error(), ": "+atomicfile.ErrNotAFile.Error()))
	}
	dir := filepath.Dir(target)
	opt := option(f.Name)
	switch st, err := os.Stat(dir); {
	case errors.Is(err, fs.ErrNotExist):
		return fail(ErrNotWritable, "%s %s: the folder %s does not exist: create it or choose another %s", f.Name, f.Path, dir, opt)
	case err == nil && !st.IsDir():
		return fail(ErrNotWritable, "%s %s: %s is a file, not a folder: choose another %s", f.Name, f.Path, dir, opt)
	}
	probe, err := os.CreateTemp(dir, "."+filepath.Base(f.Path)+".check*")
	if err != nil {
		return fail(ErrNotWritable, "%s %s: a file cannot be made in the folder %s (%s): make the folder writable or choose another %s",
			f.Name, f.Path, dir, reason(err), opt)
	}
	name := probe.Name()
	probe.Close()
	if err := os.Remove(name); err != nil {
		return err
	}
	return replaceable(f, target, dir, opt)
}

// replaceable returns the error for an output whose file (target: the
// output's path, or a link's target, in the folder dir) exists as a
// regular file which a rename over it, as every file is written, would be
// refused for: a file marked immutable or append-only (chattr +i, +a), or
// another user's file in a sticky folder. Found before the work, so that
// nothing is lost at the end.
func replaceable(f File, target, dir, opt string) error {
	fi, err := os.Lstat(target)
	if err != nil || !fi.Mode().IsRegular() {
		return nil
	}
	why, fix := inodeFlags(target)
	if why == "" {
		if di, err := os.Stat(dir); err == nil {
			why, fix = stickyOwner(fi, di), "ask its owner to remove it"
		}
	}
	if why == "" {
		return nil
	}
	return fail(ErrNotWritable, "%s %s exists and cannot be replaced: %s: %s, or choose another %s", f.Name, f.Path, why, fix, opt)
}

// ErrInput marks an input that cannot be read: missing, a folder where a
// file is expected, or not readable.
var ErrInput = errors.New("outguard: input cannot be read")

// CheckInput reports, before any work, why the input in cannot be read: its
// path does not exist, it is a folder and folder is false (only a file will
// do), or it cannot be opened (and, for a folder, listed; a named pipe,
// such as a shell's process substitution, is not opened: its permission
// alone is checked, so that its writer's stream reaches the command whole
// and no writer is waited for here). The message
// names the option, the path and the fix. An input with an empty path is
// not checked.
func CheckInput(in File, folder bool) error {
	if in.Path == "" {
		return nil
	}
	what := "file"
	if folder {
		what = "file or folder"
	}
	st, err := os.Stat(in.Path)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return fail(ErrInput, "%s %s: no such %s: check the path", in.Name, in.Path, what)
	case err != nil:
		return fail(ErrInput, "%s %s cannot be read (%s): check the path", in.Name, in.Path, reason(err))
	case st.IsDir() && !folder:
		return fail(ErrInput, "%s %s is a folder: give a file in it, not the folder", in.Name, in.Path)
	case st.Mode()&fs.ModeNamedPipe != 0:
		// Opening a named pipe waits for its writer, and closing it again
		// ends the writer's stream before the command reads it: only the
		// permission is checked; the command opens the pipe once.
		if err := readable(in.Path); err != nil {
			return fail(ErrInput, "%s %s cannot be read (%s): make it readable or give another %s", in.Name, in.Path, reason(err), option(in.Name))
		}
		return nil
	}
	f, err := os.Open(in.Path)
	if err == nil && st.IsDir() {
		_, err = f.Readdirnames(1)
		if errors.Is(err, io.EOF) {
			err = nil // an empty folder is for the reader to refuse
		}
	}
	if f != nil {
		f.Close()
	}
	if err != nil {
		return fail(ErrInput, "%s %s cannot be read (%s): make it readable or give another %s", in.Name, in.Path, reason(err), option(in.Name))
	}
	return nil
}

// option is the option in a file's name ("--export" of "--export's
// stability table"), or the name itself when it holds none.
func option(name string) string {
	i := strings.Index(name, "--")
	if i < 0 {
		return name
	}
	end := i + 2
	for end < len(name) && (name[end] == '-' || name[end] >= 'a' && name[end] <= 'z' || name[end] >= '0' && name[end] <= '9') {
		end++
	}
	return name[i:end]
}

// reason is err without the path it names (a probe file's name means
// nothing to the user).
func reason(err error) string {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err.Error()
	}
	return err.Error()
}

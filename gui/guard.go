package gui

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
)

// inputs lists the files the window reads from: the data, the test file,
// the model's file and the separate dev and test files the model recorded
// at training (read again to evaluate it).
func (st *State) inputs() []string {
	var ps []string
	if cs := itemGet(st.data); cs != nil {
		ps = append(ps, cs.Path, cs.TestPath)
	}
	ps = append(ps, st.opts.DataPath, st.opts.TestPath, st.opts.ModelPath)
	if ms := itemGet(st.model); ms != nil {
		ps = append(ps, ms.Source)
		ps = append(ps, ms.SideFiles...)
		ps = append(ps, recordedFiles(ms)...)
	}
	return ps
}

// recordedFiles are the separate dev and test files ms's model recorded at
// training (cnn.SplitRecord), in that order ("" for one it did not use or
// read once, a pipe: its path names nothing now), nil when it records
// none.
func recordedFiles(ms *modelState) []string {
	if ms.Model == nil || ms.Model.Info.Splits == nil {
		return nil
	}
	rec := ms.Model.Info.Splits
	files := []string{rec.DevFile, rec.TestFile}
	for i, once := range []bool{rec.DevPipe, rec.TestPipe} {
		if once {
			files[i] = ""
		}
	}
	return files
}

// notAnInput refuses path when it is one of the window's inputs: the same
// file by identity (os.SameFile after resolving symbolic links), so that
// another name for it (a link, a hard link, "./", "..") is caught too. A
// path that does not exist yet is no input.
func (st *State) notAnInput(path string) error {
	out, err := resolvedInfo(path)
	if err != nil {
		return nil // nothing there yet: it cannot be an input
	}
	for _, in := range st.inputs() {
		if in == "" {
			continue
		}
		inInfo, err := resolvedInfo(in)
		if err != nil {
			continue
		}
		if os.SameFile(out, inInfo) {
			return fmt.Errorf("%s is %s, which this window reads from: saving there would overwrite it. Choose another file name", path, describeInput(st, in))
		}
	}
	return nil
}

// resolvedInfo is the file info of path after following symbolic links.
func resolvedInfo(path string) (os.FileInfo, error) {
	real, err := filepath.EvalSymlinks(path)
	if err != nil {
		return nil, err
	}
	info, err := os.Stat(real)
	if err != nil {
		return nil, err
	}
	if info.IsDir() {
		return nil, errors.New("a folder")
	}
	return info, nil
}

// describeInput names what input in is.
func describeInput(st *State, in string) string {
	if cs := itemGet(st.data); cs != nil {
		switch in {
		case cs.Path:
			return "the open data file (" + in + ")"
		case cs.TestPath:
			return "the open test file (" + in + ")"
		}
	}
	if ms := itemGet(st.model); ms != nil {
		if in == ms.Source {
			return "the open model's file (" + in + ")"
		}
		if rf := recordedFiles(ms); rf != nil && (in == rf[0] || in == rf[1]) {
			which := map[bool]string{true: "dev", false: "test"}[in == rf[0]]
			return "the " + which + " file the open model recorded at training (" + in + ")"
		}
	}
	return "an input of this window (" + in + ")"
}

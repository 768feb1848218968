package main

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"telltale/audit"
	"telltale/cnn"
	"telltale/internal/outguard"
)

// marksOption names the audit's marks file among a command's files: the one
// output allowed to be a .marks file.
const marksOption = "the marks file (--marks)"

// guardFiles checks, before any work, that every input given can be read
// (checkInputs), then a command's outputs against its inputs
// (outguard.Check), with the marks file beside every input model counted
// as an input: a person's verdicts on cues are data too, and so are the dev
// and test files every input model recorded at training (recordedSplits),
// which the commands that evaluate a model read in place of --test. An
// output named
// *.marks is refused unless it is the marks option itself. Every problem is
// a usage error (exit 2).
func guardFiles(outputs, inputs []outguard.File) error {
	for _, out := range outputs {
		if out.Path != "" && out.Name != marksOption && strings.EqualFold(filepath.Ext(out.Path), ".marks") {
			return usagef("%s %s: a .marks file holds a person's marks on cues, written only by telltale audit's --mark-… options: give the output another name",
				out.Name, out.Path)
		}
	}
	if err := checkInputs(inputs); err != nil {
		return err
	}
	inputs = append(inputs, besideModels(outputs, inputs)...)
	inputs = append(inputs, recordedSplits(inputs)...)
	if err := outguard.Check(outputs, inputs); err != nil {
		return usageError{err.Error()}
	}
	return nil
}

// corpusOptions are the inputs that may be a folder (one sub-folder per
// label) as well as a file.
var corpusOptions = []string{"--data", "--dev", "--test"}

// checkInputs refuses (exit 2) an input that cannot be read
// (outguard.CheckInput). Inputs a person named on the command line
// (--name) must exist; a file the command only looks for, such as a
// model's marks file at its usual place, may be missing.
func checkInputs(inputs []outguard.File) error {
	for _, in := range inputs {
		if in.Path == "" {
			continue
		}
		if !named(in, inputs) {
			if _, err := os.Lstat(in.Path); errors.Is(err, fs.ErrNotExist) {
				continue
			}
		}
		if err := outguard.CheckInput(in, slices.Contains(corpusOptions, in.Name)); err != nil {
			return usageError{err.Error()}
		}
	}
	return nil
}

// named reports whether the input in was given on the command line: an
// option (--name), or the marks option at another place than beside the
// model.
func named(in outguard.File, inputs []outguard.File) bool {
	if strings.HasPrefix(in.Name, "--") {
		return true
	}
	if in.Name != marksOption {
		return false
	}
	for _, m := range inputs {
		if m.Name == "--model" && m.Path != "" && sameFile(in.Path, audit.MarksPath(m.Path)) {
			return false
		}
	}
	return true
}

// besideModels are the marks files beside the models among inputs that
// exist and are not written by the command as its marks option.
func besideModels(outputs, inputs []outguard.File) []outguard.File {
	var marks []outguard.File
	for _, in := range inputs {
		if in.Path == "" || in.Name != "--model" && in.Name != "--models" {
			continue
		}
		p := audit.MarksPath(in.Path)
		if _, err := os.Stat(p); err != nil || writesMarks(outputs, p) || holds(inputs, p) {
			continue
		}
		marks = append(marks, outguard.File{Name: "the marks file of " + in.Name, Path: p})
	}
	return marks
}

// recordedSplits are the data, dev and test files that the models among
// inputs (--model, --models) recorded at training (cnn.SplitRecord.DataAbs,
// DevFile and TestFile, absolute paths), that are not among inputs already.
// They are not checked as inputs: a command reads the dev and test files
// when --data is the model's data, and the data file to find the model's
// training split when it is not given (with --test alone, or other
// --data), and says itself when they cannot be read. A model that is not a
// regular file (a named pipe is read once, by the command) or whose header
// cannot be read adds none: loading it gives the error.
func recordedSplits(inputs []outguard.File) []outguard.File {
	var files []outguard.File
	for _, in := range inputs {
		if in.Path == "" || in.Name != "--model" && in.Name != "--models" {
			continue
		}
		if st, err := os.Stat(in.Path); err != nil || !st.Mode().IsRegular() {
			continue
		}
		rec, err := cnn.ReadSplitRecord(in.Path)
		if err != nil || rec == nil {
			continue
		}
		for _, s := range []struct {
			which, path string
			once        bool
		}{{"data", rec.DataAbs, false}, {"dev", rec.DevFile, rec.DevPipe}, {"test", rec.TestFile, rec.TestPipe}} {
			if s.path == "" || readOnce(s.path, s.once) || holds(inputs, s.path) || holds(files, s.path) {
				continue
			}
			what := "recorded " + s.which + " split"
			if s.which == "data" {
				what = "recorded training data"
			}
			files = append(files, outguard.File{Name: in.Name + " " + in.Path + "'s " + what, Path: s.path})
		}
	}
	return files
}

// writesMarks reports whether outputs hold the marks option at path p.
func writesMarks(outputs []outguard.File, p string) bool {
	for _, out := range outputs {
		if out.Name == marksOption && sameFile(out.Path, p) {
			return true
		}
	}
	return false
}

// holds reports whether files already hold path p.
func holds(files []outguard.File, p string) bool {
	for _, f := range files {
		if f.Path != "" && sameFile(f.Path, p) {
			return true
		}
	}
	return false
}

// sameFile reports whether a and b name one existing file, or are spelt
// alike once made absolute.
func sameFile(a, b string) bool {
	sa, errA := os.Stat(a)
	sb, errB := os.Stat(b)
	if errA == nil && errB == nil {
		return os.SameFile(sa, sb)
	}
	aa, _ := filepath.Abs(a)
	ab, _ := filepath.Abs(b)
	return aa == ab
}

package main

import (
	"os"
	"path/filepath"
	"strings"

	"telltale/audit"
	"telltale/internal/outguard"
)

// marksOption names the audit's marks file among a command's files: the one
// output allowed to be a .marks file.
const marksOption = "the marks file (--marks)"

// guardFiles checks a command's outputs against its inputs before any work
// (outguard.Check), with the marks file beside every input model counted as
// an input: a person's verdicts on cues are data too. An output named
// *.marks is refused unless it is the marks option itself. Every problem is
// a usage error (exit 2).
func guardFiles(outputs, inputs []outguard.File) error {
	for _, out := range outputs {
		if out.Path != "" && out.Name != marksOption && strings.EqualFold(filepath.Ext(out.Path), ".marks") {
			return usagef("%s %s: a .marks file holds a person's marks on cues, written only by telltale audit's --mark-… options: give the output another name",
				out.Name, out.Path)
		}
	}
	inputs = append(inputs, besideModels(outputs, inputs)...)
	if err := outguard.Check(outputs, inputs); err != nil {
		return usageError{err.Error()}
	}
	return nil
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

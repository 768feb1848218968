package gui

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"path/filepath"

	"telltale/audit"
)

// auditMarks are a person's verdicts on the cues of the open model, kept in
// the marks file beside its file (audit.MarksPath), which the command line
// and the report read too. A model trained here and not saved yet keeps its
// marks in memory until it is saved; a marks file that cannot be read is
// never written over.
type auditMarks struct {
	marks *audit.Marks
	file  string // the marks file; "" while the model has no file
	err   error  // why the marks file cannot be read; marks cannot change then
}

// readMarks reads the marks beside the model ms (none yet: no marks).
func readMarks(ms *modelState) *auditMarks {
	am := &auditMarks{marks: audit.NewMarks()}
	if ms == nil || ms.Path == "" {
		return am
	}
	am.file = audit.MarksPath(ms.Path)
	mk, err := audit.ReadMarks(am.file, ms.Model)
	switch {
	case errors.Is(err, fs.ErrNotExist):
	case err != nil:
		am.err = err
	default:
		am.marks = mk
	}
	return am
}

// copyMarks is a copy of mk an audit can read while mk changes.
func copyMarks(mk *audit.Marks) *audit.Marks {
	out := audit.NewMarks()
	for _, kind := range []string{audit.MarkArtifact, audit.MarkTask} {
		for _, ws := range mk.Cues(kind) {
			_ = out.Set(ws, kind) // words and kind come from marks already set
		}
	}
	return out
}

// note says where the marks are kept, for the view.
func (am *auditMarks) note() string {
	switch {
	case am.err != nil:
		return fmt.Sprintf("The marks file cannot be read, so the audit runs without marks and none can be changed here: %v. Fix the file or remove it.", am.err)
	case am.file == "":
		return "The model is not saved yet: your marks are kept until you save it (File › Save model), then in a marks file beside it."
	}
	return "Your marks are kept in " + filepath.Base(am.file) + ", beside the model, which the command line and the report read too."
}

// writeMarks writes marks to path: atomically (the State's writer), and
// never onto a file the window reads (the save guard, notAnInput).
func (st *State) writeMarks(path string, mk *audit.Marks) error {
	if err := st.notAnInput(path); err != nil {
		return err
	}
	return st.writeFile(path, func(w io.Writer) error {
		_, err := mk.WriteTo(w)
		return err
	})
}

// marksForRun is a copy of the marks for an audit run (nil when the marks
// file cannot be read: the audit then runs without marks).
func (v *auditView) marksForRun() *audit.Marks {
	if v.marks == nil || v.marks.err != nil {
		return nil
	}
	return copyMarks(v.marks.marks)
}

// setMark gives the cue with words the mark kind (audit.MarkArtifact,
// audit.MarkTask, or "" to remove it), writes the marks file beside the
// model, and runs the audit again so every list and the story honour it.
// When the file cannot be written the mark is taken back.
func (v *auditView) setMark(words []string, kind string) error {
	am := v.marks
	if am == nil || am.err != nil {
		return errors.New("the marks cannot change: the marks file cannot be read")
	}
	before := am.marks.Get(words)
	if before == kind {
		return nil
	}
	if err := am.marks.Set(words, kind); err != nil {
		return err
	}
	if am.file != "" {
		if err := v.st.writeMarks(am.file, am.marks); err != nil {
			_ = am.marks.Set(words, before) // the words were just set: they are valid
			return fmt.Errorf("could not write the marks file %s (it is unchanged): %w", am.file, err)
		}
	}
	v.st.runAudit(nil)
	return nil
}

// modelSaved keeps the marks beside a model just saved to path: they are
// written there when there are any, and later marks go there.
func (v *auditView) modelSaved(path string) error {
	am := v.marks
	if am == nil || am.err != nil {
		return nil
	}
	file := audit.MarksPath(path)
	if am.marks.Len() > 0 {
		if err := v.st.writeMarks(file, am.marks); err != nil {
			return fmt.Errorf("the model is saved, but its marks could not be written beside it to %s: %w", file, err)
		}
		v.st.wroteBeside = append(v.st.wroteBeside, file)
	}
	am.file = file
	v.showMarks()
	return nil
}

package gui

import (
	"bytes"
	"encoding/csv"
	"errors"
	"io"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/atomicfile"
	"telltale/internal/testref"
)

// saveState is a State with its views on a window (nothing opened), the
// Corpus view on screen with a small table to export, and a folder chooser
// that always answers dir.
func saveState(t *testing.T, dir string) (*State, *sheet) {
	t.Helper()
	a := test.NewTempApp(t)
	st := newState(a, Options{}, func(f func()) { f() })
	st.win = a.NewWindow("save")
	st.win.SetContent(st.build())
	st.win.Resize(fyne.NewSize(1024, 700))
	tbl := st.corpusView.dups
	tbl.setRows([][]string{{"exact", "2", "no", "no", "refunds", "my refund"}, {"near", "2", "yes", "yes", "lost, property", "a bag"}})
	st.pickFolder = func(start string, done func(string)) { done(dir) }
	return st, tbl
}

// shownSave returns the save dialog that the last call put on screen.
// saveCSVAs opens File › Export table as CSV on st, types name in the
// dialog's folder and submits it, counting writes instead of making them;
// it returns whether the dialog asked to replace a file and the writes.
func saveCSVAs(t *testing.T, st *State, name string) (asked bool, written int) {
	t.Helper()
	st.writeFile = func(string, func(io.Writer) error) error { written++; return nil }
	st.exportCSVDialog()
	sf := shownSave(t, st)
	sf.choose()
	sf.name.SetText(name)
	sf.form.Submit()
	return sf.confirm != nil, written
}

func shownSave(t *testing.T, st *State) *saveForm {
	t.Helper()
	sf := st.lastSave
	if sf == nil {
		t.Fatal("no save dialog was shown")
	}
	st.lastSave = nil
	return sf
}

// dirNames lists the entries of dir.
func dirNames(t *testing.T, dir string) []string {
	t.Helper()
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var ns []string
	for _, e := range es {
		ns = append(ns, e.Name())
	}
	return ns
}

// oldExport is a save state whose folder already holds telltale-corpus.csv,
// the name the Corpus view suggests, with keepsOld checking that the file
// still holds its old bytes, and a writer that writes the content and then
// fails (as a full disk would), counting its calls.
func oldExport(t *testing.T) (st *State, tbl *sheet, dir, path string, keepsOld func(when string), calls *int) {
	t.Helper()
	dir = t.TempDir()
	st, tbl = saveState(t, dir)
	path = filepath.Join(dir, "telltale-corpus.csv")
	old := []byte("the old export\nwith two lines\n")
	if err := os.WriteFile(path, old, 0o644); err != nil {
		t.Fatal(err)
	}
	keepsOld = func(when string) {
		t.Helper()
		if b, err := os.ReadFile(path); err != nil || !bytes.Equal(b, old) {
			t.Fatalf("%s: the existing file holds %q (err %v), want the old %q", when, b, err, old)
		}
	}
	calls = new(int)
	st.writeFile = func(p string, write func(io.Writer) error) error {
		*calls++
		return atomicfile.Write(p, func(w io.Writer) error {
			if err := write(w); err != nil {
				return err
			}
			return errors.New("disk full") // the content went out, then the device failed
		})
	}
	return st, tbl, dir, path, keepsOld, calls
}

// Saving over an existing file asks first; the file keeps its bytes while
// the dialog is open, while asking, and when the user declines.
func TestSaveAsksBeforeReplacing(t *testing.T) {
	testref.SequentialSkipInRace(t, "the save dialog (no task, the UI run in place)")
	st, _, dir, _, keepsOld, calls := oldExport(t)
	// The dialog suggests the view's name and the chosen folder.
	st.exportCSVDialog()
	sf := shownSave(t, st)
	if sf.name.Text != "telltale-corpus.csv" {
		t.Errorf("suggested name %q, want telltale-corpus.csv", sf.name.Text)
	}
	sf.choose()
	if sf.folder() != dir {
		t.Errorf("folder %q after choosing %q", sf.folder(), dir)
	}
	keepsOld("with the save dialog open")
	sf.form.Submit()
	if sf.confirm == nil {
		t.Fatal("saving over an existing file did not ask before replacing it")
	}
	keepsOld("while asking to replace")
	sf.confirm.Hide() // "No"
	if *calls != 0 {
		t.Errorf("declining the replacement still wrote the file (%d writes)", *calls)
	}
	keepsOld("after declining")
}

// A confirmed save whose writer fails after writing the content leaves the
// old bytes as they were, no temporary file, and says so.
func TestSaveFailedWriteKeepsTheOldFile(t *testing.T) {
	testref.SequentialSkipInRace(t, "the save dialog (no task, the UI run in place)")
	st, _, dir, path, keepsOld, calls := oldExport(t)
	st.exportCSVDialog()
	sf := shownSave(t, st)
	sf.choose()
	sf.form.Submit()
	if sf.confirm == nil {
		t.Fatal("the save did not ask before replacing")
	}
	sf.confirm.Confirm()
	if *calls != 1 {
		t.Fatalf("confirmed save wrote %d times, want once", *calls)
	}
	keepsOld("after a failed write")
	if ns := dirNames(t, dir); !reflect.DeepEqual(ns, []string{"telltale-corpus.csv"}) {
		t.Errorf("folder holds %v after a failed write, want only the old file", ns)
	}
	if s := st.statusText(); !strings.Contains(s, "disk full") || !strings.Contains(s, path) {
		t.Errorf("status %q does not report the failed write of %s", s, path)
	}
}

// A working writer replaces the file with the table, a new name is written
// without a question, and a name with a folder part is refused.
func TestSaveWritesTheTable(t *testing.T) {
	testref.SequentialSkipInRace(t, "the save dialog (no task, the UI run in place)")
	st, tbl, dir, path, _, _ := oldExport(t)
	// encoding/csv (Go's standard library, RFC 4180) reads back the
	// header and rows.
	st.writeFile = atomicfile.Write
	st.exportCSVDialog()
	sf := shownSave(t, st)
	sf.choose()
	sf.form.Submit()
	sf.confirm.Confirm()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatalf("the saved file is not CSV: %v\n%s", err, b)
	}
	if want := append([][]string{tbl.cols}, tbl.rows...); !reflect.DeepEqual(recs, want) {
		t.Errorf("saved records %q, want %q", recs, want)
	}
	if s := st.statusText(); s != "Wrote "+path {
		t.Errorf("status %q after saving", s)
	}
	// A new name is written without a question.
	st.exportCSVDialog()
	sf = shownSave(t, st)
	sf.name.SetText("fresh.csv")
	sf.form.Submit()
	if sf.confirm != nil {
		t.Error("asked to replace a file that did not exist")
	}
	if _, err := os.Stat(filepath.Join(dir, "fresh.csv")); err != nil {
		t.Errorf("new file not written: %v", err)
	}

	// A name with a folder part cannot be submitted.
	st.exportCSVDialog()
	sf = shownSave(t, st)
	sf.name.SetText("../escape.csv")
	sf.form.Submit()
	if _, err := os.Stat(filepath.Join(filepath.Dir(dir), "escape.csv")); err == nil {
		t.Error("a name with a folder part was written outside the chosen folder")
	}
}

// The model is saved through the same dialog: it replaces an existing file
// only after confirmation, and the file loads back as the same model.
func TestSaveModelReplaces(t *testing.T) {
	dir := t.TempDir()
	st, _ := saveState(t, dir)
	vocab := []string{corpus.PADWord, corpus.UNKWord, "ferry", "ticket", "refund", "late", "cabin", "deck", "bag", "lost", "port", "crew"}
	m, err := cnn.New(cnn.Config{VocabSize: len(vocab), Dim: 4, Widths: []int{2, 3}, Filters: 3, Classes: 2}, vocab, []string{"a", "b"}, 7)
	if err != nil {
		t.Fatal(err)
	}
	ms := &modelState{Model: m}
	st.model.Set(ms)
	path := filepath.Join(dir, "telltale-model.tt")
	if err := os.WriteFile(path, []byte("an older model"), 0o644); err != nil {
		t.Fatal(err)
	}
	st.saveModelDialog()
	sf := shownSave(t, st)
	if sf.name.Text != "telltale-model.tt" {
		t.Errorf("suggested name %q", sf.name.Text)
	}
	sf.choose()
	sf.form.Submit()
	if sf.confirm == nil {
		t.Fatal("saving the model over a file did not ask first")
	}
	if b, _ := os.ReadFile(path); string(b) != "an older model" {
		t.Fatalf("the old file changed before confirmation: %q", b)
	}
	sf.confirm.Confirm()
	got, err := cnn.Load(path)
	if err != nil {
		t.Fatalf("saved model does not load: %v", err)
	}
	if !reflect.DeepEqual(got.Convs, m.Convs) || !reflect.DeepEqual(got.Emb, m.Emb) || !reflect.DeepEqual(got.Labels, m.Labels) {
		t.Error("the loaded model differs from the saved one")
	}
	if ms.Path != path {
		t.Errorf("model path %q after saving to %q", ms.Path, path)
	}
}

func TestValidFileName(t *testing.T) {
	for _, c := range []struct {
		name string
		ok   bool
	}{
		{"model.tt", true},
		{" spaced name.csv ", true},
		{"", false},
		{"   ", false},
		{".", false},
		{"..", false},
		{"sub/model.tt", false},
		{`sub\model.tt`, false},
		{"/abs.tt", false},
	} {
		if err := validFileName(c.name); (err == nil) != c.ok {
			t.Errorf("validFileName(%q) = %v, want ok %v", c.name, err, c.ok)
		}
	}
}

// No save dialog writes onto a file the window reads from (the data, the
// test file, the model): the same file is refused under any of its names —
// the path itself, one through "..", a symbolic link, a hard link — and
// keeps its bytes.
func TestSaveRefusesTheWindowsInputs(t *testing.T) {
	testref.SequentialSkipInRace(t, "the save dialog's check of the window's inputs (no task, the UI run in place)")
	dir := t.TempDir()
	inputs := map[string]string{"data": "data.csv", "test": "test.csv", "model": "model.tt"}
	for _, name := range inputs {
		if err := os.WriteFile(filepath.Join(dir, name), []byte("input "+name), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	other := t.TempDir()
	sub := filepath.Join(dir, "sub")
	if err := os.Mkdir(sub, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, input := range []string{"data.csv", "test.csv", "model.tt"} {
		src := filepath.Join(dir, input)
		if err := os.Symlink(src, filepath.Join(other, "link-"+input)); err != nil {
			t.Fatal(err)
		}
		if err := os.Link(src, filepath.Join(other, "hard-"+input)); err != nil {
			t.Fatal(err)
		}
	}
	for _, c := range []struct{ folder, name, input string }{
		{dir, "data.csv", "data.csv"},
		{dir, "test.csv", "test.csv"},
		{dir, "model.tt", "model.tt"},
		{sub + "/..", "data.csv", "data.csv"},
		{other, "link-data.csv", "data.csv"},
		{other, "link-model.tt", "model.tt"},
		{other, "hard-test.csv", "test.csv"},
		{other, "hard-model.tt", "model.tt"},
	} {
		t.Run(c.name+" in "+filepath.Base(c.folder), func(t *testing.T) {
			st, _ := saveState(t, c.folder)
			st.opts.DataPath = filepath.Join(dir, inputs["data"])
			st.opts.TestPath = filepath.Join(dir, inputs["test"])
			st.opts.ModelPath = filepath.Join(dir, inputs["model"])
			if asked, written := saveCSVAs(t, st, c.name); asked || written != 0 {
				t.Errorf("saving as %s offered to replace it or wrote it (%d writes)", filepath.Join(c.folder, c.name), written)
			}
			if s := st.statusText(); !strings.Contains(s, "which this window reads from") {
				t.Errorf("status %q does not say the file is an input", s)
			}
			if b, _ := os.ReadFile(filepath.Join(dir, c.input)); string(b) != "input "+c.input {
				t.Errorf("the input %s now holds %q", c.input, b)
			}
		})
	}
	// A new file beside the inputs is written.
	st, _ := saveState(t, dir)
	st.opts.DataPath = filepath.Join(dir, inputs["data"])
	st.exportCSVDialog()
	sf := shownSave(t, st)
	sf.choose()
	sf.name.SetText("export.csv")
	sf.form.Submit()
	if _, err := os.Stat(filepath.Join(dir, "export.csv")); err != nil {
		t.Errorf("a new file beside the inputs was not written: %v", err)
	}
}

// A model trained in the window and saved may be saved again to the same
// file (it is no input); the file a model was opened from may not.
func TestSaveModelAgain(t *testing.T) {
	dir := t.TempDir()
	st, _ := saveState(t, dir)
	vocab := []string{corpus.PADWord, corpus.UNKWord, "ferry", "ticket", "refund", "late"}
	m, err := cnn.New(cnn.Config{VocabSize: len(vocab), Dim: 4, Widths: []int{2}, Filters: 2, Classes: 2}, vocab, []string{"a", "b"}, 3)
	if err != nil {
		t.Fatal(err)
	}
	ms := &modelState{Model: m}
	st.model.Set(ms)
	save := func() *saveForm {
		st.saveModelDialog()
		sf := shownSave(t, st)
		sf.choose()
		sf.form.Submit()
		return sf
	}
	save()
	path := filepath.Join(dir, "telltale-model.tt")
	if ms.Path != path {
		t.Fatalf("the model was not saved to %s", path)
	}
	if sf := save(); sf.confirm == nil {
		t.Fatalf("saving the trained model again did not offer to replace its file (status %q)", st.statusText())
	}
	ms.Source = path // as if opened from that file
	if sf := save(); sf.confirm != nil || !strings.Contains(st.statusText(), "the open model's file") {
		t.Errorf("saving onto the file the model was opened from was not refused (status %q)", st.statusText())
	}
}

// A save onto the dev or test file the open model recorded at training is
// refused, as the command line refuses it (guard.go's recordedSplits):
// the window reads them again to evaluate the model.
func TestSaveRefusedOnRecordedSplits(t *testing.T) {
	dir := t.TempDir()
	st, _ := saveState(t, dir)
	vocab := []string{corpus.PADWord, corpus.UNKWord, "ferry", "ticket"}
	m, err := cnn.New(cnn.Config{VocabSize: len(vocab), Dim: 4, Widths: []int{2}, Filters: 2, Classes: 2}, vocab, []string{"a", "b"}, 7)
	if err != nil {
		t.Fatal(err)
	}
	dev, test, other := filepath.Join(dir, "dev.csv"), filepath.Join(dir, "test.csv"), filepath.Join(dir, "other.csv")
	for _, p := range []string{dev, test, other} {
		if err := os.WriteFile(p, []byte("text,label\nferry,a\n"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	m.Info.Splits = &cnn.SplitRecord{DevFile: dev, TestFile: test}
	st.model.Set(&modelState{Model: m})
	for _, p := range []string{dev, test, filepath.Join(dir, ".", "test.csv")} {
		err := st.notAnInput(p)
		if err == nil || !strings.Contains(err.Error(), "the open model recorded at training") {
			t.Errorf("saving onto %s: %v, want it refused as a file the model recorded", p, err)
		}
	}
	if err := st.notAnInput(other); err != nil {
		t.Errorf("saving onto %s, no input: %v", other, err)
	}
}

// Return in the save dialog's file name saves, as the Save button does;
// with a name the dialog refuses, Return writes nothing either.
func TestReturnInTheNameSaves(t *testing.T) {
	testref.SequentialSkipInRace(t, "the save dialog (no task, the UI run in place)")
	dir := t.TempDir()
	st, _ := saveState(t, dir)
	st.exportCSVDialog()
	sf := shownSave(t, st)
	sf.choose()
	sf.name.SetText("../escape.csv")
	sf.name.TypedKey(&fyne.KeyEvent{Name: fyne.KeyReturn})
	if _, err := os.Stat(filepath.Join(filepath.Dir(dir), "escape.csv")); err == nil {
		t.Error("Return saved a name with a folder part outside the chosen folder")
	}
	sf.name.SetText("returned.csv")
	sf.name.TypedKey(&fyne.KeyEvent{Name: fyne.KeyReturn})
	path := filepath.Join(dir, "returned.csv")
	if _, err := os.Stat(path); err != nil {
		t.Fatalf("Return in the file name did not save: %v", err)
	}
	if s := st.statusText(); s != "Wrote "+path {
		t.Errorf("status %q after Return", s)
	}
}

// The open dialogs start in the folder of the open file they are about:
// Open data in the data file's, Open model in the model file's, each in the
// other's when theirs is not open or its folder is gone, else in the
// working folder.
func TestOpenDialogsStartBesideTheOpenFiles(t *testing.T) {
	a := test.NewTempApp(t)
	st := newState(a, Options{}, func(f func()) { f() })
	wd, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	check := func(when, wantData, wantModel string) {
		t.Helper()
		if got := st.startFolder(true); got != wantData {
			t.Errorf("%s: Open data starts in %q, want %q", when, got, wantData)
		}
		if got := st.startFolder(false); got != wantModel {
			t.Errorf("%s: Open model starts in %q, want %q", when, got, wantModel)
		}
	}
	check("nothing open", wd, wd)
	dataDir, modelDir := t.TempDir(), t.TempDir()
	st.data.Set(&corpusState{Path: filepath.Join(dataDir, "reviews.csv")})
	check("data open", dataDir, dataDir)
	st.model.Set(&modelState{Path: filepath.Join(modelDir, "m.tt")})
	check("data and model open", dataDir, modelDir)
	if err := os.Remove(dataDir); err != nil {
		t.Fatal(err)
	}
	check("the data's folder gone", modelDir, modelDir)
}

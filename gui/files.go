package gui

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"
	"fyne.io/fyne/v2/widget"

	"telltale/internal/atomicfile"
	"telltale/internal/inputfile"
)

// openDataDialog asks for a labeled file and opens it.
func (st *State) openDataDialog() {
	d := dialog.NewFileOpen(func(r fyne.URIReadCloser, err error) {
		if err != nil {
			st.showErrorf(err, "could not open the file dialog")
			return
		}
		if r == nil {
			return
		}
		path := r.URI().Path()
		_ = r.Close()
		st.openData(dataSource{path: path}, nil)
	}, st.win)
	d.SetFilter(notPipes{storage.NewExtensionFileFilter([]string{".csv", ".tsv", ".tab", ".jsonl", ".ndjson"})})
	setStart(d, st.startFolder(true))
	d.Show()
}

// startFolder is the folder an open dialog starts in: the open data file's
// folder, then the open model file's (the model's first when dataFirst is
// false), else the working folder; "" when none can be found.
func (st *State) startFolder(dataFirst bool) string {
	var data, model string
	if cs := itemGet(st.data); cs != nil {
		data = cs.Path
		if data == "" {
			data = cs.demoAbs // the demo corpus, where the repository holds it
		}
	}
	if ms := itemGet(st.model); ms != nil {
		model = ms.Path
		if model == "" {
			model = ms.Source
		}
	}
	order := []string{data, model}
	if !dataFirst {
		order = []string{model, data}
	}
	for _, f := range order {
		if f == "" {
			continue
		}
		if dir := filepath.Dir(absPath(f)); isDir(dir) {
			return dir
		}
	}
	if wd, err := os.Getwd(); err == nil {
		return wd
	}
	return ""
}

// isDir reports whether path names a folder.
func isDir(path string) bool {
	info, err := os.Stat(path)
	return err == nil && info.IsDir()
}

// setStart makes the file dialog d start in folder dir ("" or a folder
// that cannot be listed: where the toolkit starts).
func setStart(d *dialog.FileDialog, dir string) {
	if dir == "" {
		return
	}
	if l, err := storage.ListerForURI(storage.NewFileURI(dir)); err == nil {
		d.SetLocation(l)
	}
}

// notPipes lists in a file dialog the files its inner filter (nil: every
// file) matches, less named pipes. The toolkit's dialog opens the chosen
// file itself, on the UI goroutine, and the window then reads it again:
// a pipe would freeze the window until a writer came, then need a second
// one. A pipe is given with --data or --test instead, which read it once
// (README, "Input formats").
type notPipes struct{ inner storage.FileFilter }

// Matches reports whether u is not a named pipe and the inner filter
// matches it.
func (f notPipes) Matches(u fyne.URI) bool {
	if u.Scheme() == "file" && inputfile.IsPipe(u.Path()) {
		return false
	}
	return f.inner == nil || f.inner.Matches(u)
}

// showFileOpen shows the toolkit's file dialog without named pipes
// (notPipes), started in the open model's folder (startFolder), and calls
// done as dialog.ShowFileOpen does.
func (st *State) showFileOpen(done func(fyne.URIReadCloser, error)) {
	d := dialog.NewFileOpen(done, st.win)
	d.SetFilter(notPipes{})
	setStart(d, st.startFolder(false))
	d.Show()
}

// openModelDialog asks for a model file and opens it.
func (st *State) openModelDialog() {
	st.showFileOpen(func(r fyne.URIReadCloser, err error) {
		if err != nil {
			st.showErrorf(err, "could not open the file dialog")
			return
		}
		if r == nil {
			return
		}
		path := r.URI().Path()
		_ = r.Close()
		if isStateDict(path) {
			st.importDialog(path)
			return
		}
		st.openModel(path, nil)
	})
}

// saveModelDialog asks where to save the open model.
func (st *State) saveModelDialog() {
	ms := itemGet(st.model)
	if ms == nil {
		st.showError(errors.New("there is no model to save yet: train one in the Training view or open one with File › Open model"))
		return
	}
	st.saveDialog("Save model", "telltale-model.tt", func(path string) error { return st.saveModel(ms, path) })
}

// saveForm is a save dialog on screen.
type saveForm struct {
	form    *dialog.FormDialog
	name    *widget.Entry
	folder  func() string         // the chosen folder
	choose  func()                // asks for another folder
	confirm *dialog.ConfirmDialog // the overwrite question, once asked
}

// saveDialog asks for a folder and a file name (suggested: name) and calls
// write with the joined path; an existing file is replaced only after the
// user confirms. Nothing here opens the destination: write must replace it
// atomically (temporary file and rename), so a failed save leaves the old
// file as it was.
func (st *State) saveDialog(title, name string, write func(path string) error) {
	dir := st.saveDir
	if dir == "" {
		if d, err := os.Getwd(); err == nil {
			dir = d
		}
	}
	folder := widget.NewLabel(dir)
	folder.Truncation = fyne.TextTruncateEllipsis
	entry := widget.NewEntry()
	entry.SetText(name)
	entry.Validator = validFileName
	sf := &saveForm{name: entry, folder: func() string { return dir }}
	// Return in the name saves, as the Save button does (nothing while the
	// name is not valid: the button is disabled then).
	entry.OnSubmitted = func(string) { sf.form.Submit() }
	sf.choose = func() {
		st.pickFolder(dir, func(d string) {
			dir = d
			folder.SetText(d)
		})
	}
	change := widget.NewButton("Choose…", sf.choose)
	items := []*widget.FormItem{
		widget.NewFormItem("Folder", container.NewBorder(nil, nil, nil, change, folder)),
		widget.NewFormItem("File name", entry),
	}
	sf.form = dialog.NewForm(title, "Save", "Cancel", items, func(ok bool) {
		if !ok {
			return
		}
		path := filepath.Join(dir, strings.TrimSpace(entry.Text))
		st.saveDir = dir
		if err := st.notAnInput(path); err != nil {
			st.showError(err)
			return
		}
		// A pipe, a device or a process's descriptor is refused before
		// anything is asked, as writeFile (atomicfile.Write) would refuse it
		// after "Replace it?".
		if _, err := atomicfile.Resolve(path); err != nil {
			st.showErrorf(err, "could not write %s (any file that was there is unchanged)", path)
			return
		}
		info, err := os.Stat(path)
		switch {
		case err == nil && info.IsDir():
			st.showError(fmt.Errorf("%s is a folder: choose another file name", path))
		case err == nil:
			sf.confirm = dialog.NewConfirm("Replace the file?",
				fmt.Sprintf("%s already exists. Replace it?", path), func(yes bool) {
					if yes {
						st.commitSave(path, write)
					}
				}, st.win)
			sf.confirm.SetConfirmText("Replace")
			sf.confirm.Show()
		case errors.Is(err, fs.ErrNotExist):
			st.commitSave(path, write)
		default:
			st.showErrorf(err, "could not check %s", path)
		}
	}, st.win)
	sf.form.Resize(fyne.NewSize(560, sf.form.MinSize().Height))
	st.lastSave = sf
	sf.form.Show()
}

// commitSave runs write for path and reports the outcome.
func (st *State) commitSave(path string, write func(path string) error) {
	st.wroteBeside = nil
	err := write(path)
	beside := st.wroteBeside
	st.wroteBeside = nil
	if err != nil {
		st.showErrorf(err, "could not write %s (any file that was there is unchanged)", path)
		return
	}
	s := "Wrote " + path
	for _, f := range beside {
		s += " and " + filepath.Base(f) + " beside it"
	}
	st.setStatus(s)
}

// validFileName accepts a bare file name: not empty, no folder part.
func validFileName(s string) error {
	s = strings.TrimSpace(s)
	switch {
	case s == "":
		return errors.New("type a file name")
	case s == "." || s == "..":
		return errors.New("type a file name, not a folder")
	case strings.ContainsAny(s, `/\`) || strings.ContainsRune(s, filepath.Separator):
		return errors.New("a file name only: choose the folder above")
	}
	return nil
}

// pickFolderDialog asks for a folder, starting at start, and hands it to
// done; nothing happens when the user cancels.
func (st *State) pickFolderDialog(start string, done func(dir string)) {
	d := dialog.NewFolderOpen(func(u fyne.ListableURI, err error) {
		if err != nil {
			st.showErrorf(err, "could not open the folder dialog")
			return
		}
		if u == nil {
			return
		}
		done(u.Path())
	}, st.win)
	setStart(d, start)
	d.Show()
}

// exportCSVDialog writes the shown view's main table as CSV.
func (st *State) exportCSVDialog() {
	title, v := st.shownTitle(), st.shownView()
	if v == nil {
		return
	}
	tbl := v.exportTable()
	if tbl == nil || len(tbl.rows) == 0 {
		st.showError(fmt.Errorf("the %s view has no table to export yet", title))
		return
	}
	st.saveDialog("Export table as CSV", fileStem(title)+".csv", func(path string) error {
		return st.writeFile(path, tbl.writeCSV)
	})
}

// exportJSONDialog writes the shown view's data as JSON.
func (st *State) exportJSONDialog() {
	title, view := st.shownTitle(), st.shownView()
	var v any
	if view != nil {
		v = view.exportData()
	}
	if v == nil {
		st.showError(fmt.Errorf("the %s view has no data to export yet", title))
		return
	}
	st.saveDialog("Export view data as JSON", fileStem(title)+".json", func(path string) error {
		return st.writeFile(path, func(w io.Writer) error {
			enc := json.NewEncoder(w)
			enc.SetIndent("", "  ")
			return enc.Encode(v)
		})
	})
}

func fileStem(title string) string {
	b := []byte{}
	for _, r := range title {
		switch {
		case r >= 'a' && r <= 'z', r >= '0' && r <= '9':
			b = append(b, byte(r))
		case r >= 'A' && r <= 'Z':
			b = append(b, byte(r-'A'+'a'))
		default:
			if len(b) > 0 && b[len(b)-1] != '-' {
				b = append(b, '-')
			}
		}
	}
	return "telltale-" + string(b)
}

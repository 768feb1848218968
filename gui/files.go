package gui

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"

	"telltale/internal/atomicfile"
)

// exporter gives a view's main table (for CSV) and its data (for JSON).
type exporter struct {
	table func() *sheet
	data  func() any
}

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
	d.SetFilter(storage.NewExtensionFileFilter([]string{".csv", ".tsv", ".tab", ".jsonl", ".ndjson"}))
	d.Show()
}

// openModelDialog asks for a model file and opens it.
func (st *State) openModelDialog() {
	dialog.ShowFileOpen(func(r fyne.URIReadCloser, err error) {
		if err != nil {
			st.showErrorf(err, "could not open the file dialog")
			return
		}
		if r == nil {
			return
		}
		path := r.URI().Path()
		_ = r.Close()
		st.openModel(path, nil)
	}, st.win)
}

// saveModelDialog asks where to save the open model.
func (st *State) saveModelDialog() {
	ms := itemGet(st.model)
	if ms == nil {
		st.showError(errors.New("there is no model to save yet: train one in the Training view or open one with File › Open model"))
		return
	}
	st.saveDialog("telltale-model.tt", func(path string) error { return st.saveModel(ms, path) })
}

// saveDialog asks for a file name and calls write with its path. The
// dialog's own writer is closed unused: write replaces the file atomically.
func (st *State) saveDialog(name string, write func(path string) error) {
	d := dialog.NewFileSave(func(w fyne.URIWriteCloser, err error) {
		if err != nil {
			st.showErrorf(err, "could not open the file dialog")
			return
		}
		if w == nil {
			return
		}
		path := w.URI().Path()
		_ = w.Close()
		if err := write(path); err != nil {
			st.showErrorf(err, "could not write %s", path)
			return
		}
		_ = st.status.Set("Wrote " + path)
	}, st.win)
	d.SetFileName(name)
	d.Show()
}

// exportCSVDialog writes the shown view's main table as CSV.
func (st *State) exportCSVDialog() {
	title := st.selectedView()
	ex, ok := st.exports[title]
	if !ok || ex.table == nil || ex.table() == nil || len(ex.table().rows) == 0 {
		st.showError(fmt.Errorf("the %s view has no table to export yet", title))
		return
	}
	st.saveDialog(fileStem(title)+".csv", func(path string) error {
		return atomicfile.Write(path, ex.table().writeCSV)
	})
}

// exportJSONDialog writes the shown view's data as JSON.
func (st *State) exportJSONDialog() {
	title := st.selectedView()
	ex, ok := st.exports[title]
	var v any
	if ok && ex.data != nil {
		v = ex.data()
	}
	if v == nil {
		st.showError(fmt.Errorf("the %s view has no data to export yet", title))
		return
	}
	st.saveDialog(fileStem(title)+".json", func(path string) error {
		return atomicfile.Write(path, func(w io.Writer) error {
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

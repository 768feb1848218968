package gui

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/torchmodel"
)

// stateDictExts are the extensions File › Open model reads as a PyTorch
// state_dict (or the .npz that telltale export writes) to import.
var stateDictExts = []string{".pt", ".pth", ".bin", ".ckpt", ".npz"}

// isStateDict reports whether path names a file to import rather than a
// telltale model file.
func isStateDict(path string) bool {
	ext := strings.ToLower(filepath.Ext(path))
	for _, e := range stateDictExts {
		if ext == e {
			return true
		}
	}
	return false
}

// importForm is the dialog that asks what an imported state_dict needs
// beside its weights: the vocabulary, the labels, the tokenizer's casing.
type importForm struct {
	stateDict string
	vocab     *widget.Entry
	labels    *widget.Entry
	lower     *widget.Check
}

// importDialog asks for the vocabulary and the labels of the sentence CNN
// in the state_dict at path, then imports it in memory as the open model
// (nothing is written; File › Save model saves it). The layout and the
// padding and unknown tokens are detected as `telltale import` detects
// them; its other options (a tokenizer file, named layouts, a check of the
// logits) are on the command line.
func (st *State) importDialog(path string) {
	f := newImportForm(path)
	choose := widget.NewButton("Choose…", func() { st.pickFile(f.vocab.SetText) })
	items := []*widget.FormItem{
		widget.NewFormItem("Weights", widget.NewLabel(filepath.Base(path))),
		widget.NewFormItem("Vocabulary", container.NewBorder(nil, nil, nil, choose, f.vocab)),
		widget.NewFormItem("Labels", f.labels),
		widget.NewFormItem("Tokenizer", f.lower),
	}
	d := dialog.NewForm("Import a PyTorch model", "Import", "Cancel", items, func(ok bool) {
		if ok {
			st.importModel(f)
		}
	}, st.win)
	d.Resize(fyne.NewSize(560, 0))
	d.Show()
}

// newImportForm is the form for the state_dict at path, filled in from the
// vocab.txt and labels.txt beside it when there are (as telltale export
// writes them).
func newImportForm(path string) *importForm {
	f := &importForm{stateDict: path, vocab: widget.NewEntry(), labels: widget.NewEntry(), lower: widget.NewCheck("texts were lower-cased", nil)}
	dir := filepath.Dir(path)
	if p := filepath.Join(dir, "vocab.txt"); fileExists(p) {
		f.vocab.SetText(p)
	}
	if p := filepath.Join(dir, "labels.txt"); fileExists(p) {
		if labels, err := torchmodel.ReadLabels(p); err == nil {
			f.labels.SetText(strings.Join(labels, ", "))
		}
	}
	f.vocab.SetPlaceHolder("one token per line, id = line number")
	f.labels.SetPlaceHolder("the class names in output order, separated by commas")
	f.lower.SetChecked(true)
	return f
}

// options are the import's options, checked.
func (f *importForm) options() (torchmodel.Options, error) {
	var labels []string
	for _, l := range strings.Split(f.labels.Text, ",") {
		if l = strings.TrimSpace(l); l != "" {
			labels = append(labels, l)
		}
	}
	vocab := strings.TrimSpace(f.vocab.Text)
	switch {
	case vocab == "":
		return torchmodel.Options{}, errors.New("the import needs the vocabulary file: one token per line, in the order of the embedding's rows")
	case len(labels) < 2:
		return torchmodel.Options{}, errors.New("the import needs the labels: at least two class names, in the order of the model's outputs, separated by commas")
	}
	return torchmodel.Options{StateDict: f.stateDict, Vocab: vocab, PadID: -1, UnkID: -1, Labels: labels,
		Tokenizer: corpus.TokenizerConfig{Lower: f.lower.Checked}}, nil
}

// importModel imports the form's model in the background and opens it.
func (st *State) importModel(f *importForm) {
	o, err := f.options()
	if err != nil {
		st.showError(err)
		return
	}
	st.setStatus("Importing " + f.stateDict + "…")
	var warnings []string
	load := func(ctx context.Context) (*cnn.Model, error) {
		res, err := torchmodel.Import(ctx, o)
		if err != nil {
			return nil, err
		}
		warnings = res.Warnings
		return res.Model, nil
	}
	st.loadModel(f.stateDict, "", load, func() {
		if ms := itemGet(st.model); ms != nil && ms.Source == f.stateDict {
			ms.SideFiles = []string{o.Vocab}
		}
		if len(warnings) > 0 {
			dialog.ShowInformation("Imported, with warnings", strings.Join(warnings, "\n"), st.win)
		}
	})
}

// pickFile asks for a file and gives its path to done.
func (st *State) pickFile(done func(path string)) {
	st.showFileOpen(func(r fyne.URIReadCloser, err error) {
		if err != nil {
			st.showError(fmt.Errorf("could not open the file dialog: %w", err))
			return
		}
		if r == nil {
			return
		}
		path := r.URI().Path()
		_ = r.Close()
		done(path)
	})
}

// fileExists reports whether path names a regular file.
func fileExists(path string) bool {
	info, err := os.Stat(path)
	return err == nil && info.Mode().IsRegular()
}

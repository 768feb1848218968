package gui

import (
	"os"
	"path/filepath"
	"slices"
	"testing"

	"fyne.io/fyne/v2"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/torchmodel"
)

// File › Open model on a state_dict imports it: a model exported by
// telltale export (whose logits torchmodel's tests check against PyTorch)
// comes back as the open model with the same logits, unsaved, and its
// weights and vocabulary files count as inputs no save may write onto.
func TestImportOpensStateDict(t *testing.T) {
	_, st, q := demoWindow(t, fyne.Size{})
	labels := itemGet(st.data).Train.Labels
	vocab := []string{corpus.PADWord, corpus.UNKWord, "ferry", "ticket", "refund", "late", "cabin", "deck", "bag", "lost", "thanks", "crew"}
	m, err := cnn.New(cnn.Config{VocabSize: len(vocab), Dim: 4, Widths: []int{2, 3}, Filters: 3, Classes: len(labels)}, vocab, labels, 7)
	if err != nil {
		t.Fatal(err)
	}
	m.Tokenizer.Lower = true
	dir := t.TempDir()
	if err := torchmodel.Export(m, dir); err != nil {
		t.Fatal(err)
	}
	weights := filepath.Join(dir, "state_dict.npz")
	if !isStateDict(weights) || isStateDict(filepath.Join(dir, "model.tt")) {
		t.Fatal("the .npz is not read as weights to import, or a .tt is")
	}
	f := newImportForm(weights)
	if f.vocab.Text != filepath.Join(dir, "vocab.txt") || f.labels.Text == "" {
		t.Fatalf("the form did not find the vocabulary and labels beside the weights: %q, %q", f.vocab.Text, f.labels.Text)
	}
	st.importModel(f)
	q.waitFor(t, "the imported model", func() bool { ms := itemGet(st.model); return ms != nil && ms.Source == weights })
	ms := itemGet(st.model)
	if ms.Path != "" || !slices.Contains(ms.SideFiles, f.vocab.Text) {
		t.Errorf("imported model: path %q (want none until saved), side files %v", ms.Path, ms.SideFiles)
	}
	for _, text := range []string{"the ferry was late", "lost bag on deck, thanks crew", "refund my ticket"} {
		_, ids := ms.Enc.Encode(text)
		want, got := m.Predict(ids).Logits, ms.Model.Predict(ids).Logits
		for c := range want {
			if d := float64(got[c] - want[c]); d > 1e-6 || d < -1e-6 {
				t.Errorf("%q: imported logits %v, exported model's %v", text, got, want)
				break
			}
		}
	}
	for _, in := range []string{weights, f.vocab.Text} {
		if err := st.notAnInput(in); err == nil {
			t.Errorf("saving onto %s, an input of the import, is not refused", in)
		}
	}
	// A form without labels is refused before any work.
	f.labels.SetText("only-one")
	if _, err := f.options(); err == nil {
		t.Error("an import with one label was accepted")
	}
	if _, err := os.Stat(filepath.Join(dir, "state_dict.npz")); err != nil {
		t.Fatal(err)
	}
}

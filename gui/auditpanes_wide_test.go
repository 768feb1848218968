package gui

import (
	"path/filepath"
	"slices"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"telltale/cnn"
	"telltale/corpus"
)

// TestSaveMaskedWide: for a model trained with the word-weight path on the
// demo corpus (its README plants the footer token "kioskmail" and the
// stamp "tkref"), the action pane's saved mask is the audit's remedy: the
// suggested filters masked, the rows of the mask's words in the word
// weights set to the unknown word's (so their word part is 0) and every
// other weight as it was; the open model is left as it is.
func TestSaveMaskedWide(t *testing.T) {
	if testing.Short() {
		t.Skip("trains a model and audits it; skipped with -short")
	}
	_, st, q := demoWindow(t, fyne.Size{})
	smallRecipe(st)
	_ = st.recipe.wide.Set(true)
	_ = st.recipe.baseline.Set(false) // the audit and the saved mask never read it
	st.trainNow()
	q.waitFor(t, "the trained model and its profiles", func() bool { return itemGet(st.profiles) != nil })
	ms := itemGet(st.model)
	if !ms.Model.Config.Wide {
		t.Fatal("the model has no word weights")
	}
	st.auditNow()
	q.waitFor(t, "the audit", func() bool { return itemGet(st.audit) != nil })
	a := itemGet(st.audit)
	act := a.R.Action
	t.Logf("mask %v, words %q, tried %+v", act.Mask, act.MaskWords, act.Tried)
	if act.Mask == nil || len(act.MaskWords) == 0 {
		t.Fatalf("the audit of the wide demo model suggests no mask with words: %+v", act)
	}
	p := st.auditView.action
	if !p.saveMask.Visible() {
		t.Fatal("the masked-model button is hidden though the audit suggests a mask")
	}
	orig := slices.Clone(ms.Model.Wide)
	dir := t.TempDir()
	st.pickFolder = func(start string, done func(string)) { done(dir) }
	test.Tap(p.saveMask)
	sf := shownSave(t, st)
	sf.choose()
	sf.form.Submit()
	q.drain()
	back, err := cnn.Load(filepath.Join(dir, stem(ms)+"-masked.tt"))
	if err != nil {
		t.Fatal(err)
	}
	for g := range back.Config.NumFilters() {
		if back.IsMasked(g) != slices.Contains(act.Mask, g) {
			t.Fatalf("filter %d: masked %v in the saved copy, want %v", g, back.IsMasked(g), slices.Contains(act.Mask, g))
		}
	}
	if !slices.Equal(ms.Model.Wide, orig) || slices.ContainsFunc(ms.Model.Masked, func(b bool) bool { return b }) {
		t.Fatal("saving the masked copy changed the open model")
	}
	unk := back.WideRow(corpus.UNK)
	for id := range int32(back.Config.VocabSize) {
		row, was := back.WideRow(id), ms.Model.WideRow(id)
		if slices.Contains(act.MaskWords, back.Vocab[id]) {
			if !slices.Equal(row, unk) {
				t.Errorf("word %q: row %v, the unknown word's is %v", back.Vocab[id], row, unk)
			}
		} else if !slices.Equal(row, was) {
			t.Errorf("word %q, not in the mask: row %v, was %v", back.Vocab[id], row, was)
		}
	}
}

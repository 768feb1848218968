package gui

import (
	"context"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"fyne.io/fyne/v2"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
)

// TestWindowReadsUnseenWords: a model with a character layer, opened in
// the window, reads the unseen words of a text as telltale predict does,
// with vectors of their own (cnn.Model.WithUnseen), not as the unknown
// word: in the Why-this-label explanation of a typed text and in the
// Results view's evaluation of the test split (each text's probabilities
// are the forward pass of its own WithUnseen model). The unknown word's
// reading is computed beside them, so the test fails when the window falls
// back to it.
func TestWindowReadsUnseenWords(t *testing.T) {
	_, st, q := demoWindow(t, fyne.Size{})
	cs := itemGet(st.data)
	n := 0
	train := cs.Train.Filter(func(corpus.Example) bool { n++; return n <= 600 })
	r := cnn.DefaultRecipe()
	r.Baseline = nil
	r.Tokenizer.MinCount = 2 // words seen once stay out of the vocabulary
	r.Model.Chars = &cnn.CharConfig{Filters: 6, Width: 2, Dim: cnn.DefaultCharDim, MaxChars: cnn.DefaultMaxChars}
	r.Model.Dim, r.Model.Widths, r.Model.Filters = 16+6, []int{2, 3}, 8
	r.Train.Epochs, r.Train.Threads, r.Train.Patience = 3, 2, -1
	trained, err := cnn.TrainText(context.Background(), train, nil, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	m, known := trained.Model, trained.Encoder
	path := filepath.Join(t.TempDir(), "chars.tt")
	if err := m.Save(path); err != nil {
		t.Fatal(err)
	}
	st.openModel(path, nil)
	q.waitFor(t, "the opened model", func() bool { ms := itemGet(st.model); return ms != nil && ms.Eval != nil })

	// readings are text's probabilities as predict reads it and as the
	// unknown word.
	readings := func(text string) (own, asUnknown []float32) {
		mu, enc, err := m.WithUnseen(nil, []string{text})
		if err != nil {
			t.Fatal(err)
		}
		_, ids := enc.Encode(text)
		_, idsK := known.Encode(text)
		return mu.Forward(ids).Probs, m.Forward(idsK).Probs
	}
	// float32 forward passes of the same rows and filters.
	same := func(a float64, b float32) bool { return testref.Close(a, float64(b), 1e-6, 1e-6) }

	text := "my tikcet was lsot and the ferrry left wihtout me"
	_ = st.explainText.Set(text)
	q.waitFor(t, "the explanation", func() bool { return st.whyView.shown != nil && st.whyView.shown.Text == text })
	e := st.whyView.shown.E
	want, asUnknown := readings(text)
	if slices.Equal(want, asUnknown) {
		t.Fatalf("%q reads alike with its own vectors and as the unknown word: the check cannot fail", text)
	}
	for c := range want {
		if !same(e.Probabilities[c], want[c]) {
			t.Errorf("Why this label: p(%s) = %g, %g as predict reads the text (%g as the unknown word)",
				m.Labels[c], e.Probabilities[c], want[c], asUnknown[c])
		}
	}
	// The token's detail names an unseen word as such, not by its id in
	// the text's own vocabulary.
	for i, tok := range e.Tokens {
		d := tokenDetail(e, i, -1, st.whyView.shown.Known)
		if unseen := known.Vocab.ID(tok.Text) == corpus.UNK; strings.Contains(d, "not in the vocabulary") != unseen {
			t.Errorf("token %q (unseen: %v): %s", tok.Text, unseen, d)
		}
	}

	ev := itemGet(st.model).Eval
	differ := 0
	for i, text := range ev.Texts {
		want, asUnknown := readings(text)
		if !slices.Equal(want, asUnknown) {
			differ++
		}
		for c := range want {
			if !same(float64(ev.Probs[i][c]), want[c]) {
				t.Fatalf("Results, test text %d: p(%s) = %g, %g as predict reads it (%g as the unknown word)",
					i, m.Labels[c], ev.Probs[i][c], want[c], asUnknown[c])
			}
		}
	}
	if differ == 0 {
		t.Errorf("no test text reads differently with its unseen words: the check cannot fail")
	}
	t.Logf("%d of %d test texts read differently with their unseen words", differ, len(ev.Texts))
}

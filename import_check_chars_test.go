package main

import (
	"context"
	"errors"
	"path/filepath"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/torchmodel"
)

// TestImportCheckReadsUnseenWordsAsUnknown: what import's help says of
// --check-texts on a model with a character layer. The check runs the
// model on vocabulary ids only, so a text with a word outside the
// vocabulary agrees with logits computed on the unknown word's id (its
// character part zero) and not with those the other commands compute
// (the word's own character part, cnn.Model.WithUnseen). No outside
// source: both sets of reference logits come from the model itself.
func TestImportCheckReadsUnseenWordsAsUnknown(t *testing.T) {
	all := loadExamples(t, filepath.Join("testdata", "demo", "train.csv"))
	n := 0
	train := all.Filter(func(corpus.Example) bool { n++; return n <= 400 })
	r := cnn.DefaultRecipe()
	r.Baseline = nil
	r.Tokenizer.MinCount = 2
	r.Model.Chars = &cnn.CharConfig{Filters: 6, Width: 2, Dim: cnn.DefaultCharDim, MaxChars: cnn.DefaultMaxChars}
	r.Model.Dim, r.Model.Widths, r.Model.Filters = 16+6, []int{2, 3}, 8
	r.Train.Epochs, r.Train.Threads, r.Train.Patience = 2, 2, -1
	trained, err := cnn.TrainText(context.Background(), train, nil, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	m, enc := trained.Model, trained.Encoder
	text := "my tikcet was lsot and the ferrry left wihtout me"
	_, ids := enc.Encode(text)
	asUnknown := m.Predict(ids).Logits
	mu, encU, err := m.WithUnseen(enc, []string{text})
	if err != nil {
		t.Fatal(err)
	}
	_, idsU := encU.Encode(text)
	own := mu.Predict(idsU).Logits
	if _, err := torchmodel.CheckLogits(m, []string{text}, [][]float32{asUnknown}, "texts.txt"); err != nil {
		t.Errorf("the unknown word's logits are refused: %v", err)
	}
	_, err = torchmodel.CheckLogits(m, []string{text}, [][]float32{own}, "texts.txt")
	if !errors.Is(err, torchmodel.ErrMismatch) {
		t.Errorf("the logits with the unseen words' own character parts (%v, unknown word: %v) are not refused: %v", own, asUnknown, err)
	}
}

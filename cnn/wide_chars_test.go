package cnn

import (
	"slices"
	"testing"

	"telltale/corpus"
)

// With a character layer and the wide path, WithUnseen gives each unseen
// word UNK's word weights (the table knows nothing of it), so the wide
// term of a text with unseen words is the one of the same text with UNK in
// their place; the returned model's table covers its longer vocabulary.
func TestWithUnseenWide(t *testing.T) {
	cc := CharConfig{Filters: 4, Width: 3, Dim: 5, MaxChars: 6}
	m := withWide(randCharModel(7, 40, 8, []int{2, 3}, 5, 3, cc), 7, 2)
	m.Tokenizer = corpus.TokenizerConfig{Lower: true}
	enc, err := m.Encoder()
	if err != nil {
		t.Fatal(err)
	}
	text := m.Vocab[5] + " qqzzx " + m.Vocab[9] + " zzqqy"
	x, xenc, err := m.WithUnseen(enc, []string{text})
	if err != nil {
		t.Fatal(err)
	}
	C := m.Config.Classes
	if x.Config.VocabSize != m.Config.VocabSize+2 || len(x.Wide) != x.Config.VocabSize*C {
		t.Fatalf("vocabulary %d, wide table %d values: want %d words and a row each", x.Config.VocabSize, len(x.Wide), m.Config.VocabSize+2)
	}
	if err := x.checkShapes(); err != nil {
		t.Fatal(err)
	}
	_, ids := xenc.Encode(text)
	_, unkIDs := enc.Encode(text)
	got, want := make([]float32, C), make([]float32, C)
	x.addWide(ids, got)
	m.addWide(unkIDs, want)
	if !slices.Equal(got, want) {
		t.Errorf("wide term %v with the unseen words' rows, %v with UNK in their place", got, want)
	}
	if !slices.Equal(x.Wide[:len(m.Wide)], m.Wide) {
		t.Error("the known words' weights changed")
	}
}

// With bigram weights too, an unseen word's pairs are in no set (the set
// holds only the vocabulary's ids), as UNK's are not: the wide term of a
// text with unseen words is still the one of the same text with UNK in
// their place, its known pairs found in both, and the model WithUnseen
// returns passes the shape checks and predicts as its Forward does.
func TestWithUnseenWideBigrams(t *testing.T) {
	cc := CharConfig{Filters: 4, Width: 3, Dim: 5, MaxChars: 6}
	m := withWide(randCharModel(7, 40, 8, []int{2, 3}, 5, 3, cc), 7, 2)
	m.Tokenizer = corpus.TokenizerConfig{Lower: true}
	if err := m.SetBigrams(CollectBigrams([][]int32{{5, 9, 5}, {9, 9}})); err != nil {
		t.Fatal(err)
	}
	for i := range m.WideBigram {
		m.WideBigram[i] = float32(i%7) - 3
	}
	enc, err := m.Encoder()
	if err != nil {
		t.Fatal(err)
	}
	w5, w9 := m.Vocab[5], m.Vocab[9]
	text := w5 + " " + w9 + " qqzzx " + w9 + " " + w5 + " zzqqy " + w9 + " " + w9
	x, xenc, err := m.WithUnseen(enc, []string{text})
	if err != nil {
		t.Fatal(err)
	}
	if err := x.checkShapes(); err != nil {
		t.Fatal(err)
	}
	_, ids := xenc.Encode(text)
	_, unkIDs := enc.Encode(text)
	if n, pairs := x.wideCounts(ids, nil); n != 8 || pairs != 3 {
		t.Fatalf("%d words and %d pairs found in %v, want 8 and 3 ((5,9), (9,5), (9,9))", n, pairs, ids)
	}
	C := m.Config.Classes
	got, want := make([]float32, C), make([]float32, C)
	x.addWide(ids, got)
	m.addWide(unkIDs, want)
	if !slices.Equal(got, want) {
		t.Errorf("wide term %v with the unseen words' rows, %v with UNK in their place", got, want)
	}
	outs := make([]Output, 1)
	x.NewPredictor().Run([][]int32{ids}, outs)
	compareOutput(t, x, ids, outs[0], x.Forward(ids))
}

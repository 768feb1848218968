package torchmodel

import (
	"fmt"
	"slices"
	"strings"
	"unicode/utf8"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/torchmodel/npy"
	"telltale/torchmodel/statedict"
)

// The character layer of a model trained with --chars (cnn.Config.Chars)
// in the state_dict, under keys of telltale's module (the README's
// TelltaleCNN, its submodule "chars"):
//
//	chars.alphabet     [A] int64               the alphabet's code points, in id order from 4
//	chars.word_chars   [VocabSize, MaxChars+2] int64: each word's character ids
//	chars.embed.weight [4 + A, CharDim]        nn.Embedding, padding_idx=0
//	chars.conv.weight  [CharFilters, CharDim, CharWidth]  nn.Conv1d
//	chars.conv.bias    [CharFilters]
//
// A word's character ids are 1 (begin), the ids of its first MaxChars
// characters (4 + the position in the alphabet, or 3 for a character
// outside it), 2 (end), then 0 (padding, whose vector is zero) to the
// row's end; the rows of the padding and unknown words (ids 0 and 1) are
// all 0: a word without characters, whose character part is zero, as
// telltale holds it. The character part of a word is
// tanh(max over the windows of the conv), windows that reach past the end
// mark left out (the word padded with 0 to the filter width first): the
// layer of Kim, Jernite, Sontag & Rush (2016), as cnn/charcnn.go computes
// it. These are the order and names torch gives the module's state_dict.
const (
	CharsPrefix    = "chars"
	charsAlphabet  = CharsPrefix + ".alphabet"
	charsWordChars = CharsPrefix + ".word_chars"
	charsEmbed     = CharsPrefix + ".embed.weight"
	charsConv      = CharsPrefix + ".conv.weight"
	charsConvBias  = CharsPrefix + ".conv.bias"
)

// charsKeys are the keys of the character layer, in state_dict order.
var charsKeys = []string{charsAlphabet, charsWordChars, charsEmbed, charsConv, charsConvBias}

// charStateDict returns the character layer of m (which has one) as the
// arrays above.
func charStateDict(m *cnn.Model) []npy.Array {
	cc, l := m.Config.Chars, m.Char
	var alphabet []int64
	for _, r := range cc.Alphabet {
		alphabet = append(alphabet, int64(r))
	}
	if alphabet == nil {
		alphabet = []int64{}
	}
	return []npy.Array{
		{Name: charsAlphabet, Shape: []int{len(alphabet)}, Ints: alphabet},
		{Name: charsWordChars, Shape: []int{m.Config.VocabSize, cc.MaxChars + 2}, Ints: wordChars(m)},
		{Name: charsEmbed, Shape: []int{cc.Rows(), cc.Dim}, Data: l.Emb},
		{Name: charsConv, Shape: []int{cc.Filters, cc.Dim, cc.Width}, Data: toConv1d(l.W, cc.Filters, cc.Width, cc.Dim)},
		{Name: charsConvBias, Shape: []int{cc.Filters}, Data: l.B},
	}
}

// wordChars returns the character ids of every vocabulary word of m,
// [VocabSize][MaxChars+2], the padding and unknown words' rows 0.
// cnn.Model.CharIDs pads to the filter width; a row holds the ids up to
// the end mark and zeros after, which the module pads the same way.
func wordChars(m *cnn.Model) []int64 {
	n := m.Config.Chars.MaxChars + 2
	out := make([]int64, m.Config.VocabSize*n)
	for id := int(corpus.UNK) + 1; id < m.Config.VocabSize; id++ {
		for k, c := range m.CharIDs(m.Vocab[id]) {
			if k < n {
				out[id*n+k] = int64(c)
			}
		}
	}
	return out
}

// charWeights is a character layer read from a state_dict.
type charWeights struct {
	cfg       cnn.CharConfig
	layer     cnn.CharLayer
	wordChars []int64 // [vocab][cfg.MaxChars+2], in the file's word order
}

// charLayer reads the character layer of l (after tables) into w.chars and
// widens the table by the layer's columns, which the model fills from the
// layer (cnn.Model.FillChars).
func (w *weights) charLayer(sd *statedict.StateDict, l Layout, file string, get func(string, string) (*statedict.Tensor, error), used map[string]bool) error {
	if len(l.Embeddings) != 1 {
		return fmt.Errorf("torchmodel: %s: a character layer (%s) with %d embedding tables: telltale's character layer goes with one table: %w", file, l.Chars, len(l.Embeddings), ErrLayout)
	}
	ints := func(key, part string) (*statedict.Tensor, error) {
		t, ok := sd.Tensors[key]
		if !ok {
			return nil, fmt.Errorf("torchmodel: %s: no key %s (the %s); a character layer needs the keys %s: %w", file, key, part, strings.Join(charsKeys, ", "), ErrLayout)
		}
		if t.Ints == nil {
			return nil, layoutErr(file, key, t, "the %s holds %s values; it needs int64", part, t.Dtype)
		}
		used[key] = true
		return t, nil
	}
	floats := func(key, part string, shape ...int) (*statedict.Tensor, error) {
		if _, ok := sd.Tensors[key]; !ok {
			return nil, fmt.Errorf("torchmodel: %s: no key %s (the %s); a character layer needs the keys %s: %w", file, key, part, strings.Join(charsKeys, ", "), ErrLayout)
		}
		t, err := get(key, part)
		if err == nil && !slices.Equal(t.Shape, shape) {
			err = layoutErr(file, key, t, "the %s needs shape %v", part, shape)
		}
		return t, err
	}
	alpha, err := ints(charsAlphabet, "character alphabet")
	if err != nil {
		return err
	}
	var alphabet []rune
	seen := map[int64]bool{}
	for _, c := range alpha.Ints {
		if len(alpha.Shape) != 1 || c < 0 || c > utf8.MaxRune || !utf8.ValidRune(rune(c)) || seen[c] {
			return layoutErr(file, charsAlphabet, alpha, "the alphabet must be distinct Unicode code points, one dimension; %d is not one or is repeated", c)
		}
		seen[c] = true
		alphabet = append(alphabet, rune(c))
	}
	spell, err := ints(charsWordChars, "words' character ids")
	if err != nil {
		return err
	}
	if len(spell.Shape) != 2 || spell.Shape[0] != w.vocab || spell.Shape[1] < 3 {
		return layoutErr(file, charsWordChars, spell, "the words' character ids need shape [%d, characters per word + 2] (the rows of %s)", w.vocab, l.Embeddings[0])
	}
	filt, ok := sd.Tensors[charsConv]
	if !ok || len(filt.Shape) != 3 {
		return layoutErr(file, charsConv, filt, "the character filters need shape [filters, character dimension, width] (an nn.Conv1d)")
	}
	f, cd, width := filt.Shape[0], filt.Shape[1], filt.Shape[2]
	cw := &charWeights{wordChars: spell.Ints}
	cw.cfg = cnn.CharConfig{Filters: f, Width: width, Dim: cd, MaxChars: spell.Shape[1] - 2, Alphabet: string(alphabet)}
	emb, err := floats(charsEmbed, "character vectors", cw.cfg.Rows(), cd)
	if err != nil {
		return err
	}
	if slices.ContainsFunc(emb.Data[:cd], func(v float32) bool { return v != 0 }) {
		return fmt.Errorf("torchmodel: %s: row 0 of %s (the padding character) is not zero: telltale holds it at zero; train with nn.Embedding(..., padding_idx=0): %w", file, charsEmbed, ErrPadRow)
	}
	if _, err := floats(charsConv, "character filters", f, cd, width); err != nil {
		return err
	}
	bias, err := floats(charsConvBias, "character filters' bias", f)
	if err != nil {
		return err
	}
	cw.layer = cnn.CharLayer{Emb: emb.Data, W: fromConv1d(filt.Data, f, width, cd), B: bias.Data}
	wide := make([]float32, w.vocab*(w.dim+f))
	for r := range w.vocab {
		copy(wide[r*(w.dim+f):], w.emb[r*w.dim:(r+1)*w.dim])
	}
	w.emb, w.dim, w.chars = wide, w.dim+f, cw
	return nil
}

// fromConv1d turns nn.Conv1d's filter layout [filter][dim][slot] into
// telltale's [filter][slot][dim].
func fromConv1d(src []float32, filters, width, dim int) []float32 {
	w := make([]float32, len(src))
	for f := 0; f < filters; f++ {
		for s := 0; s < width; s++ {
			for j := 0; j < dim; j++ {
				w[(f*width+s)*dim+j] = src[(f*dim+j)*width+s]
			}
		}
	}
	return w
}

// setChars gives m the character layer cw (nothing when nil), checks the
// file's character ids against vocab (in the file's order) and computes
// the character part of every row, as cnn.Load does.
func setChars(m *cnn.Model, vocab []string, cw *charWeights, o Options) error {
	if cw == nil {
		return nil
	}
	m.Char = &cw.layer
	if err := checkWordChars(m, vocab, cw, o); err != nil {
		return err
	}
	m.FillChars()
	return nil
}

// checkWordChars checks the words' character ids of the file against the
// ones m's layer gives the words of vocab (in the file's order): they
// differ when the vocabulary is not the one the layer was exported with.
func checkWordChars(m *cnn.Model, vocab []string, cw *charWeights, o Options) error {
	pad, unk, err := reservedIDs(vocab, o)
	if err != nil {
		return err
	}
	n := cw.cfg.MaxChars + 2
	want := make([]int64, n)
	for r, word := range vocab {
		clear(want)
		if r != pad && r != unk {
			for k, c := range m.CharIDs(word) {
				if k < n {
					want[k] = int64(c)
				}
			}
		}
		if got := cw.wordChars[r*n : (r+1)*n]; !slices.Equal(got, want) {
			return fmt.Errorf("torchmodel: %s: row %d of %s is %v, but the alphabet spells token %q (id %d of %s) as %v: give the vocabulary the model was exported with: %w",
				o.StateDict, r, charsWordChars, got, word, r, o.Vocab, want, ErrVocab)
		}
	}
	return nil
}

package cnn

import (
	"fmt"
	"slices"

	"telltale/corpus"
)

// MaskedCopy returns a copy of m in which the given global filters are
// masked (their pooled units held at zero) in addition to those m already
// masks: model surgery that removes what a filter contributes to every
// logit, OutW[c][g]·h[g], and nothing else. M itself is never changed; the
// caller saves the copy to a new file. A filter index outside
// 0 … NumFilters−1 is an error naming the valid range.
func (m *Model) MaskedCopy(filters []int) (*Model, error) {
	return m.MaskedWordsCopy(filters, nil)
}

// MaskedWordsCopy is MaskedCopy that also makes the word-weight path read
// the given words as the unknown word: their rows of Wide are set to
// Wide[UNK]'s, so each of their tokens adds Wide[UNK][c]/N to logit c
// instead of Wide[x][c]/N (its word part, relative to the unknown word, is
// exactly 0) and nothing else changes; the filters still read the words
// as before. With bigram weights (Config.WideBigrams) the rows of the
// pairs that hold one of the words are set to Wide[UNK]'s too, so each
// such pair found in a text adds Wide[UNK][c]/N (its part is exactly 0;
// the pair still counts in N, so no other token's part changes). On a
// model without the wide path the words change nothing.
// Word ids must be 1 … VocabSize−1 (PAD has no row to change; UNK's row
// is left as it is); anything else is an error naming the valid range.
func (m *Model) MaskedWordsCopy(filters []int, words []int32) (*Model, error) {
	nf := m.Config.NumFilters()
	for _, g := range filters {
		if g < 0 || g >= nf {
			return nil, fmt.Errorf("cnn: filter %d does not exist: the model has filters 0 … %d", g, nf-1)
		}
	}
	for _, id := range words {
		if id < corpus.UNK || int(id) >= m.Config.VocabSize {
			return nil, fmt.Errorf("cnn: word id %d cannot be read as the unknown word: the model has words 1 … %d", id, m.Config.VocabSize-1)
		}
	}
	c := m.Clone()
	if c.Masked == nil {
		c.Masked = make([]bool, nf)
	}
	for _, g := range filters {
		c.Masked[g] = true
	}
	if c.Config.Wide {
		unk := c.WideRow(corpus.UNK)
		for _, id := range words {
			copy(c.WideRow(id), unk)
		}
		C := c.Config.Classes
		for r, k := range c.Bigrams {
			if a, b := BigramIDs(k); slices.Contains(words, a) || slices.Contains(words, b) {
				copy(c.WideBigram[r*C:r*C+C], unk)
			}
		}
	}
	return c, nil
}

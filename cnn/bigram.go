package cnn

import (
	"fmt"
	"slices"

	"telltale/corpus"
)

// The bigram weights of the wide path (Config.WideBigrams): the training
// split's pairs of adjacent words get a weight per label beside the words',
// and the wide term is the mean over a text's words and its pairs found in
// the set: the bigram features of Joulin et al. (2017, "Bag of Tricks for
// Efficient Text Classification"), as the linear baseline's TF-IDF
// features hold them.

// BigramKey is the key of the pair of adjacent ids (a, b) in
// Model.Bigrams: a in the high 32 bits, b in the low ones. Both ids must
// be non-negative.
func BigramKey(a, b int32) uint64 { return uint64(uint32(a))<<32 | uint64(uint32(b)) }

// BigramIDs is the pair of ids of key k, BigramKey's inverse.
func BigramIDs(k uint64) (a, b int32) { return int32(k >> 32), int32(uint32(k)) }

// isWord reports whether id can be part of a bigram: neither PAD nor UNK.
func isWord(id int32) bool { return id != corpus.PAD && id != corpus.UNK }

// CollectBigrams returns the sorted, distinct keys (BigramKey) of every
// pair of adjacent ids of texts in which neither id is PAD or UNK: the
// bigram set of a model trained on texts (cut as training cuts them).
func CollectBigrams(texts [][]int32) []uint64 {
	seen := make(map[uint64]struct{})
	for _, ids := range texts {
		for t := 0; t+1 < len(ids); t++ {
			if a, b := ids[t], ids[t+1]; isWord(a) && isWord(b) {
				seen[BigramKey(a, b)] = struct{}{}
			}
		}
	}
	keys := make([]uint64, 0, len(seen))
	for k := range seen {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	return keys
}

// checkBigrams reports the first problem with keys as the bigram set of a
// model of vocab ids: keys must be sorted, distinct, and both ids of each
// in 2 … vocab−1 (neither PAD nor UNK).
func checkBigrams(keys []uint64, vocab int) error {
	for i, k := range keys {
		if i > 0 && k <= keys[i-1] {
			return fmt.Errorf("bigram %d is not after bigram %d: the keys must be sorted and distinct", i, i-1)
		}
		a, b := BigramIDs(k)
		if k>>32 >= uint64(vocab) || uint64(uint32(k)) >= uint64(vocab) || !isWord(a) || !isWord(b) {
			return fmt.Errorf("bigram %d (%d, %d) is not a pair of word ids 2 … %d", i, k>>32, uint32(k), vocab-1)
		}
	}
	return nil
}

// SetBigrams gives m the bigram set keys (sorted, distinct, word ids of
// m's vocabulary, as CollectBigrams returns them) and a zero weight table
// WideBigram, len(keys) × Classes, and turns Config.WideBigrams on. M must
// have the wide path (Config.Wide). The keys are m's from then on: callers
// must not change them.
func (m *Model) SetBigrams(keys []uint64) error {
	if !m.Config.Wide {
		return fmt.Errorf("cnn: bigram weights belong to the wide word-weight path: the model has none")
	}
	if err := checkBigrams(keys, m.Config.VocabSize); err != nil {
		return fmt.Errorf("cnn: %w", err)
	}
	m.Config.WideBigrams = true
	m.Bigrams = keys
	m.WideBigram = make([]float32, len(keys)*m.Config.Classes)
	m.bigramIx = newBigramIndex(keys)
	return nil
}

// BigramRow returns the row of the pair (a, b) in the bigram weight table,
// Classes weights, or nil when the pair is not in the model's set or the
// model has no bigram weights. The row is the model's own: callers must
// not write to it.
func (m *Model) BigramRow(a, b int32) []float32 {
	r := m.bigramRow(a, b)
	if r < 0 {
		return nil
	}
	C := m.Config.Classes
	return m.WideBigram[r*C : r*C+C : r*C+C]
}

// BigramIndex is the row of the pair (a, b) in Bigrams and WideBigram, or
// −1 when it is not in the set (or the model has no bigram weights).
func (m *Model) BigramIndex(a, b int32) int { return m.bigramRow(a, b) }

// bigramRow is BigramIndex.
func (m *Model) bigramRow(a, b int32) int {
	if m.bigramIx == nil || !isWord(a) || !isWord(b) {
		return -1
	}
	return m.bigramIx.find(m.Bigrams, BigramKey(a, b))
}

// bigramIndex is an open-addressing hash table over a model's sorted
// bigram keys: slot s holds 1 + the row of a key, or 0 when empty. It is
// built once (SetBigrams, Load) and only read afterwards, so it is safe
// for concurrent lookups; clones share it.
type bigramIndex struct {
	slots []int32
	shift uint
}

// newBigramIndex builds the index of keys (distinct) at a load of at most
// one half.
func newBigramIndex(keys []uint64) *bigramIndex {
	bits := uint(4)
	for 1<<bits < 2*len(keys) {
		bits++
	}
	ix := &bigramIndex{slots: make([]int32, 1<<bits), shift: 64 - bits}
	mask := len(ix.slots) - 1
	for r, k := range keys {
		s := ix.hash(k)
		for ix.slots[s] != 0 {
			s = (s + 1) & mask
		}
		ix.slots[s] = int32(r + 1)
	}
	return ix
}

// hash is Fibonacci hashing of k to a slot.
func (ix *bigramIndex) hash(k uint64) int { return int((k * 0x9e3779b97f4a7c15) >> ix.shift) }

// find returns the row of k in keys, or −1.
func (ix *bigramIndex) find(keys []uint64, k uint64) int {
	mask := len(ix.slots) - 1
	for s := ix.hash(k); ; s = (s + 1) & mask {
		r := ix.slots[s]
		if r == 0 {
			return -1
		}
		if keys[r-1] == k {
			return int(r - 1)
		}
	}
}

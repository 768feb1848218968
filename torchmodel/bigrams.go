package torchmodel

import (
	"fmt"
	"slices"

	"telltale/cnn"
	"telltale/torchmodel/statedict"
)

// bigramWeights are the bigram weights of the wide path read from a
// state_dict (Layout.Bigrams): the pairs' keys a·2³²+b in the file's ids
// and their rows [bigram][class].
type bigramWeights struct {
	keys  []int64
	table []float32
}

// bigramTable reads the bigram weights the layout names (WideBigramKey,
// with its keys BigramKeysKey): a table [pairs, outputs] beside the wide
// word-weight table, and int64 keys [pairs]. With one sigmoid unit its
// single column becomes class 1's, as for the wide table.
func (w *weights) bigramTable(sd *statedict.StateDict, l Layout, file string, get func(string, string) (*statedict.Tensor, error)) error {
	if l.Bigrams == "" {
		return nil
	}
	if l.Wide == "" {
		return fmt.Errorf("torchmodel: %s: bigram weights %s without a wide word-weight table (%s): the mean runs over words and pairs together: %w", file, l.Bigrams, WideKey, ErrLayout)
	}
	t, err := get(l.Bigrams, "bigram weight table")
	if err != nil {
		return err
	}
	k, ok := sd.Tensors[BigramKeysKey]
	if !ok || k.Ints == nil || len(k.Shape) != 1 {
		return fmt.Errorf("torchmodel: %s: bigram weights %s need their pairs' keys as a 1-D int64 tensor %s (a·2³²+b of the ids a, b, sorted), as telltale export writes them: %w", file, l.Bigrams, BigramKeysKey, ErrLayout)
	}
	n, outs := k.Shape[0], w.classes
	if w.sigmoidOutput {
		outs = 1
	}
	if len(t.Shape) != 2 || t.Shape[0] != n || t.Shape[1] != outs {
		return layoutErr(file, l.Bigrams, t, "the bigram weight table needs shape [%d, %d] (the %d keys of %s × outputs of %s)", n, outs, n, BigramKeysKey, l.Output)
	}
	w.bigrams = &bigramWeights{keys: k.Ints, table: t.Data}
	if w.sigmoidOutput {
		w.bigrams.table = make([]float32, 2*n)
		for r, v := range t.Data {
			w.bigrams.table[2*r+1] = v
		}
	}
	return nil
}

// newIDs is the id each of n file ids gets when the padding and unknown
// tokens move to ids 0 and 1 and the others keep their order (reorder).
func newIDs(n, pad, unk int) []int {
	to := make([]int, n)
	next := 2
	for i := range to {
		switch i {
		case pad:
			to[i] = 0
		case unk:
			to[i] = 1
		default:
			to[i] = next
			next++
		}
	}
	return to
}

// setBigrams gives m (with the wide path) the bigram weights b, their keys'
// ids moved as the vocabulary was (to[i] is the new id of the file's id
// i) and the pairs sorted again with their rows. A key whose ids lie
// outside the vocabulary or are the padding or unknown token is refused
// naming it: telltale never finds such a pair.
func setBigrams(m *cnn.Model, b *bigramWeights, to []int, file string) error {
	if b == nil {
		return nil
	}
	C := m.Config.Classes
	type pair struct {
		key uint64
		row int
	}
	pairs := make([]pair, len(b.keys))
	for i, k := range b.keys {
		a, c := k>>32, k&(1<<32-1)
		if k < 0 || a >= int64(len(to)) || c >= int64(len(to)) || to[a] < 2 || to[c] < 2 {
			return fmt.Errorf("torchmodel: %s: key %d of %s (%d) is not a pair of ids of the vocabulary other than the padding and unknown tokens: %w", file, i, BigramKeysKey, k, ErrLayout)
		}
		pairs[i] = pair{cnn.BigramKey(int32(to[a]), int32(to[c])), i}
	}
	slices.SortFunc(pairs, func(x, y pair) int {
		switch {
		case x.key < y.key:
			return -1
		case x.key > y.key:
			return 1
		}
		return 0
	})
	keys := make([]uint64, len(pairs))
	for i, p := range pairs {
		keys[i] = p.key
	}
	if err := m.SetBigrams(keys); err != nil {
		return fmt.Errorf("torchmodel: %s: %s: %v: %w", file, BigramKeysKey, err, ErrLayout)
	}
	for i, p := range pairs {
		copy(m.WideBigram[i*C:(i+1)*C], b.table[p.row*C:(p.row+1)*C])
	}
	return nil
}

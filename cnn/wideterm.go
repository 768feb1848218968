package cnn

// AddWide adds the wide path's term for the text ids (as given or padded:
// PAD ids count for nothing) to logits (len Classes): Wide[x[t]][c]/N for
// every non-PAD id, N their number, or UNK's row Wide[UNK][c] when N is 0,
// computed as Forward does; with bigram weights, N counts the pairs of
// adjacent ids found in Bigrams too, each adding WideBigram[p][c]/N. It does nothing for a model without the wide
// path. Ids must be < VocabSize.
func (m *Model) AddWide(ids []int32, logits []float32) {
	m.addWide(ids, logits)
}

// WideRow returns word id's row of the wide table, Classes weights, or nil
// for a model without the wide path. The row is the model's own: callers
// must not write to it. Id must be < VocabSize.
func (m *Model) WideRow(id int32) []float32 {
	if !m.Config.Wide {
		return nil
	}
	C := m.Config.Classes
	return m.Wide[int(id)*C : int(id)*C+C : int(id)*C+C]
}

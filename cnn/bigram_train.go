package cnn

import "telltale/corpus"

// rowSet is the set of the rows of a table a batch touches, with a local
// index for each (as wordSet for words, without a reserved row).
type rowSet struct {
	local []int32 // by row: local index, or -1
	rows  []int32 // by local index: row
}

func (rs *rowSet) init(n int) {
	rs.local = make([]int32, n)
	for i := range rs.local {
		rs.local[i] = -1
	}
	rs.rows = rs.rows[:0]
}

// add returns the local index of row r, adding it if new.
func (rs *rowSet) add(r int32) int32 {
	li := rs.local[r]
	if li < 0 {
		li = int32(len(rs.rows))
		rs.local[r] = li
		rs.rows = append(rs.rows, r)
	}
	return li
}

// reset forgets every row.
func (rs *rowSet) reset() {
	for _, r := range rs.rows {
		rs.local[r] = -1
	}
	rs.rows = rs.rows[:0]
}

// pairIndex holds the rows in Model.WideBigram of the found pairs of
// adjacent ids of every text of a split, in the order of the pairs in the
// text, so that a training step need not look them up again.
type pairIndex struct {
	texts [][]int32 // the split's texts, to recognise it
	rows  [][]int32 // by text: the rows of its found pairs
}

// build looks up the pairs of texts in m's bigram set.
func (px *pairIndex) build(m *Model, texts [][]int32) {
	var flat []int32
	off := make([]int, len(texts)+1)
	for i, ids := range texts {
		for t := 0; t+1 < len(ids); t++ {
			if r := m.bigramRow(ids[t], ids[t+1]); r >= 0 {
				flat = append(flat, int32(r))
			}
		}
		off[i+1] = len(flat)
	}
	px.rows = make([][]int32, len(texts))
	for i := range texts {
		px.rows[i] = flat[off[i]:off[i+1]:off[i+1]]
	}
	px.texts = texts
}

// batch appends to dst the rows of the texts idx of the split texts and
// returns it, or returns dst unchanged when texts is not the split px was
// built on (the same slice of the same texts).
func (px *pairIndex) batch(texts [][]int32, idx []int, dst [][]int32) [][]int32 {
	if len(texts) == 0 || len(texts) != len(px.texts) || &texts[0] != &px.texts[0] {
		return dst
	}
	for _, i := range idx {
		dst = append(dst, px.rows[i])
	}
	return dst
}

// collectPairs finds the bigrams of the batch's texts as they were before
// word dropout (tr.orig; tr.texts when tr.orig does not hold the batch):
// every pair of adjacent ids in the model's set, each left out with
// probability tr.bigramDrop, independently of its words. This is the
// bigram dropout of the prototype (internal/recipesearch/pooling.py,
// variant wide2): a pair is kept or left out by its own draw, also when
// one of its words was replaced by UNK. It fills tr.bs, tr.pairs and
// tr.pairOff. The pairs come from tr.batchRows when step filled it for
// the batch (looked up once by prepare), else they are looked up here:
// the same rows in the same order, so the same draws.
func (tr *trainer) collectPairs() {
	m := tr.m
	tr.bs.reset()
	tr.pairs = tr.pairs[:0]
	tr.pairOff = append(tr.pairOff[:0], 0)
	texts := tr.texts
	if len(tr.orig) == len(tr.texts) {
		texts = tr.orig
	}
	prepared := len(tr.batchRows) == len(texts) && len(tr.orig) == len(tr.texts)
	for i, ids := range texts {
		if prepared {
			for _, r := range tr.batchRows[i] {
				tr.keepPair(r)
			}
		} else {
			for t := 0; t+1 < len(ids); t++ {
				if r := m.bigramRow(ids[t], ids[t+1]); r >= 0 {
					tr.keepPair(int32(r))
				}
			}
		}
		tr.pairOff = append(tr.pairOff, len(tr.pairs))
	}
	tr.batchRows = tr.batchRows[:0]
}

// keepPair adds the found pair of row r to the batch's pairs unless the
// bigram dropout leaves it out.
func (tr *trainer) keepPair(r int32) {
	if tr.bdRng != nil && tr.bdRng.Float64() < tr.bigramDrop {
		return
	}
	tr.pairs = append(tr.pairs, tr.bs.add(r))
}

// textPairs returns the local indices (in tr.bs) of the found pairs of the
// batch's text i, or nil without bigram weights.
func (tr *trainer) textPairs(i int) []int32 {
	if !tr.m.Config.WideBigrams {
		return nil
	}
	return tr.pairs[tr.pairOff[i]:tr.pairOff[i+1]]
}

// addWide adds the wide term of the batch's text i (ids) to logits as
// Model.addWide does, over the pairs collectPairs kept for it.
func (tr *trainer) addWide(i int, ids []int32, logits []float32) {
	m := tr.m
	if !m.Config.WideBigrams {
		m.addWide(ids, logits)
		return
	}
	C := m.Config.Classes
	n := 0
	for _, id := range ids {
		if id != corpus.PAD {
			n++
		}
	}
	if n == 0 {
		unk := int(corpus.UNK) * C
		for c, w := range m.Wide[unk : unk+C] {
			logits[c] += w
		}
		return
	}
	pairs := tr.textPairs(i)
	inv := 1 / float32(n+len(pairs))
	for _, id := range ids {
		if id != corpus.PAD {
			axpyRow(inv, m.Wide[int(id)*C:int(id)*C+C], logits)
		}
	}
	for _, li := range pairs {
		r := int(tr.bs.rows[li])
		axpyRow(inv, m.WideBigram[r*C:r*C+C], logits)
	}
}

// scatterBigrams copies the batch bigrams' gradients (summed into thread
// 0's buffer) into gBig.
func (tr *trainer) scatterBigrams() {
	C := tr.m.Config.Classes
	for li, r := range tr.bs.rows {
		copy(tr.gBig[int(r)*C:int(r)*C+C], tr.th[0].bigram[li*C:li*C+C])
	}
}

// unscatterBigrams zeroes the batch bigrams' rows of gBig again.
func (tr *trainer) unscatterBigrams() {
	C := tr.m.Config.Classes
	for _, r := range tr.bs.rows {
		clear(tr.gBig[int(r)*C : int(r)*C+C])
	}
}

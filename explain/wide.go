package explain

import (
	"telltale/cnn"
	"telltale/corpus"
)

// wideText is the wide path's part of one text's logits, kept in float64:
// sum[c] = Σ_{t: x_t ≠ PAD} Wide[x_t][c] over the text's non-PAD ids, plus
// Σ_p WideBigram[p][c] over its pairs of adjacent ids found in the model's
// bigram set (cnn.Config.WideBigrams), n the number of those ids and
// pairs; the model adds the mean sum/n to the logits, or unk[c] =
// Wide[UNK][c] when n is 0 (cnn.Model.AddWide). pair[t] is the row of the
// pair (x_t, x_{t+1}) in the bigram table, −1 where it is not in the set
// (nil without bigram weights). The zero value (sum nil) stands for a
// model without the wide path.
type wideText struct {
	sum, unk []float64
	n        int
	pair     []int
}

// newWideText sums the wide rows of ids (PAD ids skipped) and of their
// pairs found in the bigram set.
func newWideText(m *cnn.Model, ids []int32) wideText {
	if !m.Config.Wide {
		return wideText{}
	}
	w := wideText{sum: make([]float64, m.Config.Classes), unk: make([]float64, m.Config.Classes)}
	for c, v := range m.WideRow(corpus.UNK) {
		w.unk[c] = float64(v)
	}
	if m.Config.WideBigrams {
		w.pair = make([]int, len(ids))
	}
	for t, id := range ids {
		if w.pair != nil {
			w.pair[t] = -1
			if t+1 < len(ids) {
				w.pair[t] = m.BigramIndex(id, ids[t+1])
			}
			if w.pair[t] >= 0 {
				w.n++
				for c, v := range m.BigramRow(id, ids[t+1]) {
					w.sum[c] += float64(v)
				}
			}
		}
		if id == corpus.PAD {
			continue
		}
		w.n++
		for c, v := range m.WideRow(id) {
			w.sum[c] += float64(v)
		}
	}
	return w
}

// addTo adds the wide term to the logits z: sum/n, or unk when n is 0.
func (w wideText) addTo(z []float64) {
	w.addLeft(z, w.sum, w.n)
}

// addLeft adds the wide term of the left words and pairs to z: rows, the
// sum of their rows, over n, their number; unk when n is 0 (no word left,
// so no pair either). It does nothing without the wide path.
func (w wideText) addLeft(z, rows []float64, n int) {
	if w.sum == nil {
		return
	}
	if n == 0 {
		for c, u := range w.unk {
			z[c] += u
		}
		return
	}
	for c, s := range rows {
		z[c] += s / float64(n)
	}
}

// unknownPart is Σ_c v_c·Wide[UNK][c], the constant of contrast k that
// the wide path carries whatever the words of a text, none included: the
// term is Wide[UNK] + Σ_t (Wide[x_t] − Wide[UNK])/n, the sum empty when n
// is 0. Adding a vector a to every word's row but PAD's and −a to the
// output biases changes no logit, so only the rows' differences from the
// unknown word's are identified, and this constant goes with the output
// bias. It is 0 without the wide path.
func (k contrast) unknownPart(w wideText) float64 {
	var s float64
	for c, u := range w.unk {
		s += k.v[c] * u
	}
	return s
}

// wordShares returns token i's wide part of contrast k for every token of
// ids: Σ_c v_c·(Wide[x_i][c] − Wide[UNK][c])/n, 0 for PAD, plus half of
// Σ_c v_c·(WideBigram[p][c] − Wide[UNK][c])/n for each found pair p that
// holds token i (each pair's part split evenly between its two tokens, so
// the shares still sum to the term less the unknown word's constant), or
// nil without the wide path.
func (k contrast) wordShares(m *cnn.Model, ids []int32, w wideText, out []float64) []float64 {
	if w.sum == nil {
		return nil
	}
	if w.n == 0 { // every token is PAD
		clear(out)
		return out
	}
	unk := k.unknownPart(w)
	for i, id := range ids {
		if id == corpus.PAD {
			out[i] = 0
			continue
		}
		out[i] = (k.dot32(m.WideRow(id)) - unk) / float64(w.n)
	}
	for t, r := range w.pair {
		if r >= 0 {
			half := (k.dot32(m.BigramRow(ids[t], ids[t+1])) - unk) / float64(2*w.n)
			out[t] += half
			out[t+1] += half
		}
	}
	return out
}

// dot32 is Σ_c v_c·x[c].
func (k contrast) dot32(x []float32) float64 {
	var s float64
	for c, v := range k.v {
		s += v * float64(x[c])
	}
	return s
}

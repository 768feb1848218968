package explain

import (
	"telltale/cnn"
	"telltale/corpus"
)

// wideText is the wide path's part of one text's logits, kept in float64:
// sum[c] = Σ_{t: x_t ≠ PAD} Wide[x_t][c] over the text's n non-PAD ids,
// whose mean sum/n the model adds to the logits (none when n is 0). The
// zero value (sum nil) stands for a model without the wide path.
type wideText struct {
	sum []float64
	n   int
}

// newWideText sums the wide rows of ids (PAD ids skipped).
func newWideText(m *cnn.Model, ids []int32) wideText {
	if !m.Config.Wide {
		return wideText{}
	}
	w := wideText{sum: make([]float64, m.Config.Classes)}
	for _, id := range ids {
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

// addTo adds the wide term sum/n to the logits z.
func (w wideText) addTo(z []float64) {
	if w.n == 0 {
		return
	}
	for c, s := range w.sum {
		z[c] += s / float64(w.n)
	}
}

// unknownPart is Σ_c v_c·Wide[UNK][c], the constant of contrast k that
// the wide path carries whatever the words of a text (n ≥ 1): adding a
// vector a to every word's row but PAD's and −a to the output biases
// changes no prediction, so only the rows' differences from the unknown
// word's are identified, and this constant goes with the output bias.
// It is 0 without the wide path or for a text without words.
func (k contrast) unknownPart(m *cnn.Model, w wideText) float64 {
	if w.n == 0 {
		return 0
	}
	return k.dot32(m.WideRow(corpus.UNK))
}

// wordShares returns token i's wide part of contrast k for every token of
// ids: Σ_c v_c·(Wide[x_i][c] − Wide[UNK][c])/n, 0 for PAD, or nil without
// the wide path.
func (k contrast) wordShares(m *cnn.Model, ids []int32, w wideText, out []float64) []float64 {
	if w.sum == nil {
		return nil
	}
	if w.n == 0 {
		clear(out)
		return out
	}
	unk := k.unknownPart(m, w)
	for i, id := range ids {
		if id == corpus.PAD {
			out[i] = 0
			continue
		}
		out[i] = (k.dot32(m.WideRow(id)) - unk) / float64(w.n)
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

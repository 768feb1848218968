package cnn

import (
	"math"

	"telltale/corpus"
	"telltale/internal/f32"
)

// The fast paths (Predictor and training) compute the first layer per
// distinct word instead of per token. For a set of texts, every distinct word
// u gets a row of its dot products with every filter slot,
//
//	T[u][r] = Emb[u]·W[f][s],   r = rowOff[bank] + s·Filters + f,
//
// one f32.MatMulNT over the distinct words. A window's pre-activations for all
// filters of a bank are then B + Σ_s T[x[t+s]][rowOff+s·F : rowOff+(s+1)·F],
// Width additions of contiguous rows of Filters values. PAD has a zero
// embedding, so it contributes nothing and is never tabled.

// slotWeights is the convolution weights rearranged slot-major: row r =
// rowOff[b] + s·F + f holds W[f][s] of bank b.
type slotWeights struct {
	nrows  int
	rowOff []int
	wt     []float32 // nrows·Dim
	packed []float32 // wt packed for f32.MatMulNTPacked (nil: not packed)
	bias   []float32 // per bank: its biases padded to padLanes(Filters)
	zero   []float32 // the table row of PAD: zeros, with windowMax's slack
}

// build (re)fills sw from the model's current weights.
func (sw *slotWeights) build(m *Model) {
	cfg := m.Config
	d, F := cfg.Dim, cfg.Filters
	sw.rowOff = sw.rowOff[:0]
	n := 0
	for _, w := range cfg.Widths {
		sw.rowOff = append(sw.rowOff, n)
		n += w * F
	}
	sw.nrows = n
	sw.wt = grow(sw.wt, n*d)
	sw.bias = padBias(m, sw.bias)
	if len(sw.zero) != n+winLanes {
		sw.zero = make([]float32, n+winLanes)
	}
	for b, c := range m.Convs {
		off := sw.rowOff[b]
		for f := 0; f < F; f++ {
			for s := 0; s < c.Width; s++ {
				copy(sw.wt[(off+s*F+f)*d:(off+s*F+f+1)*d], c.W[(f*c.Width+s)*d:(f*c.Width+s+1)*d])
			}
		}
	}
	sw.packed = f32.PackWeights(sw.packed, sw.wt, n, d)
}

// wordSet maps the vocabulary ids of a group of texts to dense local indices.
type wordSet struct {
	local []int32 // by vocabulary id: local index, or -1
	words []int32 // by local index: vocabulary id
}

func (ws *wordSet) init(vocab int) {
	if len(ws.local) != vocab {
		ws.local = make([]int32, vocab)
		for i := range ws.local {
			ws.local[i] = -1
		}
		ws.words = ws.words[:0]
	}
}

// add returns the local index of id, adding it if new; PAD gives -1.
func (ws *wordSet) add(id int32) int32 {
	if id == corpus.PAD {
		return -1
	}
	li := ws.local[id]
	if li < 0 {
		li = int32(len(ws.words))
		ws.local[id] = li
		ws.words = append(ws.words, id)
	}
	return li
}

// reset forgets every word.
func (ws *wordSet) reset() {
	for _, id := range ws.words {
		ws.local[id] = -1
	}
	ws.words = ws.words[:0]
}

// gatherRows copies the embeddings of words[lo:hi] into emb (rows lo..hi).
func gatherRows(m *Model, words []int32, emb []float32, lo, hi int) {
	d := m.Config.Dim
	for i := lo; i < hi; i++ {
		copy(emb[i*d:(i+1)*d], m.Row(words[i]))
	}
}

// wordRows computes the slot-table rows of words (none PAD), each alone
// (f32.StableRows: a row's value does not depend on the other words), into
// tab, row i for words[i], and returns the buffers emb and tab, grown as
// needed.
func wordRows(m *Model, sw *slotWeights, words []int32, emb, tab []float32) ([]float32, []float32) {
	d, n := m.Config.Dim, len(words)
	rows := f32.StableRows(n)
	emb = grow(emb, rows*d)
	tab = grow(tab, rows*sw.nrows+winLanes)
	gatherRows(m, words, emb, 0, n)
	clear(emb[n*d : rows*d])
	tableRows(sw, emb, tab, d, 0, rows)
	return emb, tab
}

// tableRows fills rows lo..hi of the slot table from the gathered embeddings.
func tableRows(sw *slotWeights, emb, tab []float32, d, lo, hi int) {
	if hi > lo {
		f32.MatMulNTPacked(tab[lo*sw.nrows:hi*sw.nrows], emb[lo*d:hi*d], sw.wt, sw.packed, hi-lo, sw.nrows, d)
	}
}

// padBias returns the biases of every bank, each padded with zeros to
// padLanes(Filters) values, in buf's storage when large enough.
func padBias(m *Model, buf []float32) []float32 {
	np := padLanes(m.Config.Filters)
	buf = grow(buf, len(m.Convs)*np)
	clear(buf)
	for b, c := range m.Convs {
		copy(buf[b*np:], c.B)
	}
	return buf
}

// tableLen is the length of a slot table of n words: windowMax reads up to
// winLanes values past the last row.
func tableLen(sw *slotWeights, n int) int { return n*sw.nrows + winLanes }

// scanRows updates best and arg (NumFilters each) with the windows
// t ∈ [t0, t1) of a text of padded length lp whose positions' table rows are
// rows[0 … lp−1] (PAD positions point at sw.zero; positions before t0 are
// not read). bias is padBias's; bestP and argP are scratch of
// padLanes(Filters) values.
func scanRows(m *Model, sw *slotWeights, bias []float32, rows []*float32, lp, t0, t1 int, bestP []float32, argP []int32, best []float32, arg []int32) {
	F := m.Config.Filters
	np := padLanes(F)
	// Every bank runs over a tile of windows before the next tile, so that
	// the tile's table rows are read from the cache by all banks. Tiles in
	// order keep the first maximum: the result is that of whole passes.
	for tc := t0; tc < t1; tc += scanTile {
		te := min(tc+scanTile, t1)
		for b, c := range m.Convs {
			w := c.Width
			e := min(te, lp-w+1)
			if e <= tc {
				continue
			}
			g0 := b * F
			copy(bestP, best[g0:g0+F])
			copy(argP, arg[g0:g0+F])
			windowMax(rows, w, F, sw.rowOff[b], bias[b*np:(b+1)*np], bestP, argP, tc, e)
			copy(best[g0:g0+F], bestP[:F])
			copy(arg[g0:g0+F], argP[:F])
		}
	}
}

// scanTile is the number of windows scanRows runs through every bank at a
// time: their rows (about 5 KB a word for widths 3, 4, 5 × 100 filters)
// stay in the core's cache from one bank to the next.
const scanTile = 32

// resetBest sets best to −∞ and arg to 0.
func resetBest(best []float32, arg []int32) {
	inf := float32(math.Inf(-1))
	for i := range best {
		best[i] = inf
	}
	for i := range arg {
		arg[i] = 0
	}
}

// pool writes h[g] = relu(pre[g]), 0 for masked filters.
func (m *Model) pool(pre, h []float32) {
	for g, v := range pre {
		if v > 0 && !m.IsMasked(g) {
			h[g] = v
		} else {
			h[g] = 0
		}
	}
}

// grow returns s resized to n, reusing its storage when large enough. The
// contents are unspecified.
func grow[T any](s []T, n int) []T {
	if cap(s) >= n {
		return s[:n]
	}
	return make([]T, n, n+n/4)
}

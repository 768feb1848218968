package cnn

import "telltale/corpus"

// charTrain is the character layer's part of a training step: the
// character ids and forward results of the batch's distinct words, and each
// worker's gradient of the layer.
type charTrain struct {
	ids []int32   // the character ids of the batch's words, concatenated
	off []int     // word i's ids are ids[off[i]:off[i+1]]
	out []float32 // words × Filters: their character parts
	pre []float32 // words × Filters: the winning windows' pre-activations
	arg []int32   // words × Filters: the winning windows
	tab []float32 // charTable of the step's weights
	buf []int32   // one word's character ids
	acc [][]float32
	th  []charGrad
}

// charGrad is one worker's gradient of the character layer: of its
// character table (charTable) and biases during the step, then (worker 0's,
// after charReduce) of its character vectors and filters.
type charGrad struct{ tab, emb, w, b []float32 }

// newCharTrain allocates the character part of tr and adds the layer's
// weights to the optimizer's groups (the character vectors and filters
// decay like the word table and filters, the biases do not; the zero
// character's row is never trained).
func newCharTrain(tr *trainer, add func(p, g []float32, decay bool)) *charTrain {
	l, cd := tr.m.Char, tr.m.Config.Chars.Dim
	ct := &charTrain{th: make([]charGrad, len(tr.th)), acc: make([][]float32, len(tr.th))}
	for k := range ct.th {
		ct.acc[k] = make([]float32, tr.m.Config.Chars.Filters)
		ct.th[k] = charGrad{tab: make([]float32, len(l.Emb)/cd*tr.m.Config.Chars.Width*len(l.B)), b: make([]float32, len(l.B))}
		if k == 0 {
			ct.th[k].emb, ct.th[k].w = make([]float32, len(l.Emb)), make([]float32, len(l.W))
		}
	}
	g0 := &ct.th[0]
	add(l.Emb[cd:], g0.emb[cd:], true)
	add(l.W, g0.w, true)
	add(l.B, g0.b, false)
	return ct
}

// charPrepare lists the character ids of the batch's words and clears the
// gradients.
func (tr *trainer) charPrepare() {
	ct, m := tr.ch, tr.m
	ct.ids, ct.off = ct.ids[:0], append(ct.off[:0], 0)
	for _, id := range tr.ws.words {
		if id != corpus.UNK {
			ct.buf = m.charIDs(ct.buf, m.Vocab[id])
			ct.ids = append(ct.ids, ct.buf...)
		}
		ct.off = append(ct.off, len(ct.ids))
	}
	ct.tab = m.charTable(ct.tab)
	nf := len(tr.ws.words) * m.Config.Chars.Filters
	ct.out, ct.pre, ct.arg = grow(ct.out, nf), grow(ct.pre, nf), grow(ct.arg, nf)
	for k := range ct.th {
		clear(ct.th[k].tab)
		clear(ct.th[k].b)
	}
	clear(ct.th[0].emb)
	clear(ct.th[0].w)
}

// charForwardRows computes the character parts of words lo..hi into their
// gathered rows (UNK's part is zero).
func (tr *trainer) charForwardRows(k, lo, hi int) {
	ct, m := tr.ch, tr.m
	d, wd, F := m.Config.Dim, m.Config.WordDim(), m.Config.Chars.Filters
	for i := lo; i < hi; i++ {
		out := ct.out[i*F : (i+1)*F]
		if cs := ct.ids[ct.off[i]:ct.off[i+1]]; len(cs) > 0 {
			m.charForward(ct.tab, ct.acc[k], cs, out, ct.pre[i*F:(i+1)*F], ct.arg[i*F:(i+1)*F])
		} else {
			clear(out)
		}
		copy(tr.emb[i*d+wd:(i+1)*d], out)
	}
}

// charBackwardRows carries the reduced gradients of words lo..hi's
// character parts into worker k's gradient of the layer.
func (tr *trainer) charBackwardRows(k, lo, hi int) {
	ct, m := tr.ch, tr.m
	d, wd, F := m.Config.Dim, m.Config.WordDim(), m.Config.Chars.Filters
	g := &ct.th[k]
	for i := lo; i < hi; i++ {
		if cs := ct.ids[ct.off[i]:ct.off[i+1]]; len(cs) > 0 {
			m.charBackward(cs, ct.out[i*F:(i+1)*F], ct.arg[i*F:(i+1)*F], tr.th[0].emb[i*d+wd:(i+1)*d], g.tab, g.b)
		}
	}
}

// charReduce sums the workers' table and bias gradients into worker 0's,
// in worker order, and turns the table's into the gradients of the
// character vectors and filters.
func (tr *trainer) charReduce() {
	th := tr.ch.th
	for k := 1; k < len(th); k++ {
		addTo(th[0].tab, th[k].tab)
		addTo(th[0].b, th[k].b)
	}
	tr.m.charUntable(th[0].tab, th[0].emb, th[0].w)
}

package explain

import (
	"math"
	"math/bits"

	"telltale/corpus"
)

// occluder recomputes the pooled units after replacing some tokens of a
// short stretch of the text with PAD, touching only the windows that contain
// a replaced token: the maximum over the other windows comes from prefix and
// suffix maxima of the kept window pre-activations. The wide path's term,
// a mean over the text's words, is updated from the replaced words alone
// (wideEdit).
type occluder struct {
	r      *Runner
	e      *Explanation
	pm, sm [][]float32 // [bank] prefix / suffix maxima, windows × filters
	acc    []float32
	newMax []float32
	bits   []uint64  // the filters of one bank whose pooled unit changed
	pooled []float32 // NumFilters: the pooled units of the edited text
	z      []float64 // the logits of the edited text
	y      int
	logP   float64
	// removed is the sum of the wide rows of the replaced words (the
	// wide path only).
	removed []float64
	// holdWide keeps the wide path's term at its value on the text: an
	// edit then replaces tokens in the filters' windows only.
	holdWide bool
}

func newOccluder(r *Runner, e *Explanation) *occluder {
	st := r.st
	o := &occluder{r: r, e: e, y: e.Class,
		acc:    make([]float32, st.m.Config.Filters),
		newMax: make([]float32, st.m.Config.Filters),
		bits:   make([]uint64, (st.m.Config.Filters+63)/64),
		pooled: make([]float32, st.m.Config.NumFilters()),
		z:      make([]float64, len(e.logits))}
	o.logP = logSoftmax64(e.logits, e.Class)
	if e.wide.sum != nil {
		o.removed = make([]float64, len(e.logits))
	}
	r.occPM, r.occSM = grow(r.occPM, len(st.banks)), grow(r.occSM, len(st.banks))
	for b := range st.banks {
		F := st.banks[b].filters
		win := r.win[b]
		nw := len(win) / F
		r.occPM[b], r.occSM[b] = grow(r.occPM[b], len(win)), grow(r.occSM[b], len(win))
		pm, sm := r.occPM[b], r.occSM[b]
		if nw > 0 {
			copy(pm[:F], win[:F])
			copy(sm[(nw-1)*F:], win[(nw-1)*F:])
		}
		for t := 1; t < nw; t++ {
			maxOf(pm[t*F:(t+1)*F], win[t*F:(t+1)*F], pm[(t-1)*F:t*F])
		}
		for t := nw - 2; t >= 0; t-- {
			maxOf(sm[t*F:(t+1)*F], win[t*F:(t+1)*F], sm[(t+1)*F:(t+2)*F])
		}
		o.pm = append(o.pm, pm)
		o.sm = append(o.sm, sm)
	}
	return o
}

// span returns the drop in p(ŷ) and log p(ŷ) when tokens lo … hi (inclusive)
// are replaced with PAD.
func (o *occluder) span(lo, hi int) (drop, dropLog float64) {
	if lo == hi {
		o.single(lo)
	} else {
		o.apply(lo, hi, nil)
	}
	return o.drops()
}

// single is apply for the one token i: a window holding it loses that
// token's slot score (PAD scores zero), so its new pre-activation is the
// kept one minus that score.
func (o *occluder) single(i int) {
	r := o.r
	st := r.st
	copy(o.z, o.e.logits)
	copy(o.pooled, r.p.Pooled)
	o.wideEdit(i, i, nil)
	n := r.p.Len
	for b := range st.banks {
		tb := &st.banks[b]
		F, w := tb.filters, tb.width
		nw := n - w + 1
		t0, t1 := max(0, i-w+1), min(i, nw-1)
		var before, after []float32
		if t0 > 0 {
			before = o.pm[b][(t0-1)*F : t0*F]
		}
		if t1+1 < nw {
			after = o.sm[b][(t1+1)*F : (t1+2)*F]
		}
		nm := o.newMax[:F]
		occludeToken(nm, before, after, r.win[b], r.rows[b][i], F, t0, t1, i)
		o.setBank(b, F, nm)
	}
}

// outside is the running maximum of bank b's F filters over its windows
// before t0 and after t1 (−∞ where there are none), in o.newMax; nw is
// the text's number of windows of that width.
func (o *occluder) outside(b, F, nw, t0, t1 int) []float32 {
	nm := o.newMax[:F]
	if t0 > 0 {
		copy(nm, o.pm[b][(t0-1)*F:t0*F])
	} else {
		for f := range nm {
			nm[f] = negInf
		}
	}
	if t1+1 < nw {
		maxInto(nm, o.sm[b][(t1+1)*F:(t1+2)*F])
	}
	return nm
}

// setBank makes nm (bank b's F new maxima before the ReLU) the pooled
// units of the edited text and moves o.z by the change of every unmasked
// one, in the order of the filters.
func (o *occluder) setBank(b, F int, nm []float32) {
	m := o.r.st.m
	nf := m.Config.NumFilters()
	old := o.r.p.Pooled[b*F : (b+1)*F]
	changedUnits(o.bits, nm, old)
	for k, word := range o.bits[:(F+63)/64] {
		for word != 0 {
			f := 64*k + bits.TrailingZeros64(word)
			word &= word - 1
			g := b*F + f
			if m.IsMasked(g) {
				continue
			}
			h := max(nm[f], 0)
			dh := float64(h) - float64(old[f])
			o.pooled[g] = h
			for c := range o.z {
				o.z[c] += float64(m.OutW[c*nf+g]) * dh
			}
		}
	}
}

// drops compares the edited logits o.z with the text's.
func (o *occluder) drops() (drop, dropLog float64) {
	lp := logSoftmax64(o.z, o.y)
	return math.Exp(o.logP) - math.Exp(lp), o.logP - lp
}

// apply sets o.z and o.pooled to the logits and pooled units of the text
// with the tokens i in lo … hi (inclusive) replaced by PAD, all of them when
// keep is nil and those with keep(i) false otherwise.
func (o *occluder) apply(lo, hi int, keep func(i int) bool) {
	r := o.r
	st := r.st
	copy(o.z, o.e.logits)
	copy(o.pooled, r.p.Pooled)
	o.wideEdit(lo, hi, keep)
	n := r.p.Len
	for b := range st.banks {
		tb := &st.banks[b]
		F, w := tb.filters, tb.width
		nw := n - w + 1
		t0, t1 := max(0, lo-w+1), min(hi, nw-1)
		nm := o.outside(b, F, nw, t0, t1)
		rows := r.rows[b]
		for t := t0; t <= t1; t++ {
			copy(o.acc, tb.bias)
			for s := 0; s < w; s++ {
				if i := t + s; i < lo || i > hi || (keep != nil && keep(i)) {
					addTo(o.acc, rows[i][s*F:(s+1)*F])
				}
			}
			for f, a := range o.acc {
				nm[f] = max(nm[f], a)
			}
		}
		o.setBank(b, F, nm)
	}
}

// wideEdit moves o.z by the change of the wide path's term when the tokens
// i in lo … hi with keep(i) false (all of them when keep is nil) are
// replaced by PAD: k of the text's N words and pairs leave (a found pair
// leaves with either of its words: PAD pairs with nothing), so the term
// S/N becomes (S − R)/(N − k), R the sum of their rows, or the unknown
// word's row when no word is left. It costs O(k·Classes), not a pass over
// the text. With o.holdWide it does nothing.
func (o *occluder) wideEdit(lo, hi int, keep func(i int) bool) {
	w := o.e.wide
	if w.n == 0 || o.holdWide {
		return
	}
	m := o.r.st.m
	ids := o.r.x
	clear(o.removed)
	gone := func(i int) bool {
		return i >= lo && i <= hi && ids[i] != corpus.PAD && (keep == nil || !keep(i))
	}
	k := 0
	for i := lo; i <= hi; i++ {
		if !gone(i) {
			continue
		}
		k++
		for c, v := range m.WideRow(ids[i]) {
			o.removed[c] += float64(v)
		}
	}
	for t := max(lo-1, 0); t <= hi && t < len(w.pair); t++ {
		if w.pair[t] >= 0 && (gone(t) || gone(t+1)) {
			k++
			for c, v := range m.BigramRow(ids[t], ids[t+1]) {
				o.removed[c] += float64(v)
			}
		}
	}
	if k == 0 {
		return
	}
	for c, s := range w.sum {
		o.z[c] -= s / float64(w.n)
		o.removed[c] = s - o.removed[c] // now the left words' sum
	}
	w.addLeft(o.z, o.removed, w.n-k)
}

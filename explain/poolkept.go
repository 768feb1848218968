package explain

// The forward pass of Explain when it lists kept-down windows: the pooling
// of every bank (poolBank's results, bit for bit) and, in the same reading
// of the table rows, each filter's two windows with the largest positive
// parts, from which keptDown takes the best window other than the winning
// one.

// keptTop holds, per filter, the window with the largest positive part
// (first maximum: P1 at T1) and the largest among the other windows (P2 at
// T2); T is −1 where there is no such window.
type keptTop struct {
	P1, P2 []float32
	T1, T2 []int32
}

func newKeptTop(nf int) *keptTop {
	p, t := make([]float32, 2*nf), make([]int32, 2*nf)
	return &keptTop{P1: p[:nf], P2: p[nf:], T1: t[:nf], T2: t[nf:]}
}

// bank is k's part for the filters lo … hi−1.
func (k *keptTop) bank(lo, hi int) *keptTop {
	return &keptTop{P1: k.P1[lo:hi], P2: k.P2[lo:hi], T1: k.T1[lo:hi], T2: k.T2[lo:hi]}
}

// best is the window with the largest positive part other than skip (−1:
// none skipped), first maximum, as bestPositiveGo finds it: the first
// maximum when it is not skip, else the first maximum of the others.
func (k *keptTop) best(f int, skip int32) (float32, int32) {
	if k.T1[f] != skip {
		return k.P1[f], k.T1[f]
	}
	return k.P2[f], k.T2[f]
}

// poolExplain is Runner.pool for Explain (kept windows, no negative-window
// screen) that also fills top with every filter's two best positive parts.
func poolExplain(r *Runner, top *keptTop) {
	st := r.st
	n := r.p.Len
	for b := range st.banks {
		tb := &st.banks[b]
		F, w := tb.filters, tb.width
		nw := n - w + 1
		if cap(r.win[b]) < nw*F {
			r.win[b] = make([]float32, nw*F)
		}
		r.win[b] = r.win[b][:nw*F]
		poolKept(r.p.Pre[b*F:(b+1)*F], r.p.Start[b*F:(b+1)*F], tb.bias, r.rows[b][:n], w, F, r.win[b], top.bank(b*F, (b+1)*F))
	}
	r.head()
}

// poolKeptGo is poolBankGo (pre, start and the kept windows win, which must
// not be nil) that also forms each window's positive part
//
//	p[t][f] = bias[f] + max(rows[t][f], 0) + … + max(rows[t+w−1][(w−1)·F+f], 0)
//
// summed left to right, and keeps every filter's two best in top (see
// keptTop; ties: the earlier window). Every implementation computes the same
// sums in the same order, so they agree bit for bit.
func poolKeptGo(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32, top *keptTop) {
	pre, start, bias = pre[:F], start[:F], bias[:F]
	p1, p2, t1, t2 := top.P1[:F], top.P2[:F], top.T1[:F], top.T2[:F]
	for f := range pre {
		pre[f], start[f] = negInf, 0
		p1[f], p2[f], t1[f], t2[f] = negInf, negInf, -1, -1
	}
	nw := len(rows) - w + 1
	var buf [256]float32
	var acc, pos []float32
	if 2*F <= len(buf) {
		acc, pos = buf[:F], buf[F:2*F]
	} else {
		acc, pos = make([]float32, F), make([]float32, F)
	}
	for t := 0; t < nw; t++ {
		windowSum(acc, bias, rows[t:t+w], F)
		copy(win[t*F:(t+1)*F], acc)
		copy(pos, bias)
		for s, row := range rows[t : t+w] {
			for f, v := range row[s*F : (s+1)*F] {
				pos[f] += max(v, 0)
			}
		}
		for f, a := range acc {
			if a > pre[f] {
				pre[f], start[f] = a, int32(t)
			}
			switch p := pos[f]; {
			case p > p1[f]:
				p2[f], t2[f] = p1[f], t1[f]
				p1[f], t1[f] = p, int32(t)
			case p > p2[f]:
				p2[f], t2[f] = p, int32(t)
			}
		}
	}
}

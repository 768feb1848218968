package explain

// Portable kernel of the kept-down windows search. The dispatch function
// bestPositive (keptkernel_generic.go, or keptkernel_simd_amd64.go when
// built with GOEXPERIMENT=simd on amd64) calls bestPositiveGo or its SIMD
// versions.

// bestPositiveGo finds, for every filter f of one bank, the window with the
// largest positive part
//
//	p[t][f] = bias[f] + max(rows[t][f], 0) + … + max(rows[t+w−1][(w−1)·F+f], 0)
//
// summed left to right, over the windows t = 0 … n−w other than skip[f]
// (−1 skips none), n = len(rows). It sets best[f] to that part and at[f] to
// its first window, or to −Inf and −1 when no window is left. Rows are as
// in poolBankGo; len(best), len(at), len(bias) and len(skip) must be at
// least F.
//
// Every implementation computes the same sums in the same order, so they
// agree bit for bit.
func bestPositiveGo(best []float32, at []int32, bias []float32, rows [][]float32, w, F int, skip []int32) {
	best, at, bias, skip = best[:F], at[:F], bias[:F], skip[:F]
	for f := range best {
		best[f], at[f] = negInf, -1
	}
	var buf [128]float32
	pos := buf[:0]
	if F <= len(buf) {
		pos = buf[:F]
	} else {
		pos = make([]float32, F)
	}
	nw := len(rows) - w + 1
	for t := 0; t < nw; t++ {
		copy(pos, bias)
		for s, row := range rows[t : t+w] {
			for f, v := range row[s*F : (s+1)*F] {
				pos[f] += max(v, 0)
			}
		}
		for f, p := range pos {
			if p > best[f] && skip[f] != int32(t) {
				best[f], at[f] = p, int32(t)
			}
		}
	}
}

// namedBestPositive is one implementation of bestPositive, for the tests
// that compare every implementation with the portable one.
type namedBestPositive struct {
	name string
	fn   func(best []float32, at []int32, bias []float32, rows [][]float32, w, F int, skip []int32)
}

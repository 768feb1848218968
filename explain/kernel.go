package explain

// Portable kernels. The dispatch function poolBank (kernel_generic.go, or
// kernel_simd_amd64.go when built with GOEXPERIMENT=simd on amd64) calls
// poolBankGo or its SIMD versions; the matrix and dot products are package
// telltale/internal/f32.

// kernelSet is one implementation of the kernels, for tests that compare
// every implementation this build and CPU can run with the portable one.
type kernelSet struct {
	name     string
	poolBank func(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32)
}

var portableKernels = kernelSet{name: "go", poolBank: poolBankGo}

// addTo adds x to dst elementwise. Len(dst) must be at least len(x).
func addTo(dst, x []float32) {
	dst = dst[:len(x)]
	for i, v := range x {
		dst[i] += v
	}
}

// poolBankGo max-pools one bank of filters over a text. Rows holds, for each
// of the text's n padded positions, the width·F slot scores of its word
// (row[s·F+f] = slot s of filter f). For every window t = 0 … n−w it forms
//
//	a[t][f] = bias[f] + rows[t][f] + rows[t+1][F+f] + … + rows[t+w−1][(w−1)·F+f]
//
// summed left to right, and sets pre[f], start[f] to the maximum over t and
// its first position (a later equal value does not win; pre is −Inf when no
// window exists). When win is not nil it also stores a[t][f] at win[t·F+f]
// (len(win) ≥ (n−w+1)·F). Len(pre), len(start), len(bias) must be at least
// F and every row at least w·F long.
//
// Every implementation computes the same sums in the same order, so they
// agree bit for bit.
func poolBankGo(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32) {
	pre, start, bias = pre[:F], start[:F], bias[:F]
	for f := range pre {
		pre[f], start[f] = negInf, 0
	}
	nw := len(rows) - w + 1
	var buf [128]float32
	acc := buf[:0]
	if F <= len(buf) {
		acc = buf[:F]
	} else {
		acc = make([]float32, F)
	}
	for t := 0; t < nw; t++ {
		windowSum(acc, bias, rows[t:t+w], F)
		if win != nil {
			copy(win[t*F:(t+1)*F], acc)
		}
		for f, a := range acc {
			if a > pre[f] {
				pre[f], start[f] = a, int32(t)
			}
		}
	}
}

// windowSum sets acc to bias + Σ_s rows[s][s·F:(s+1)·F], summed left to
// right (the same order as adding one row at a time), with the common widths
// unrolled.
func windowSum(acc, bias []float32, rows [][]float32, F int) {
	acc, bias = acc[:F], bias[:F]
	switch len(rows) {
	case 3:
		r0, r1, r2 := rows[0][:F], rows[1][F:2*F], rows[2][2*F:3*F]
		for f := range acc {
			acc[f] = bias[f] + r0[f] + r1[f] + r2[f]
		}
	case 4:
		r0, r1, r2, r3 := rows[0][:F], rows[1][F:2*F], rows[2][2*F:3*F], rows[3][3*F:4*F]
		for f := range acc {
			acc[f] = bias[f] + r0[f] + r1[f] + r2[f] + r3[f]
		}
	case 5:
		r0, r1, r2, r3, r4 := rows[0][:F], rows[1][F:2*F], rows[2][2*F:3*F], rows[3][3*F:4*F], rows[4][4*F:5*F]
		for f := range acc {
			acc[f] = bias[f] + r0[f] + r1[f] + r2[f] + r3[f] + r4[f]
		}
	default:
		copy(acc, bias)
		for s, row := range rows {
			addTo(acc, row[s*F:(s+1)*F])
		}
	}
}

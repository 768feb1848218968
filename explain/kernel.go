package explain

// Portable kernels. The dispatch function poolBank (kernel_generic.go, or
// kernel_simd_amd64.go when built with GOEXPERIMENT=simd on amd64) calls
// poolBankGo or its SIMD versions; the matrix and dot products are package
// telltale/internal/f32.

// kernelSet is one implementation of the kernels, for tests that compare
// every implementation this build and CPU can run with the portable one.
type kernelSet struct {
	name        string
	maxInto     func(dst, x []float32)
	subMaxInto  func(dst, a, b []float32)
	poolBank    func(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32)
	poolBankNeg func(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, sc *bankScreen, cands []negCand) []negCand
}

var portableKernels = kernelSet{name: "go", maxInto: maxIntoGo, subMaxInto: subMaxIntoGo, poolBank: poolBankGo, poolBankNeg: poolBankNegGo}

// maxIntoGo sets dst[f] = max(dst[f], x[f]). Len(x) must be at least
// len(dst).
func maxIntoGo(dst, x []float32) {
	x = x[:len(dst)]
	for f, v := range x {
		dst[f] = max(dst[f], v)
	}
}

// subMaxIntoGo sets dst[f] = max(dst[f], a[f] − b[f]). Len(a) and len(b)
// must be at least len(dst).
func subMaxIntoGo(dst, a, b []float32) {
	a, b = a[:len(dst)], b[:len(dst)]
	for f := range dst {
		dst[f] = max(dst[f], a[f]-b[f])
	}
}

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

// corners is the number of corners of a negative-window screen: the first
// two hold the band of thresholds the search covers (see bankScreen), the
// others the skyline's staircase. Eight staircase corners let through a
// sixth of the windows four let through on a 30,000-text corpus; sixteen
// halve that again but cost the kernel more than the skyline saves.
const corners = 10

// bankScreen holds, for one bank of filters, the corners of the screen that
// passes a window on to the negative n-gram search: window (a, P) of filter
// f is rejected when, for some corner i, P < pc[i][f] and a ≥ ac[i][f].
// Corner 0 is (lo, −Inf): it rejects P < lo. Corner 1 is (+Inf, hi): it
// rejects a ≥ hi. So a window passes only if lo ≤ P and a < hi, which
// every window that is negative for a threshold in [lo, hi] satisfies. The
// other corners reject windows that enough kept ones beat on both counts
// (see skyline). Corners that reject nothing are (−Inf, +Inf).
//
// For each filter the staircase corners 2… run down: pc[i] and ac[i] do
// not grow with i (skyline.screen writes them along its staircase, band
// writes them all open). The corners whose P is above a window's P are
// then the first ones, and the last of them has the smallest a, so the
// SIMD kernels compare a with that corner's a alone.
//
// A window must also hold down by at least dmin[f] (P − a ≥ dmin[f], in
// float32), which is positive: k windows negative for every threshold of
// the band already hold down at least that far.
type bankScreen struct {
	pc, ac [corners][]float32 // [corner][filter]
	dmin   []float32          // [filter]
	// skipIdle lets the SIMD kernels skip the groups of filters whose
	// screen passes nothing, leaving their pre and start as they were.
	skipIdle bool
}

// newBankScreen returns a screen that rejects every window.
func newBankScreen(F int) bankScreen {
	var sc bankScreen
	for i := range corners {
		sc.pc[i] = make([]float32, F)
		sc.ac[i] = make([]float32, F)
	}
	sc.dmin = make([]float32, F)
	for f := 0; f < F; f++ {
		sc.band(f, posInf, negInf)
	}
	return sc
}

// minHeldDown is the smallest positive normal float32, 2⁻¹²⁶: the least a
// window must hold down (P − a) to count. It is not the smallest positive
// float32, which is subnormal: comparing with a subnormal is slow on some
// CPUs. A window holding down by less would need P and a below about 1e-31.
const minHeldDown = 0x1p-126

// band sets filter f's screen to pass the windows with lo ≤ P and a < hi
// (lo = +Inf passes none) and clears its staircase and floor. The floor
// starts at minHeldDown: a window must hold down by something (P > a).
func (sc *bankScreen) band(f int, lo, hi float32) {
	sc.dmin[f] = minHeldDown
	sc.pc[0][f], sc.ac[0][f] = lo, negInf
	sc.pc[1][f], sc.ac[1][f] = posInf, hi
	for i := 2; i < corners; i++ {
		sc.pc[i][f], sc.ac[i][f] = negInf, posInf
	}
}

// negCand is a window that passed the screen: filter f (local to its
// bank), window start t, pre-activation a and positive part p.
type negCand struct {
	f, t int32
	a, p float32
}

// passes is the screen for one window of filter f.
func (sc *bankScreen) passes(f int, a, p float32) bool {
	if !(p-a >= sc.dmin[f]) {
		return false
	}
	for i := range corners {
		if p < sc.pc[i][f] && a >= sc.ac[i][f] {
			return false
		}
	}
	return true
}

// poolBankNegGo is poolBankGo (without kept windows) that also forms each
// window's positive part
//
//	p[t][f] = bias[f] + max(rows[t][f], 0) + … + max(rows[t+w−1][(w−1)·F+f], 0)
//
// summed left to right, and appends to cands every window that passes the
// screen sc (see bankScreen.passes), in an order that depends on the
// implementation. It returns cands. With sc.skipIdle an implementation may
// leave pre and start of the filters whose screen passes nothing as they
// were.
func poolBankNegGo(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, sc *bankScreen, cands []negCand) []negCand {
	pre, start, bias = pre[:F], start[:F], bias[:F]
	for f := range pre {
		pre[f], start[f] = negInf, 0
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
			if sc.passes(f, a, pos[f]) {
				cands = append(cands, negCand{f: int32(f), t: int32(t), a: a, p: pos[f]})
			}
		}
	}
	return cands
}

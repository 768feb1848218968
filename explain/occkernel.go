package explain

// Portable kernels of single-token occlusion. The dispatch functions
// occludeToken, changedUnits and maxOf (occkernel_generic.go, or
// occkernel_simd_amd64.go when built with GOEXPERIMENT=simd on amd64) call
// these or their SIMD versions.

// occludeTokenGo sets nm[f], for the F filters of one bank, to their
// largest pre-activation over a text's windows once token i is replaced by
// PAD (whose slot scores are zero):
//
//	nm[f] = max(before[f], after[f], max_{t0 ≤ t ≤ t1} win[t·F+f] − row[(i−t)·F+f])
//
// taken in that order (before, after, then t ascending). Before and after
// are the maxima over the windows that do not hold token i (nil where there
// are none; −Inf when both are), win the kept windows' pre-activations and
// row token i's slot scores; windows t0 … t1 are those that hold i. Len(nm),
// len(before) and len(after) must be at least F, len(win) at least
// (t1+1)·F and len(row) at least (i−t0+1)·F.
//
// Every implementation takes the same maxima in the same order, so they
// agree bit for bit.
func occludeTokenGo(nm, before, after, win, row []float32, F, t0, t1, i int) {
	nm = nm[:F]
	if before != nil {
		copy(nm, before[:F])
	} else {
		for f := range nm {
			nm[f] = negInf
		}
	}
	if after != nil {
		maxIntoGo(nm, after)
	}
	for t := t0; t <= t1; t++ {
		s := i - t
		subMaxIntoGo(nm, win[t*F:(t+1)*F], row[s*F:(s+1)*F])
	}
}

// changedUnitsGo sets bit f of bits (bit f%64 of bits[f/64]) when the
// pooled unit max(nm[f], 0) differs from old[f], and clears the others.
// Len(bits) must be at least (len(nm)+63)/64 and len(old) at least len(nm).
func changedUnitsGo(bits []uint64, nm, old []float32) {
	clear(bits[:(len(nm)+63)/64])
	old = old[:len(nm)]
	for f, a := range nm {
		if max(a, 0) != old[f] {
			bits[f/64] |= 1 << (f % 64)
		}
	}
}

// maxOfGo sets dst[f] = max(a[f], b[f]). Len(a) and len(b) must be at
// least len(dst).
func maxOfGo(dst, a, b []float32) {
	a, b = a[:len(dst)], b[:len(dst)]
	for f := range dst {
		dst[f] = max(a[f], b[f])
	}
}

// occKernels is one implementation of the occlusion kernels, for the tests
// that compare every implementation with the portable one.
type occKernels struct {
	name         string
	occludeToken func(nm, before, after, win, row []float32, F, t0, t1, i int)
	changedUnits func(bits []uint64, nm, old []float32)
	maxOf        func(dst, a, b []float32)
}

//go:build goexperiment.simd && amd64

package explain

import (
	"simd/archsimd"
	"unsafe"
)

// SIMD versions of the occlusion kernels (see occludeTokenGo and
// changedUnitsGo). occludeToken keeps one vector of maxima per group of 16
// (8) filters in a register across the windows that hold the token, where
// the portable path makes a call per window. A bank whose filter count is
// not a multiple of the lane count finishes with a group that overlaps the
// one before it, recomputing identical values.

// occludeToken is the occlusion of one token in one bank (see
// occludeTokenGo).
func occludeToken(nm, before, after, win, row []float32, F, t0, t1, i int) {
	switch simdLevel {
	case levelAVX512:
		occludeToken512(nm, before, after, win, row, F, t0, t1, i)
	case levelAVX2:
		occludeToken256(nm, before, after, win, row, F, t0, t1, i)
	default:
		occludeTokenGo(nm, before, after, win, row, F, t0, t1, i)
	}
}

// changedUnits marks the pooled units that differ (see changedUnitsGo).
func changedUnits(bits []uint64, nm, old []float32) {
	switch simdLevel {
	case levelAVX512:
		changedUnits512(bits, nm, old)
	case levelAVX2:
		changedUnits256(bits, nm, old)
	default:
		changedUnitsGo(bits, nm, old)
	}
}

// maxOf sets dst to the elementwise maximum of a and b (see maxOfGo).
func maxOf(dst, a, b []float32) {
	switch simdLevel {
	case levelAVX512:
		maxOf512(dst, a, b)
	case levelAVX2:
		maxOf256(dst, a, b)
	default:
		maxOfGo(dst, a, b)
	}
}

// occKernelSets lists every implementation this build and CPU can run; the
// first is the portable one.
func occKernelSets() []occKernels {
	s := []occKernels{{"go", occludeTokenGo, changedUnitsGo, maxOfGo}}
	if simdLevel >= levelAVX2 {
		s = append(s, occKernels{"avx2", occludeToken256, changedUnits256, maxOf256})
	}
	if simdLevel >= levelAVX512 {
		s = append(s, occKernels{"avx512", occludeToken512, changedUnits512, maxOf512})
	}
	return s
}

// checkOcclude panics unless the slices hold what occludeTokenGo reads.
func checkOcclude(nm, before, after, win, row []float32, F, t0, t1, i int) {
	_ = nm[F-1]
	if before != nil {
		_ = before[F-1]
	}
	if after != nil {
		_ = after[F-1]
	}
	if t1 >= t0 {
		_ = win[(t1+1)*F-1]
		_ = row[(i-t0+1)*F-1]
		_ = row[(i-t1)*F]
	}
}

func occludeToken512(nm, before, after, win, row []float32, F, t0, t1, i int) {
	if F < 16 {
		occludeTokenGo(nm, before, after, win, row, F, t0, t1, i)
		return
	}
	checkOcclude(nm, before, after, win, row, F, t0, t1, i)
	pw := unsafe.Pointer(unsafe.SliceData(win))
	pr := unsafe.Pointer(unsafe.SliceData(row))
	ninf := archsimd.BroadcastFloat32x16(negInf)
	for c0 := 0; c0 < F; c0 += 16 {
		c0 = min(c0, F-16)
		a := ninf
		if before != nil {
			a = archsimd.LoadFloat32x16Slice(before[c0:])
		}
		if after != nil {
			a = a.Max(archsimd.LoadFloat32x16Slice(after[c0:]))
		}
		for t := t0; t <= t1; t++ {
			x := archsimd.LoadFloat32x16((*[16]float32)(unsafe.Add(pw, 4*(t*F+c0))))
			y := archsimd.LoadFloat32x16((*[16]float32)(unsafe.Add(pr, 4*((i-t)*F+c0))))
			a = a.Max(x.Sub(y))
		}
		a.StoreSlice(nm[c0:])
	}
	archsimd.ClearAVXUpperBits()
}

func occludeToken256(nm, before, after, win, row []float32, F, t0, t1, i int) {
	if F < 8 {
		occludeTokenGo(nm, before, after, win, row, F, t0, t1, i)
		return
	}
	checkOcclude(nm, before, after, win, row, F, t0, t1, i)
	pw := unsafe.Pointer(unsafe.SliceData(win))
	pr := unsafe.Pointer(unsafe.SliceData(row))
	ninf := archsimd.BroadcastFloat32x8(negInf)
	for c0 := 0; c0 < F; c0 += 8 {
		c0 = min(c0, F-8)
		a := ninf
		if before != nil {
			a = archsimd.LoadFloat32x8Slice(before[c0:])
		}
		if after != nil {
			a = a.Max(archsimd.LoadFloat32x8Slice(after[c0:]))
		}
		for t := t0; t <= t1; t++ {
			x := archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(pw, 4*(t*F+c0))))
			y := archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(pr, 4*((i-t)*F+c0))))
			a = a.Max(x.Sub(y))
		}
		a.StoreSlice(nm[c0:])
	}
	archsimd.ClearAVXUpperBits()
}

func changedUnits512(bits []uint64, nm, old []float32) {
	n := len(nm)
	if n < 16 {
		changedUnitsGo(bits, nm, old)
		return
	}
	old = old[:n]
	clear(bits[:(n+63)/64])
	zero := archsimd.Float32x16{}
	for c0 := 0; c0 < n; c0 += 16 {
		c0 = min(c0, n-16)
		h := archsimd.LoadFloat32x16Slice(nm[c0:]).Max(zero)
		m := uint64(h.NotEqual(archsimd.LoadFloat32x16Slice(old[c0:])).ToBits())
		orBits(bits, m, c0)
	}
	archsimd.ClearAVXUpperBits()
}

func changedUnits256(bits []uint64, nm, old []float32) {
	n := len(nm)
	if n < 8 {
		changedUnitsGo(bits, nm, old)
		return
	}
	old = old[:n]
	clear(bits[:(n+63)/64])
	zero := archsimd.Float32x8{}
	for c0 := 0; c0 < n; c0 += 8 {
		c0 = min(c0, n-8)
		h := archsimd.LoadFloat32x8Slice(nm[c0:]).Max(zero)
		m := uint64(h.NotEqual(archsimd.LoadFloat32x8Slice(old[c0:])).ToBits())
		orBits(bits, m, c0)
	}
	archsimd.ClearAVXUpperBits()
}

// orBits sets the bits of m (at most 16 set) at positions c0 … in bits.
func orBits(bits []uint64, m uint64, c0 int) {
	w, o := c0/64, c0%64
	bits[w] |= m << o
	if o > 48 && m>>(64-o) != 0 {
		bits[w+1] |= m >> (64 - o)
	}
}

func maxOf512(dst, a, b []float32) {
	n := len(dst)
	if n < 16 {
		maxOfGo(dst, a, b)
		return
	}
	a, b = a[:n], b[:n]
	for c0 := 0; c0 < n; c0 += 16 {
		c0 = min(c0, n-16)
		archsimd.LoadFloat32x16Slice(a[c0:]).Max(archsimd.LoadFloat32x16Slice(b[c0:])).StoreSlice(dst[c0:])
	}
	archsimd.ClearAVXUpperBits()
}

func maxOf256(dst, a, b []float32) {
	n := len(dst)
	if n < 8 {
		maxOfGo(dst, a, b)
		return
	}
	a, b = a[:n], b[:n]
	for c0 := 0; c0 < n; c0 += 8 {
		c0 = min(c0, n-8)
		archsimd.LoadFloat32x8Slice(a[c0:]).Max(archsimd.LoadFloat32x8Slice(b[c0:])).StoreSlice(dst[c0:])
	}
	archsimd.ClearAVXUpperBits()
}

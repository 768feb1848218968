//go:build goexperiment.simd && amd64

package explain

import (
	mathbits "math/bits"
	"simd/archsimd"
	"unsafe"

	"telltale/internal/f32"
)

// SIMD kernels written with Go's experimental simd/archsimd package (build
// with GOEXPERIMENT=simd). At start-up the dispatch functions pick, from the
// CPU's features, AVX-512 (Float32x16) where present, else AVX2 with FMA
// (Float32x8), else the portable versions of kernel.go.
//
// poolBank keeps one vector of running maxima and one of their positions in
// registers per group of 16 (8) filters while it walks the windows of a
// text: per window and group that is Width loads and additions, one
// comparison and two blends. A bank whose filter count is not a multiple of
// the lane count finishes with a group that overlaps the one before it; the
// overlap recomputes identical values, so the result is unchanged.

//
// The word-slot table is built with telltale/internal/f32 (MatMulNT), the
// same matrix product that package cnn trains and predicts with.

const (
	levelGo     = f32.LevelGo
	levelAVX2   = f32.LevelAVX2
	levelAVX512 = f32.LevelAVX512
)

// simdLevel is the implementation the dispatch functions use on this CPU,
// the same one internal/f32 picks.
var simdLevel = f32.Level()

// kernelLevel names the implementation the dispatch functions use.
var kernelLevel = [...]string{"go", "avx2", "avx512"}[simdLevel]

var avx2Kernels = kernelSet{name: "avx2", maxInto: maxInto256, subMaxInto: subMaxInto256, poolBank: poolBank256, poolBankNeg: poolBankNeg256}

var avx512Kernels = kernelSet{name: "avx512", maxInto: maxInto512, subMaxInto: subMaxInto512, poolBank: poolBank512, poolBankNeg: poolBankNeg512}

// kernelSets lists every implementation this build and CPU can run; the
// first is the portable one.
func kernelSets() []kernelSet {
	s := []kernelSet{portableKernels}
	if simdLevel >= levelAVX2 {
		s = append(s, avx2Kernels)
	}
	if simdLevel >= levelAVX512 {
		s = append(s, avx512Kernels)
	}
	return s
}

// poolBank max-pools one bank of filters over a text (see poolBankGo).
func poolBank(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32) {
	switch simdLevel {
	case levelAVX512:
		poolBank512(pre, start, bias, rows, w, F, win)
	case levelAVX2:
		poolBank256(pre, start, bias, rows, w, F, win)
	default:
		poolBankGo(pre, start, bias, rows, w, F, win)
	}
}

// poolBankNeg is poolBank with the negative-window screen (see
// poolBankNegGo).
func poolBankNeg(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, sc *bankScreen, cands []negCand) []negCand {
	switch simdLevel {
	case levelAVX512:
		return poolBankNeg512(pre, start, bias, rows, w, F, sc, cands)
	case levelAVX2:
		return poolBankNeg256(pre, start, bias, rows, w, F, sc, cands)
	}
	return poolBankNegGo(pre, start, bias, rows, w, F, sc, cands)
}

// maxInto sets dst[f] = max(dst[f], x[f]) (see maxIntoGo).
func maxInto(dst, x []float32) {
	switch simdLevel {
	case levelAVX512:
		maxInto512(dst, x)
	case levelAVX2:
		maxInto256(dst, x)
	default:
		maxIntoGo(dst, x)
	}
}

// subMaxInto sets dst[f] = max(dst[f], a[f] − b[f]) (see subMaxIntoGo).
func subMaxInto(dst, a, b []float32) {
	switch simdLevel {
	case levelAVX512:
		subMaxInto512(dst, a, b)
	case levelAVX2:
		subMaxInto256(dst, a, b)
	default:
		subMaxIntoGo(dst, a, b)
	}
}

func maxInto512(dst, x []float32) {
	n := len(dst)
	x = x[:n]
	i := 0
	for ; i+16 <= n; i += 16 {
		archsimd.LoadFloat32x16Slice(dst[i:]).Max(archsimd.LoadFloat32x16Slice(x[i:])).StoreSlice(dst[i:])
	}
	archsimd.ClearAVXUpperBits()
	maxIntoGo(dst[i:], x[i:])
}

func subMaxInto512(dst, a, b []float32) {
	n := len(dst)
	a, b = a[:n], b[:n]
	i := 0
	for ; i+16 <= n; i += 16 {
		d := archsimd.LoadFloat32x16Slice(a[i:]).Sub(archsimd.LoadFloat32x16Slice(b[i:]))
		archsimd.LoadFloat32x16Slice(dst[i:]).Max(d).StoreSlice(dst[i:])
	}
	archsimd.ClearAVXUpperBits()
	subMaxIntoGo(dst[i:], a[i:], b[i:])
}

func maxInto256(dst, x []float32) {
	n := len(dst)
	x = x[:n]
	i := 0
	for ; i+8 <= n; i += 8 {
		archsimd.LoadFloat32x8Slice(dst[i:]).Max(archsimd.LoadFloat32x8Slice(x[i:])).StoreSlice(dst[i:])
	}
	archsimd.ClearAVXUpperBits()
	maxIntoGo(dst[i:], x[i:])
}

func subMaxInto256(dst, a, b []float32) {
	n := len(dst)
	a, b = a[:n], b[:n]
	i := 0
	for ; i+8 <= n; i += 8 {
		d := archsimd.LoadFloat32x8Slice(a[i:]).Sub(archsimd.LoadFloat32x8Slice(b[i:]))
		archsimd.LoadFloat32x8Slice(dst[i:]).Max(d).StoreSlice(dst[i:])
	}
	archsimd.ClearAVXUpperBits()
	subMaxIntoGo(dst[i:], a[i:], b[i:])
}

// checkRows panics unless every row holds at least need floats, so that the
// kernels may read rows through raw pointers.
func checkRows(rows [][]float32, need int) {
	for _, r := range rows {
		_ = r[need-1]
	}
}

// ---- AVX-512 ----

func poolBank512(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32) {
	nw := len(rows) - w + 1
	if F < 16 || nw <= 0 || w < 1 {
		poolBankGo(pre, start, bias, rows, w, F, win)
		return
	}
	pre, start, bias = pre[:F], start[:F], bias[:F]
	if win != nil {
		win = win[:nw*F]
	}
	checkRows(rows, w*F)
	stride := uintptr(4 * F) // bytes from slot s to slot s+1 of a row
	ninf := archsimd.BroadcastFloat32x16(negInf)
	one := archsimd.BroadcastInt32x16(1)
	for c0 := 0; c0 < F; c0 += 16 {
		c0 = min(c0, F-16)
		off := uintptr(4 * c0)
		bv := archsimd.LoadFloat32x16Slice(bias[c0:])
		best, arg := ninf, archsimd.Int32x16{}
		tv := archsimd.Int32x16{}
		for t := 0; t < nw; t++ {
			s := bv
			o := off
			for _, r := range rows[t : t+w] {
				p := unsafe.Pointer(unsafe.SliceData(r))
				s = s.Add(archsimd.LoadFloat32x16((*[16]float32)(unsafe.Add(p, o))))
				o += stride
			}
			if win != nil {
				s.StoreSlice(win[t*F+c0:])
			}
			gt := s.Greater(best)
			best = s.Merge(best, gt)
			arg = tv.Merge(arg, gt)
			tv = tv.Add(one)
		}
		best.StoreSlice(pre[c0:])
		arg.StoreSlice(start[c0:])
	}
	archsimd.ClearAVXUpperBits()
}

// ---- AVX2 + FMA ----

func poolBank256(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32) {
	nw := len(rows) - w + 1
	if F < 8 || nw <= 0 || w < 1 {
		poolBankGo(pre, start, bias, rows, w, F, win)
		return
	}
	pre, start, bias = pre[:F], start[:F], bias[:F]
	if win != nil {
		win = win[:nw*F]
	}
	checkRows(rows, w*F)
	stride := uintptr(4 * F)
	ninf := archsimd.BroadcastFloat32x8(negInf)
	one := archsimd.BroadcastInt32x8(1)
	for c0 := 0; c0 < F; c0 += 8 {
		c0 = min(c0, F-8)
		off := uintptr(4 * c0)
		bv := archsimd.LoadFloat32x8Slice(bias[c0:])
		best, arg := ninf, archsimd.Int32x8{}
		tv := archsimd.Int32x8{}
		for t := 0; t < nw; t++ {
			s := bv
			o := off
			for _, r := range rows[t : t+w] {
				p := unsafe.Pointer(unsafe.SliceData(r))
				s = s.Add(archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(p, o))))
				o += stride
			}
			if win != nil {
				s.StoreSlice(win[t*F+c0:])
			}
			gt := s.Greater(best)
			best = s.Merge(best, gt)
			arg = tv.Merge(arg, gt)
			tv = tv.Add(one)
		}
		best.StoreSlice(pre[c0:])
		arg.StoreSlice(start[c0:])
	}
	archsimd.ClearAVXUpperBits()
}

// ---- negative-window screen ----

// The screened kernels walk the windows as poolBank does and also sum each
// window's positive part; the screen's comparisons give one bit per filter,
// and only windows with a set bit leave the registers. In the last group of
// a bank whose filter count is not a multiple of the lane count, the lanes
// that overlap the group before are masked off so that no window is
// reported twice.

func poolBankNeg512(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, sc *bankScreen, cands []negCand) []negCand {
	nw := len(rows) - w + 1
	if F < 16 || nw <= 0 || w < 1 {
		return poolBankNegGo(pre, start, bias, rows, w, F, sc, cands)
	}
	pre, start, bias = pre[:F], start[:F], bias[:F]
	checkRows(rows, w*F)
	stride := uintptr(4 * F)
	ninf := archsimd.BroadcastFloat32x16(negInf)
	pinf := archsimd.BroadcastFloat32x16(posInf)
	zero := archsimd.Float32x16{}
	one := archsimd.BroadcastInt32x16(1)
	var av, pv [16]float32
	done := 0 // filters already covered by earlier groups
	for c0 := 0; c0 < F; c0 += 16 {
		c0 = min(c0, F-16)
		lanes := ^uint16(0) << uint(done-c0)
		done = c0 + 16
		off := uintptr(4 * c0)
		bv := archsimd.LoadFloat32x16Slice(bias[c0:])
		lo := archsimd.LoadFloat32x16Slice(sc.pc[0][c0:])
		if lo.Less(pinf).ToBits()&lanes == 0 {
			// No filter of the group searches: pool only, or nothing.
			if !sc.skipIdle {
				poolGroup512(pre, start, bv, rows, w, nw, off, stride, c0)
			}
			continue
		}
		hi := archsimd.LoadFloat32x16Slice(sc.ac[1][c0:])
		dmin := archsimd.LoadFloat32x16Slice(sc.dmin[c0:])
		// The staircase corners, read once per group rather than for
		// every window that passes the band.
		var pcs, acs [corners - 2]archsimd.Float32x16
		for i := range pcs {
			pcs[i] = archsimd.LoadFloat32x16Slice(sc.pc[2+i][c0:])
			acs[i] = archsimd.LoadFloat32x16Slice(sc.ac[2+i][c0:])
		}
		best, arg := ninf, archsimd.Int32x16{}
		tv := archsimd.Int32x16{}
		for t := 0; t < nw; t++ {
			s, p := bv, bv
			o := off
			for _, r := range rows[t : t+w] {
				x := archsimd.LoadFloat32x16((*[16]float32)(unsafe.Add(unsafe.Pointer(unsafe.SliceData(r)), o)))
				s = s.Add(x)
				p = p.Add(x.Max(zero))
				o += stride
			}
			gt := s.Greater(best)
			best = s.Merge(best, gt)
			arg = tv.Merge(arg, gt)
			tv = tv.Add(one)
			// The band and the floor first; the staircase only for the
			// windows they pass.
			m := p.GreaterEqual(lo).And(s.Less(hi)).And(p.Sub(s).GreaterEqual(dmin))
			if bits := m.ToBits() & lanes; bits != 0 {
				// The staircase runs down (see bankScreen): the window
				// passes when a is below the a of the last corner whose
				// P is above p.
				lim := pinf
				for i := range pcs {
					lim = acs[i].Merge(lim, p.Less(pcs[i]))
				}
				if bits = m.And(s.Less(lim)).ToBits() & lanes; bits != 0 {
					s.Store(&av)
					p.Store(&pv)
					cands = appendLanes(cands, bits, c0, t, av[:], pv[:])
				}
			}
		}
		best.StoreSlice(pre[c0:])
		arg.StoreSlice(start[c0:])
	}
	archsimd.ClearAVXUpperBits()
	return cands
}

// poolGroup512 max-pools the 16 filters from c0 on, as poolBank512 does.
func poolGroup512(pre []float32, start []int32, bv archsimd.Float32x16, rows [][]float32, w, nw int, off, stride uintptr, c0 int) {
	best, arg := archsimd.BroadcastFloat32x16(negInf), archsimd.Int32x16{}
	tv, one := archsimd.Int32x16{}, archsimd.BroadcastInt32x16(1)
	for t := 0; t < nw; t++ {
		s := bv
		o := off
		for _, r := range rows[t : t+w] {
			s = s.Add(archsimd.LoadFloat32x16((*[16]float32)(unsafe.Add(unsafe.Pointer(unsafe.SliceData(r)), o))))
			o += stride
		}
		gt := s.Greater(best)
		best = s.Merge(best, gt)
		arg = tv.Merge(arg, gt)
		tv = tv.Add(one)
	}
	best.StoreSlice(pre[c0:])
	arg.StoreSlice(start[c0:])
}

func poolBankNeg256(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, sc *bankScreen, cands []negCand) []negCand {
	nw := len(rows) - w + 1
	if F < 8 || nw <= 0 || w < 1 {
		return poolBankNegGo(pre, start, bias, rows, w, F, sc, cands)
	}
	pre, start, bias = pre[:F], start[:F], bias[:F]
	checkRows(rows, w*F)
	stride := uintptr(4 * F)
	ninf := archsimd.BroadcastFloat32x8(negInf)
	pinf := archsimd.BroadcastFloat32x8(posInf)
	zero := archsimd.Float32x8{}
	one := archsimd.BroadcastInt32x8(1)
	var av, pv [8]float32
	done := 0
	for c0 := 0; c0 < F; c0 += 8 {
		c0 = min(c0, F-8)
		lanes := ^uint8(0) << uint(done-c0)
		done = c0 + 8
		off := uintptr(4 * c0)
		bv := archsimd.LoadFloat32x8Slice(bias[c0:])
		lo := archsimd.LoadFloat32x8Slice(sc.pc[0][c0:])
		searching := lo.Less(pinf).ToBits()&lanes != 0
		if !searching && sc.skipIdle {
			continue
		}
		hi := archsimd.LoadFloat32x8Slice(sc.ac[1][c0:])
		dmin := archsimd.LoadFloat32x8Slice(sc.dmin[c0:])
		var pcs, acs [corners - 2]archsimd.Float32x8
		for i := range pcs {
			pcs[i] = archsimd.LoadFloat32x8Slice(sc.pc[2+i][c0:])
			acs[i] = archsimd.LoadFloat32x8Slice(sc.ac[2+i][c0:])
		}
		best, arg := ninf, archsimd.Int32x8{}
		tv := archsimd.Int32x8{}
		for t := 0; t < nw; t++ {
			s, p := bv, bv
			o := off
			for _, r := range rows[t : t+w] {
				x := archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(unsafe.Pointer(unsafe.SliceData(r)), o)))
				s = s.Add(x)
				if searching {
					p = p.Add(x.Max(zero))
				}
				o += stride
			}
			gt := s.Greater(best)
			best = s.Merge(best, gt)
			arg = tv.Merge(arg, gt)
			tv = tv.Add(one)
			if !searching {
				continue
			}
			m := p.GreaterEqual(lo).And(s.Less(hi)).And(p.Sub(s).GreaterEqual(dmin))
			if bits := m.ToBits() & lanes; bits != 0 {
				lim := pinf // as in poolBankNeg512
				for i := range pcs {
					lim = acs[i].Merge(lim, p.Less(pcs[i]))
				}
				if bits = m.And(s.Less(lim)).ToBits() & lanes; bits != 0 {
					s.Store(&av)
					p.Store(&pv)
					cands = appendLanes(cands, uint16(bits), c0, t, av[:], pv[:])
				}
			}
		}
		best.StoreSlice(pre[c0:])
		arg.StoreSlice(start[c0:])
	}
	archsimd.ClearAVXUpperBits()
	return cands
}

// appendLanes appends one candidate per set bit of bits, lane j being
// filter c0+j of window t.
func appendLanes(cands []negCand, bits uint16, c0, t int, a, p []float32) []negCand {
	for bits != 0 {
		j := mathbits.TrailingZeros16(bits)
		bits &= bits - 1
		cands = append(cands, negCand{f: int32(c0 + j), t: int32(t), a: a[j], p: p[j]})
	}
	return cands
}

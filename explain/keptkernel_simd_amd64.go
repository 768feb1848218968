//go:build goexperiment.simd && amd64

package explain

import (
	"simd/archsimd"
	"unsafe"
)

// SIMD versions of the pooling with the kept-down windows search (see
// poolKeptGo), laid out as poolBank512 and poolBank256: per group of 16 (8)
// filters, the running maximum and its window, and the running best two
// positive parts and their windows, stay in registers while the windows
// go by. A bank whose filter count is not a multiple of the lane count
// finishes with a group that overlaps the one before it, recomputing
// identical values.

// poolKept pools one bank and keeps its two best positive parts (see
// poolKeptGo).
func poolKept(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32, top *keptTop) {
	switch simdLevel {
	case levelAVX512:
		poolKept512(pre, start, bias, rows, w, F, win, top)
	case levelAVX2:
		poolKept256(pre, start, bias, rows, w, F, win, top)
	default:
		poolKeptGo(pre, start, bias, rows, w, F, win, top)
	}
}

// poolKeptSets lists every implementation of poolKept this build and CPU
// can run; the first is the portable one.
func poolKeptSets() []namedPoolKept {
	s := []namedPoolKept{{"go", poolKeptGo}}
	if simdLevel >= levelAVX2 {
		s = append(s, namedPoolKept{"avx2", poolKept256})
	}
	if simdLevel >= levelAVX512 {
		s = append(s, namedPoolKept{"avx512", poolKept512})
	}
	return s
}

// poolKept512 is poolBank512 with the positive parts of poolBankNeg512 and
// a running best two of them per lane: a window beating the best moves the
// best to second place; one beating only the second replaces it.
func poolKept512(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32, top *keptTop) {
	nw := len(rows) - w + 1
	if F < 16 || nw <= 0 || w < 1 {
		poolKeptGo(pre, start, bias, rows, w, F, win, top)
		return
	}
	pre, start, bias, win = pre[:F], start[:F], bias[:F], win[:nw*F]
	p1s, p2s, t1s, t2s := top.P1[:F], top.P2[:F], top.T1[:F], top.T2[:F]
	checkRows(rows, w*F)
	stride := uintptr(4 * F)
	ninf := archsimd.BroadcastFloat32x16(negInf)
	zero := archsimd.Float32x16{}
	one := archsimd.BroadcastInt32x16(1)
	none := archsimd.BroadcastInt32x16(-1)
	for c0 := 0; c0 < F; c0 += 16 {
		c0 = min(c0, F-16)
		off := uintptr(4 * c0)
		bv := archsimd.LoadFloat32x16Slice(bias[c0:])
		best, arg := ninf, archsimd.Int32x16{}
		p1, p2, t1, t2 := ninf, ninf, none, none
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
			s.StoreSlice(win[t*F+c0:])
			gt := s.Greater(best)
			best = s.Merge(best, gt)
			arg = tv.Merge(arg, gt)
			g1, g2 := p.Greater(p1), p.Greater(p2)
			p2 = p1.Merge(p.Merge(p2, g2), g1)
			t2 = t1.Merge(tv.Merge(t2, g2), g1)
			p1 = p.Merge(p1, g1)
			t1 = tv.Merge(t1, g1)
			tv = tv.Add(one)
		}
		best.StoreSlice(pre[c0:])
		arg.StoreSlice(start[c0:])
		p1.StoreSlice(p1s[c0:])
		p2.StoreSlice(p2s[c0:])
		t1.StoreSlice(t1s[c0:])
		t2.StoreSlice(t2s[c0:])
	}
	archsimd.ClearAVXUpperBits()
}

// poolKept256 is poolKept512 with AVX2's 8 lanes.
func poolKept256(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32, top *keptTop) {
	nw := len(rows) - w + 1
	if F < 8 || nw <= 0 || w < 1 {
		poolKeptGo(pre, start, bias, rows, w, F, win, top)
		return
	}
	pre, start, bias, win = pre[:F], start[:F], bias[:F], win[:nw*F]
	p1s, p2s, t1s, t2s := top.P1[:F], top.P2[:F], top.T1[:F], top.T2[:F]
	checkRows(rows, w*F)
	stride := uintptr(4 * F)
	ninf := archsimd.BroadcastFloat32x8(negInf)
	zero := archsimd.Float32x8{}
	one := archsimd.BroadcastInt32x8(1)
	none := archsimd.BroadcastInt32x8(-1)
	for c0 := 0; c0 < F; c0 += 8 {
		c0 = min(c0, F-8)
		off := uintptr(4 * c0)
		bv := archsimd.LoadFloat32x8Slice(bias[c0:])
		best, arg := ninf, archsimd.Int32x8{}
		p1, p2, t1, t2 := ninf, ninf, none, none
		tv := archsimd.Int32x8{}
		for t := 0; t < nw; t++ {
			s, p := bv, bv
			o := off
			for _, r := range rows[t : t+w] {
				x := archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(unsafe.Pointer(unsafe.SliceData(r)), o)))
				s = s.Add(x)
				p = p.Add(x.Max(zero))
				o += stride
			}
			s.StoreSlice(win[t*F+c0:])
			gt := s.Greater(best)
			best = s.Merge(best, gt)
			arg = tv.Merge(arg, gt)
			g1, g2 := p.Greater(p1), p.Greater(p2)
			p2 = p1.Merge(p.Merge(p2, g2), g1)
			t2 = t1.Merge(tv.Merge(t2, g2), g1)
			p1 = p.Merge(p1, g1)
			t1 = tv.Merge(t1, g1)
			tv = tv.Add(one)
		}
		best.StoreSlice(pre[c0:])
		arg.StoreSlice(start[c0:])
		p1.StoreSlice(p1s[c0:])
		p2.StoreSlice(p2s[c0:])
		t1.StoreSlice(t1s[c0:])
		t2.StoreSlice(t2s[c0:])
	}
	archsimd.ClearAVXUpperBits()
}

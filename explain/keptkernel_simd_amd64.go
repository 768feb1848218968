//go:build goexperiment.simd && amd64

package explain

import (
	"simd/archsimd"
	"unsafe"
)

// SIMD versions of the kept-down windows search (see bestPositiveGo), laid
// out as poolBank512 and poolBank256: one vector of running maxima and one
// of their windows per group of 16 (8) filters, the skipped window of each
// lane set to −Inf before the comparison. A bank whose filter count is not
// a multiple of the lane count finishes with a group that overlaps the one
// before it, recomputing identical values.

// bestPositive is the kept-down windows search of one bank (see
// bestPositiveGo).
func bestPositive(best []float32, at []int32, bias []float32, rows [][]float32, w, F int, skip []int32) {
	switch simdLevel {
	case levelAVX512:
		bestPositive512(best, at, bias, rows, w, F, skip)
	case levelAVX2:
		bestPositive256(best, at, bias, rows, w, F, skip)
	default:
		bestPositiveGo(best, at, bias, rows, w, F, skip)
	}
}

// bestPositiveSets lists every implementation of bestPositive this build
// and CPU can run; the first is the portable one.
func bestPositiveSets() []namedBestPositive {
	s := []namedBestPositive{{"go", bestPositiveGo}}
	if simdLevel >= levelAVX2 {
		s = append(s, namedBestPositive{"avx2", bestPositive256})
	}
	if simdLevel >= levelAVX512 {
		s = append(s, namedBestPositive{"avx512", bestPositive512})
	}
	return s
}

func bestPositive512(best []float32, at []int32, bias []float32, rows [][]float32, w, F int, skip []int32) {
	nw := len(rows) - w + 1
	if F < 16 || nw <= 0 || w < 1 {
		bestPositiveGo(best, at, bias, rows, w, F, skip)
		return
	}
	best, at, bias, skip = best[:F], at[:F], bias[:F], skip[:F]
	checkRows(rows, w*F)
	stride := uintptr(4 * F)
	ninf := archsimd.BroadcastFloat32x16(negInf)
	zero := archsimd.Float32x16{}
	one := archsimd.BroadcastInt32x16(1)
	for c0 := 0; c0 < F; c0 += 16 {
		c0 = min(c0, F-16)
		off := uintptr(4 * c0)
		bv := archsimd.LoadFloat32x16Slice(bias[c0:])
		sk := archsimd.LoadInt32x16Slice(skip[c0:])
		bst, arg := ninf, archsimd.BroadcastInt32x16(-1)
		tv := archsimd.Int32x16{}
		for t := 0; t < nw; t++ {
			p := bv
			o := off
			for _, r := range rows[t : t+w] {
				x := archsimd.LoadFloat32x16((*[16]float32)(unsafe.Add(unsafe.Pointer(unsafe.SliceData(r)), o)))
				p = p.Add(x.Max(zero))
				o += stride
			}
			p = ninf.Merge(p, tv.Equal(sk))
			gt := p.Greater(bst)
			bst = p.Merge(bst, gt)
			arg = tv.Merge(arg, gt)
			tv = tv.Add(one)
		}
		bst.StoreSlice(best[c0:])
		arg.StoreSlice(at[c0:])
	}
	archsimd.ClearAVXUpperBits()
}

func bestPositive256(best []float32, at []int32, bias []float32, rows [][]float32, w, F int, skip []int32) {
	nw := len(rows) - w + 1
	if F < 8 || nw <= 0 || w < 1 {
		bestPositiveGo(best, at, bias, rows, w, F, skip)
		return
	}
	best, at, bias, skip = best[:F], at[:F], bias[:F], skip[:F]
	checkRows(rows, w*F)
	stride := uintptr(4 * F)
	ninf := archsimd.BroadcastFloat32x8(negInf)
	zero := archsimd.Float32x8{}
	one := archsimd.BroadcastInt32x8(1)
	for c0 := 0; c0 < F; c0 += 8 {
		c0 = min(c0, F-8)
		off := uintptr(4 * c0)
		bv := archsimd.LoadFloat32x8Slice(bias[c0:])
		sk := archsimd.LoadInt32x8Slice(skip[c0:])
		bst, arg := ninf, archsimd.BroadcastInt32x8(-1)
		tv := archsimd.Int32x8{}
		for t := 0; t < nw; t++ {
			p := bv
			o := off
			for _, r := range rows[t : t+w] {
				x := archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(unsafe.Pointer(unsafe.SliceData(r)), o)))
				p = p.Add(x.Max(zero))
				o += stride
			}
			p = ninf.Merge(p, tv.Equal(sk))
			gt := p.Greater(bst)
			bst = p.Merge(bst, gt)
			arg = tv.Merge(arg, gt)
			tv = tv.Add(one)
		}
		bst.StoreSlice(best[c0:])
		arg.StoreSlice(at[c0:])
	}
	archsimd.ClearAVXUpperBits()
}

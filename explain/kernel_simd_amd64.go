//go:build goexperiment.simd && amd64

package explain

import (
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

var avx2Kernels = kernelSet{name: "avx2", poolBank: poolBank256}

var avx512Kernels = kernelSet{name: "avx512", poolBank: poolBank512}

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

//go:build goexperiment.simd && amd64

package explain

import (
	"simd/archsimd"
	"unsafe"
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
// matMulNT (the word-slot table build) packs b one panel of nr columns at a
// time (nr = 32 for AVX-512, 16 for AVX2) into k×nr order, so that a
// register-blocked micro-kernel computes a 4×nr tile of c with one broadcast
// of a[i][p] and nr/lanes vector loads per fused multiply-add group, as the
// training kernels of package cnn do. For fewer than smallM rows it takes
// dot products (dot), so that a word computed on the fly gets the same slot
// scores as SlotScore gives.

const (
	levelGo = iota
	levelAVX2
	levelAVX512
)

// simdLevel is the implementation the dispatch functions use on this CPU.
var simdLevel = detectLevel()

func detectLevel() int {
	switch {
	case archsimd.X86.AVX512():
		return levelAVX512
	case archsimd.X86.AVX2() && archsimd.X86.FMA():
		return levelAVX2
	}
	return levelGo
}

// kernelLevel names the implementation the dispatch functions use.
var kernelLevel = [...]string{"go", "avx2", "avx512"}[simdLevel]

var avx2Kernels = kernelSet{name: "avx2", matMulNT: matMulNT256, dot: dot256, poolBank: poolBank256}

var avx512Kernels = kernelSet{name: "avx512", matMulNT: matMulNT512, dot: dot512, poolBank: poolBank512}

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

// matMulNT sets c (m×n) to a (m×k) times the transpose of b (n×k), all
// row-major and contiguous. Len(c) must be at least m·n, len(a) at least m·k,
// len(b) at least n·k.
func matMulNT(c, a, b []float32, m, n, k int) {
	switch simdLevel {
	case levelAVX512:
		matMulNT512(c, a, b, m, n, k)
	case levelAVX2:
		matMulNT256(c, a, b, m, n, k)
	default:
		matMulNTGo(c, a, b, m, n, k)
	}
}

// dot returns the dot product of x and y[:len(x)].
func dot(x, y []float32) float32 {
	switch simdLevel {
	case levelAVX512:
		return dot512(x, y)
	case levelAVX2:
		return dot256(x, y)
	}
	return dotGo(x, y)
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

// packPanel writes the block p0 … p0+kb−1 of columns j0 … j0+cols−1 of bᵀ
// (b is n×k, row-major) into pb in kb×nr order, pb[p*nr+jj] =
// b[(j0+jj)*k+p0+p], and zeroes the nr−cols columns past the end of b.
func packPanel(pb, b []float32, j0, cols, k, p0, kb, nr int) {
	pb = pb[:kb*nr]
	for jj := 0; jj < cols; jj++ {
		off := (j0+jj)*k + p0
		for p, x := range b[off : off+kb] {
			pb[p*nr+jj] = x
		}
	}
	if cols < nr {
		for p := 0; p < kb; p++ {
			clear(pb[p*nr+cols : p*nr+nr])
		}
	}
}

// kc is the depth of one packed panel: matMulNT works through k in blocks
// of kc, so a panel (kc×32 floats, 32 KiB) lives on the stack and in L1.
const kc = 256

// smallM is the row count below which matMulNT takes dot products instead
// of packing.
const smallM = 8

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

func matMulNT512(c, a, b []float32, m, n, k int) {
	checkMatMulNT(c, a, b, m, n, k)
	if m == 0 || n == 0 {
		return
	}
	if m < smallM {
		for i := 0; i < m; i++ {
			ai, ci := a[i*k:i*k+k], c[i*n:i*n+n]
			for j := range ci {
				ci[j] = dot512(ai, b[j*k:j*k+k])
			}
		}
		return
	}
	if k == 0 {
		clear(c[:m*n])
		return
	}
	const nr = 32
	var buf [nr * kc]float32
	for p0 := 0; p0 < k; p0 += kc {
		kb := min(kc, k-p0)
		pb := buf[:nr*kb]
		acc := p0 > 0
		for j0 := 0; j0 < n; j0 += nr {
			cols := min(nr, n-j0)
			packPanel(pb, b, j0, cols, k, p0, kb, nr)
			i := 0
			for ; i+4 <= m; i += 4 {
				kern512x4(c[i*n+j0:], n, a[i*k+p0:], k, pb, kb, cols, acc)
			}
			for ; i < m; i++ {
				kern512x1(c[i*n+j0:i*n+j0+cols], a[i*k+p0:i*k+p0+kb], pb, acc)
			}
		}
	}
}

// kern512x4 sets the 4×cols tile c[r*ldc+jj] (r < 4, jj < cols ≤ 32) to rows
// a[r*lda:][:k] times the packed panel pb (k×32), or adds it when acc is set.
// The inner loop walks raw pointers: the slice expressions below check every
// bound once.
func kern512x4(c []float32, ldc int, a []float32, lda int, pb []float32, k, cols int, acc bool) {
	_ = a[3*lda+k-1]
	_ = pb[32*k-1]
	pa := unsafe.Pointer(unsafe.SliceData(a))
	pa1 := unsafe.Add(pa, 4*lda)
	pa2 := unsafe.Add(pa, 8*lda)
	pa3 := unsafe.Add(pa, 12*lda)
	pp := unsafe.Pointer(unsafe.SliceData(pb))
	var c00, c01, c10, c11, c20, c21, c30, c31 archsimd.Float32x16
	for p := 0; p < k; p++ {
		b0 := archsimd.LoadFloat32x16((*[16]float32)(pp))
		b1 := archsimd.LoadFloat32x16((*[16]float32)(unsafe.Add(pp, 64)))
		pp = unsafe.Add(pp, 128)
		o := uintptr(4 * p)
		x := archsimd.BroadcastFloat32x16(*(*float32)(unsafe.Add(pa, o)))
		c00 = b0.MulAdd(x, c00)
		c01 = b1.MulAdd(x, c01)
		x = archsimd.BroadcastFloat32x16(*(*float32)(unsafe.Add(pa1, o)))
		c10 = b0.MulAdd(x, c10)
		c11 = b1.MulAdd(x, c11)
		x = archsimd.BroadcastFloat32x16(*(*float32)(unsafe.Add(pa2, o)))
		c20 = b0.MulAdd(x, c20)
		c21 = b1.MulAdd(x, c21)
		x = archsimd.BroadcastFloat32x16(*(*float32)(unsafe.Add(pa3, o)))
		c30 = b0.MulAdd(x, c30)
		c31 = b1.MulAdd(x, c31)
	}
	store512(c[:cols], c00, c01, acc)
	store512(c[ldc:ldc+cols], c10, c11, acc)
	store512(c[2*ldc:2*ldc+cols], c20, c21, acc)
	store512(c[3*ldc:3*ldc+cols], c30, c31, acc)
	archsimd.ClearAVXUpperBits()
}

// kern512x1 sets c (at most 32 long) to row a times the packed panel pb.
func kern512x1(c, a, pb []float32, acc bool) {
	k := len(a)
	pb = pb[:32*k]
	var e0, e1 archsimd.Float32x16
	for p := 0; p < k; p++ {
		q := (*[32]float32)(pb[32*p:])
		x := archsimd.BroadcastFloat32x16(a[p])
		e0 = archsimd.LoadFloat32x16((*[16]float32)(q[:16])).MulAdd(x, e0)
		e1 = archsimd.LoadFloat32x16((*[16]float32)(q[16:])).MulAdd(x, e1)
	}
	store512(c, e0, e1, acc)
	archsimd.ClearAVXUpperBits()
}

// store512 stores v0, v1 (32 values) into row, which may be shorter, or
// adds them to row when acc is set. Partial rows go through an array on the
// stack (the SlicePart stores convert a short slice to an array pointer,
// which the race detector's pointer checks reject).
func store512(row []float32, v0, v1 archsimd.Float32x16, acc bool) {
	if len(row) >= 32 && !acc {
		v0.StoreSlice(row[:16])
		v1.StoreSlice(row[16:32])
		return
	}
	var t [32]float32
	v0.StoreSlice(t[:16])
	v1.StoreSlice(t[16:])
	archsimd.ClearAVXUpperBits()
	if acc {
		for i := range row {
			row[i] += t[i]
		}
		return
	}
	copy(row, t[:])
}

func dot512(x, y []float32) float32 {
	y = y[:len(x)]
	var s0, s1 archsimd.Float32x16
	i := 0
	for ; i+2*16 <= len(x); i += 2 * 16 {
		s0 = archsimd.LoadFloat32x16Slice(x[i:]).MulAdd(archsimd.LoadFloat32x16Slice(y[i:]), s0)
		s1 = archsimd.LoadFloat32x16Slice(x[i+16:]).MulAdd(archsimd.LoadFloat32x16Slice(y[i+16:]), s1)
	}
	if i+16 <= len(x) {
		s0 = archsimd.LoadFloat32x16Slice(x[i:]).MulAdd(archsimd.LoadFloat32x16Slice(y[i:]), s0)
		i += 16
	}
	// Reduce to four lanes and store them before clearing the upper
	// halves, so no vector temporary is spilled in legacy SSE code.
	v := s0.Add(s1)
	u := v.GetLo().Add(v.GetHi())
	wv := u.GetLo().Add(u.GetHi())
	var t [4]float32
	wv.Store(&t)
	archsimd.ClearAVXUpperBits()
	return (t[0] + t[1]) + (t[2] + t[3]) + dotGo(x[i:], y[i:])
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

func matMulNT256(c, a, b []float32, m, n, k int) {
	checkMatMulNT(c, a, b, m, n, k)
	if m == 0 || n == 0 {
		return
	}
	if m < smallM {
		for i := 0; i < m; i++ {
			ai, ci := a[i*k:i*k+k], c[i*n:i*n+n]
			for j := range ci {
				ci[j] = dot256(ai, b[j*k:j*k+k])
			}
		}
		return
	}
	if k == 0 {
		clear(c[:m*n])
		return
	}
	const nr = 16
	var buf [nr * kc]float32
	for p0 := 0; p0 < k; p0 += kc {
		kb := min(kc, k-p0)
		pb := buf[:nr*kb]
		acc := p0 > 0
		for j0 := 0; j0 < n; j0 += nr {
			cols := min(nr, n-j0)
			packPanel(pb, b, j0, cols, k, p0, kb, nr)
			i := 0
			for ; i+4 <= m; i += 4 {
				kern256x4(c[i*n+j0:], n, a[i*k+p0:], k, pb, kb, cols, acc)
			}
			for ; i < m; i++ {
				kern256x1(c[i*n+j0:i*n+j0+cols], a[i*k+p0:i*k+p0+kb], pb, acc)
			}
		}
	}
}

// kern256x4 sets the 4×cols tile c[r*ldc+jj] (r < 4, jj < cols ≤ 16) to rows
// a[r*lda:][:k] times the packed panel pb (k×16).
func kern256x4(c []float32, ldc int, a []float32, lda int, pb []float32, k, cols int, acc bool) {
	a0 := a[:k]
	a1 := a[lda : lda+k]
	a2 := a[2*lda : 2*lda+k]
	a3 := a[3*lda : 3*lda+k]
	pb = pb[:16*k]
	var c00, c01, c10, c11, c20, c21, c30, c31 archsimd.Float32x8
	for p := range a0 {
		q := (*[16]float32)(pb[16*p:])
		b0 := archsimd.LoadFloat32x8((*[8]float32)(q[:8]))
		b1 := archsimd.LoadFloat32x8((*[8]float32)(q[8:]))
		x := archsimd.BroadcastFloat32x8(a0[p])
		c00 = b0.MulAdd(x, c00)
		c01 = b1.MulAdd(x, c01)
		x = archsimd.BroadcastFloat32x8(a1[p])
		c10 = b0.MulAdd(x, c10)
		c11 = b1.MulAdd(x, c11)
		x = archsimd.BroadcastFloat32x8(a2[p])
		c20 = b0.MulAdd(x, c20)
		c21 = b1.MulAdd(x, c21)
		x = archsimd.BroadcastFloat32x8(a3[p])
		c30 = b0.MulAdd(x, c30)
		c31 = b1.MulAdd(x, c31)
	}
	store256(c[:cols], c00, c01, acc)
	store256(c[ldc:ldc+cols], c10, c11, acc)
	store256(c[2*ldc:2*ldc+cols], c20, c21, acc)
	store256(c[3*ldc:3*ldc+cols], c30, c31, acc)
	archsimd.ClearAVXUpperBits()
}

// kern256x1 sets c (at most 16 long) to row a times the packed panel pb.
func kern256x1(c, a, pb []float32, acc bool) {
	k := len(a)
	pb = pb[:16*k]
	var e0, e1 archsimd.Float32x8
	for p := 0; p < k; p++ {
		q := (*[16]float32)(pb[16*p:])
		x := archsimd.BroadcastFloat32x8(a[p])
		e0 = archsimd.LoadFloat32x8((*[8]float32)(q[:8])).MulAdd(x, e0)
		e1 = archsimd.LoadFloat32x8((*[8]float32)(q[8:])).MulAdd(x, e1)
	}
	store256(c, e0, e1, acc)
	archsimd.ClearAVXUpperBits()
}

// store256 stores v0, v1 (16 values) into row, which may be shorter, or
// adds them to row when acc is set (see store512).
func store256(row []float32, v0, v1 archsimd.Float32x8, acc bool) {
	if len(row) >= 16 && !acc {
		v0.StoreSlice(row[:8])
		v1.StoreSlice(row[8:16])
		return
	}
	var t [16]float32
	v0.StoreSlice(t[:8])
	v1.StoreSlice(t[8:])
	archsimd.ClearAVXUpperBits()
	if acc {
		for i := range row {
			row[i] += t[i]
		}
		return
	}
	copy(row, t[:])
}

func dot256(x, y []float32) float32 {
	y = y[:len(x)]
	var s0, s1 archsimd.Float32x8
	i := 0
	for ; i+2*8 <= len(x); i += 2 * 8 {
		s0 = archsimd.LoadFloat32x8Slice(x[i:]).MulAdd(archsimd.LoadFloat32x8Slice(y[i:]), s0)
		s1 = archsimd.LoadFloat32x8Slice(x[i+8:]).MulAdd(archsimd.LoadFloat32x8Slice(y[i+8:]), s1)
	}
	if i+8 <= len(x) {
		s0 = archsimd.LoadFloat32x8Slice(x[i:]).MulAdd(archsimd.LoadFloat32x8Slice(y[i:]), s0)
		i += 8
	}
	u := s0.Add(s1)
	wv := u.GetLo().Add(u.GetHi())
	var t [4]float32
	wv.Store(&t)
	archsimd.ClearAVXUpperBits()
	return (t[0] + t[1]) + (t[2] + t[3]) + dotGo(x[i:], y[i:])
}

//go:build goexperiment.simd && amd64

package f32

import (
	"simd/archsimd"
	"unsafe"
)

// SIMD kernels written with Go's experimental simd/archsimd package (build
// with GOEXPERIMENT=simd). At start-up the dispatch functions pick, from the
// CPU's features, AVX-512 (Float32x16) where present, else AVX2 with FMA
// (Float32x8), else the portable versions of f32.go.
//
// MatMulNT packs b one panel of nr columns at a time (nr = 32 for AVX-512,
// 16 for AVX2) into k×nr column-interleaved order, so that a register-blocked
// micro-kernel computes a 4×nr tile of c with one broadcast of a[i][p] and
// nr/lanes vector loads of the panel per fused multiply-add group. A panel of
// the model's first layer (k = 128) is 16 KiB and stays in L1 while every row
// of a streams past it. The pack buffer is a fixed-size array on the
// goroutine's stack, so the kernels allocate nothing. For fewer than smallM
// rows packing does not pay for itself and each row of c is computed by
// rowDots, four columns at a time, as dot products along k.
//
// Every function that runs vector code ends with
// archsimd.ClearAVXUpperBits before returning (or before any scalar code
// that follows the vector loop), so that callers' legacy-SSE code does not
// pay the AVX–SSE transition penalty.

// The implementations, in the order of the CPU features they need.
const (
	LevelGo     = iota // portable Go
	LevelAVX2          // AVX2 with FMA, Float32x8
	LevelAVX512        // AVX-512, Float32x16
)

const (
	levelGo     = LevelGo
	levelAVX2   = LevelAVX2
	levelAVX512 = LevelAVX512
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

// Level is the best implementation this CPU runs (LevelGo, LevelAVX2 or
// LevelAVX512); every package's SIMD kernels dispatch on it.
func Level() int { return simdLevel }

// kernelLevel names the implementation the dispatch functions use.
var kernelLevel = [...]string{"go", "avx2", "avx512"}[simdLevel]

// MatMulNT sets c (m×n) to a (m×k) times the transpose of b (n×k), all
// row-major and contiguous. Len(c) must be at least m·n, len(a) at least m·k,
// len(b) at least n·k.
func MatMulNT(c, a, b []float32, m, n, k int) {
	switch simdLevel {
	case levelAVX512:
		matMulNT512(c, a, b, m, n, k)
	case levelAVX2:
		matMulNT256(c, a, b, m, n, k)
	default:
		matMulNTGo(c, a, b, m, n, k)
	}
}

// Dot returns the dot product of x and y[:len(x)].
func Dot(x, y []float32) float32 {
	switch simdLevel {
	case levelAVX512:
		return dot512(x, y)
	case levelAVX2:
		return dot256(x, y)
	}
	return dotGo(x, y)
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

// PackWeights returns b (n×k, row-major) packed the way MatMulNT packs it,
// every panel of the current level's nr columns one after the other, reusing
// dst's storage; nil when this build or shape does not pack (k > kc, or the
// portable kernels).
func PackWeights(dst, b []float32, n, k int) []float32 {
	nr := 0
	switch simdLevel {
	case levelAVX512:
		nr = 32
	case levelAVX2:
		nr = 16
	}
	if nr == 0 || k == 0 || k > kc || n == 0 {
		return nil
	}
	panels := (n + nr - 1) / nr
	dst = grow(dst, panels*nr*k)
	for pi := range panels {
		j0 := pi * nr
		packPanel(dst[pi*nr*k:(pi+1)*nr*k], b, j0, min(nr, n-j0), k, 0, k, nr)
	}
	return dst
}

// MatMulNTPacked is MatMulNT with b already packed by PackWeights (pb); with
// pb nil it is MatMulNT. The result is the same bit for bit.
func MatMulNTPacked(c, a, b, pb []float32, m, n, k int) {
	checkMatMulNT(c, a, b, m, n, k)
	if pb == nil || m < smallM512 || m == 0 || n == 0 {
		MatMulNT(c, a, b, m, n, k)
		return
	}
	switch simdLevel {
	case levelAVX512:
		const nr = 32
		for j0 := 0; j0 < n; j0 += nr {
			cols := min(nr, n-j0)
			panel := pb[j0*k : j0*k+nr*k]
			i := 0
			for ; i+4 <= m; i += 4 {
				kern512x4(c[i*n+j0:], n, a[i*k:], k, panel, k, cols, false)
			}
			for ; i < m; i++ {
				kern512x1(c[i*n+j0:i*n+j0+cols], a[i*k:i*k+k], panel, false)
			}
		}
	case levelAVX2:
		const nr = 16
		for j0 := 0; j0 < n; j0 += nr {
			cols := min(nr, n-j0)
			panel := pb[j0*k : j0*k+nr*k]
			i := 0
			for ; i+4 <= m; i += 4 {
				kern256x4(c[i*n+j0:], n, a[i*k:], k, panel, k, cols, false)
			}
			for ; i < m; i++ {
				kern256x1(c[i*n+j0:i*n+j0+cols], a[i*k:i*k+k], panel, false)
			}
		}
	default:
		MatMulNT(c, a, b, m, n, k)
	}
}

// kc is the depth of one packed panel: MatMulNT works through k in blocks
// of kc, so a panel (kc×32 floats, 32 KiB) lives on the stack and in L1.
const kc = 256

// Row counts below which MatMulNT computes dot products instead of packing.
const (
	smallM512 = 8
	smallM256 = 8
)

// ---- AVX-512 ----

func matMulNT512(c, a, b []float32, m, n, k int) {
	checkMatMulNT(c, a, b, m, n, k)
	if m == 0 || n == 0 {
		return
	}
	if m < smallM512 {
		for i := 0; i < m; i++ {
			rowDots512(c[i*n:i*n+n], a[i*k:i*k+k], b, n, k)
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
//
// The inner loop walks raw pointers: the slice expressions below check every
// bound once, and bounds checks inside the loop cost about a third of its
// speed.
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
	var e0, e1, o0, o1 archsimd.Float32x16
	p := 0
	for ; p+2 <= k; p += 2 {
		q := (*[64]float32)(pb[32*p:])
		x := archsimd.BroadcastFloat32x16(a[p])
		e0 = archsimd.LoadFloat32x16((*[16]float32)(q[:16])).MulAdd(x, e0)
		e1 = archsimd.LoadFloat32x16((*[16]float32)(q[16:32])).MulAdd(x, e1)
		y := archsimd.BroadcastFloat32x16(a[p+1])
		o0 = archsimd.LoadFloat32x16((*[16]float32)(q[32:48])).MulAdd(y, o0)
		o1 = archsimd.LoadFloat32x16((*[16]float32)(q[48:64])).MulAdd(y, o1)
	}
	if p < k {
		q := (*[32]float32)(pb[32*p:])
		x := archsimd.BroadcastFloat32x16(a[p])
		e0 = archsimd.LoadFloat32x16((*[16]float32)(q[:16])).MulAdd(x, e0)
		e1 = archsimd.LoadFloat32x16((*[16]float32)(q[16:])).MulAdd(x, e1)
	}
	store512(c, e0.Add(o0), e1.Add(o1), acc)
	archsimd.ClearAVXUpperBits()
}

// store512 stores v0, v1 (32 values) into row, which may be shorter, or
// adds them to row when acc is set. Partial rows go through an array on the
// stack: the SlicePart loads and stores of archsimd convert a short slice to
// an array pointer, which the race detector's pointer checks reject.
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

// rowDots512 sets ci[j] = a·b[j*k:][:k] for j < n, four rows of b at a time.
func rowDots512(ci, a, b []float32, n, k int) {
	kv := k &^ (16 - 1)
	j := 0
	for ; j+4 <= n; j += 4 {
		b0 := b[j*k : j*k+k]
		b1 := b[(j+1)*k : (j+1)*k+k]
		b2 := b[(j+2)*k : (j+2)*k+k]
		b3 := b[(j+3)*k : (j+3)*k+k]
		var s0, s1, s2, s3 archsimd.Float32x16
		for p := 0; p < kv; p += 16 {
			x := archsimd.LoadFloat32x16Slice(a[p:])
			s0 = archsimd.LoadFloat32x16Slice(b0[p:]).MulAdd(x, s0)
			s1 = archsimd.LoadFloat32x16Slice(b1[p:]).MulAdd(x, s1)
			s2 = archsimd.LoadFloat32x16Slice(b2[p:]).MulAdd(x, s2)
			s3 = archsimd.LoadFloat32x16Slice(b3[p:]).MulAdd(x, s3)
		}
		hsum4x8(s0.GetLo().Add(s0.GetHi()), s1.GetLo().Add(s1.GetHi()), s2.GetLo().Add(s2.GetHi()), s3.GetLo().Add(s3.GetHi())).StoreSlice(ci[j:])
		if kv < k {
			archsimd.ClearAVXUpperBits()
			ci[j] += dotGo(a[kv:], b0[kv:])
			ci[j+1] += dotGo(a[kv:], b1[kv:])
			ci[j+2] += dotGo(a[kv:], b2[kv:])
			ci[j+3] += dotGo(a[kv:], b3[kv:])
		}
	}
	archsimd.ClearAVXUpperBits()
	for ; j < n; j++ {
		ci[j] = dot512(a, b[j*k:j*k+k])
	}
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
	w := u.GetLo().Add(u.GetHi())
	var t [4]float32
	w.Store(&t)
	archsimd.ClearAVXUpperBits()
	return (t[0] + t[1]) + (t[2] + t[3]) + dotGo(x[i:], y[i:])
}

// ---- AVX2 + FMA ----

func matMulNT256(c, a, b []float32, m, n, k int) {
	checkMatMulNT(c, a, b, m, n, k)
	if m == 0 || n == 0 {
		return
	}
	if m < smallM256 {
		for i := 0; i < m; i++ {
			rowDots256(c[i*n:i*n+n], a[i*k:i*k+k], b, n, k)
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
	var e0, e1, o0, o1 archsimd.Float32x8
	p := 0
	for ; p+2 <= k; p += 2 {
		q := (*[32]float32)(pb[16*p:])
		x := archsimd.BroadcastFloat32x8(a[p])
		e0 = archsimd.LoadFloat32x8((*[8]float32)(q[:8])).MulAdd(x, e0)
		e1 = archsimd.LoadFloat32x8((*[8]float32)(q[8:16])).MulAdd(x, e1)
		y := archsimd.BroadcastFloat32x8(a[p+1])
		o0 = archsimd.LoadFloat32x8((*[8]float32)(q[16:24])).MulAdd(y, o0)
		o1 = archsimd.LoadFloat32x8((*[8]float32)(q[24:32])).MulAdd(y, o1)
	}
	if p < k {
		q := (*[16]float32)(pb[16*p:])
		x := archsimd.BroadcastFloat32x8(a[p])
		e0 = archsimd.LoadFloat32x8((*[8]float32)(q[:8])).MulAdd(x, e0)
		e1 = archsimd.LoadFloat32x8((*[8]float32)(q[8:])).MulAdd(x, e1)
	}
	store256(c, e0.Add(o0), e1.Add(o1), acc)
	archsimd.ClearAVXUpperBits()
}

// store256 stores v0, v1 (16 values) into row, which may be shorter, or
// adds them to row when acc is set. Partial rows go through an array on the
// stack: the SlicePart loads and stores of archsimd convert a short slice to
// an array pointer, which the race detector's pointer checks reject.
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

// rowDots256 sets ci[j] = a·b[j*k:][:k] for j < n, four rows of b at a time.
func rowDots256(ci, a, b []float32, n, k int) {
	kv := k &^ (8 - 1)
	j := 0
	for ; j+4 <= n; j += 4 {
		b0 := b[j*k : j*k+k]
		b1 := b[(j+1)*k : (j+1)*k+k]
		b2 := b[(j+2)*k : (j+2)*k+k]
		b3 := b[(j+3)*k : (j+3)*k+k]
		var s0, s1, s2, s3 archsimd.Float32x8
		for p := 0; p < kv; p += 8 {
			x := archsimd.LoadFloat32x8Slice(a[p:])
			s0 = archsimd.LoadFloat32x8Slice(b0[p:]).MulAdd(x, s0)
			s1 = archsimd.LoadFloat32x8Slice(b1[p:]).MulAdd(x, s1)
			s2 = archsimd.LoadFloat32x8Slice(b2[p:]).MulAdd(x, s2)
			s3 = archsimd.LoadFloat32x8Slice(b3[p:]).MulAdd(x, s3)
		}
		hsum4x8(s0, s1, s2, s3).StoreSlice(ci[j:])
		if kv < k {
			archsimd.ClearAVXUpperBits()
			ci[j] += dotGo(a[kv:], b0[kv:])
			ci[j+1] += dotGo(a[kv:], b1[kv:])
			ci[j+2] += dotGo(a[kv:], b2[kv:])
			ci[j+3] += dotGo(a[kv:], b3[kv:])
		}
	}
	archsimd.ClearAVXUpperBits()
	for ; j < n; j++ {
		ci[j] = dot256(a, b[j*k:j*k+k])
	}
}

// hsum4x8 returns the four sums of the lanes of t0, t1, t2, t3, in a vector,
// without a scalar in between (spills of 128-bit temporaries are coded in
// legacy SSE and would pay the AVX–SSE transition).
func hsum4x8(t0, t1, t2, t3 archsimd.Float32x8) archsimd.Float32x4 {
	u := t0.AddPairsGrouped(t1).AddPairsGrouped(t2.AddPairsGrouped(t3))
	return u.GetLo().Add(u.GetHi())
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
	// Reduce to four lanes and store them before clearing the upper
	// halves, so no vector temporary is spilled in legacy SSE code.
	u := s0.Add(s1)
	w := u.GetLo().Add(u.GetHi())
	var t [4]float32
	w.Store(&t)
	archsimd.ClearAVXUpperBits()
	return (t[0] + t[1]) + (t[2] + t[3]) + dotGo(x[i:], y[i:])
}

var avx2Kernels = kernelSet{name: "avx2", matMulNT: matMulNT256, dot: dot256}

var avx512Kernels = kernelSet{name: "avx512", matMulNT: matMulNT512, dot: dot512}

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

// grow returns s resized to n, reusing its storage when large enough. The
// contents are unspecified.
func grow[T any](s []T, n int) []T {
	if cap(s) >= n {
		return s[:n]
	}
	return make([]T, n, n+n/4)
}

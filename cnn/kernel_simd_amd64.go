//go:build goexperiment.simd && amd64

package cnn

import (
	"simd/archsimd"
	"unsafe"
)

// SIMD kernels written with Go's experimental simd/archsimd package (build
// with GOEXPERIMENT=simd). At start-up the dispatch functions pick, from the
// CPU's features, AVX-512 (Float32x16) where present, else AVX2 with FMA
// (Float32x8), else the portable versions of kernel.go.
//
// matMulNT packs b one panel of nr columns at a time (nr = 32 for AVX-512,
// 16 for AVX2) into k×nr column-interleaved order, so that a register-blocked
// micro-kernel computes a 4×nr tile of c with one broadcast of a[i][p] and
// nr/lanes vector loads of the panel per fused multiply-add group. A panel of
// the model's first layer (k = 128) is 16 KiB and stays in L1 while every row
// of a streams past it. Pack buffers come from packPool (one per concurrent
// call), so the kernels allocate nothing in steady state. For fewer than
// smallM rows packing does not pay for itself and c is computed as dot
// products along k instead.

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

var avx2Kernels = kernelSet{
	name:      "avx2",
	matMulNT:  matMulNT256,
	axpy:      axpy256,
	addTo:     addTo256,
	dot:       dot256,
	maxUpdate: maxUpdate256,
	adamStep:  adamStep256,
	windowMax: windowMax256,
}

var avx512Kernels = kernelSet{
	name:      "avx512",
	matMulNT:  matMulNT512,
	axpy:      axpy512,
	addTo:     addTo512,
	dot:       dot512,
	maxUpdate: maxUpdate512,
	adamStep:  adamStep512,
	windowMax: windowMax512,
}

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

// axpy adds alpha·x to y. Len(y) must be at least len(x).
func axpy(alpha float32, x, y []float32) {
	switch simdLevel {
	case levelAVX512:
		axpy512(alpha, x, y)
	case levelAVX2:
		axpy256(alpha, x, y)
	default:
		axpyGo(alpha, x, y)
	}
}

// addTo adds x to dst elementwise. Len(dst) must be at least len(x).
func addTo(dst, x []float32) {
	switch simdLevel {
	case levelAVX512:
		addTo512(dst, x)
	case levelAVX2:
		addTo256(dst, x)
	default:
		addToGo(dst, x)
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

// maxUpdate sets best[i], arg[i] = x[i], t wherever x[i] > best[i] (see
// maxUpdateGo). Len(best) and len(arg) must be at least len(x).
func maxUpdate(best []float32, arg []int32, x []float32, t int32) {
	switch simdLevel {
	case levelAVX512:
		maxUpdate512(best, arg, x, t)
	case levelAVX2:
		maxUpdate256(best, arg, x, t)
	default:
		maxUpdateGo(best, arg, x, t)
	}
}

// adamStep applies one Adam update to p (see adamStepGo for the formula and
// the meaning of bc1, bc2).
func adamStep(p, g, m, v []float32, lr, b1, b2, eps, bc1, bc2 float32) {
	switch simdLevel {
	case levelAVX512:
		adamStep512(p, g, m, v, lr, b1, b2, eps, bc1, bc2)
	case levelAVX2:
		adamStep256(p, g, m, v, lr, b1, b2, eps, bc1, bc2)
	default:
		adamStepGo(p, g, m, v, lr, b1, b2, eps, bc1, bc2)
	}
}

// windowMax runs the windows of one filter bank over a text's table rows
// (see windowMaxGo).
func windowMax(rows []*float32, w, nf, col int, bias, best []float32, arg []int32, t0, t1 int) {
	switch simdLevel {
	case levelAVX512:
		windowMax512(rows, w, nf, col, bias, best, arg, t0, t1)
	case levelAVX2:
		windowMax256(rows, w, nf, col, bias, best, arg, t0, t1)
	default:
		windowMaxGo(rows, w, nf, col, bias, best, arg, t0, t1)
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

// packWeights returns b (n×k, row-major) packed the way matMulNT packs it,
// every panel of the current level's nr columns one after the other, reusing
// dst's storage; nil when this build or shape does not pack (k > kc, or the
// portable kernels).
func packWeights(dst, b []float32, n, k int) []float32 {
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

// matMulNTPacked is matMulNT with b already packed by packWeights (pb); with
// pb nil it is matMulNT. The result is the same bit for bit.
func matMulNTPacked(c, a, b, pb []float32, m, n, k int) {
	checkMatMulNT(c, a, b, m, n, k)
	if pb == nil || m < smallM512 || m == 0 || n == 0 {
		matMulNT(c, a, b, m, n, k)
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
		matMulNT(c, a, b, m, n, k)
	}
}

// kc is the depth of one packed panel: matMulNT works through k in blocks
// of kc, so a panel (kc×32 floats, 32 KiB) lives on the stack and in L1.
const kc = 256

// Row counts below which matMulNT computes dot products instead of packing.
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

func axpy512(alpha float32, x, y []float32) {
	y = y[:len(x)]
	// The scalar tail goes first, so that no scalar is needed after the
	// vector loop (see adamStep512).
	n := len(x) &^ (16 - 1)
	axpyGo(alpha, x[n:], y[n:])
	av := archsimd.BroadcastFloat32x16(alpha)
	for i := 0; i < n; i += 16 {
		xv := archsimd.LoadFloat32x16Slice(x[i:])
		yv := archsimd.LoadFloat32x16Slice(y[i:])
		xv.MulAdd(av, yv).StoreSlice(y[i:])
	}
	archsimd.ClearAVXUpperBits()
}

func addTo512(dst, x []float32) {
	dst = dst[:len(x)]
	n := len(x) &^ (16 - 1)
	addToGo(dst[n:], x[n:])
	for i := 0; i < n; i += 16 {
		xv := archsimd.LoadFloat32x16Slice(x[i:])
		dv := archsimd.LoadFloat32x16Slice(dst[i:])
		dv.Add(xv).StoreSlice(dst[i:])
	}
	archsimd.ClearAVXUpperBits()
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

func maxUpdate512(best []float32, arg []int32, x []float32, t int32) {
	best = best[:len(x)]
	arg = arg[:len(x)]
	n := len(x) &^ (16 - 1)
	maxUpdateGo(best[n:], arg[n:], x[n:], t)
	tv := archsimd.BroadcastInt32x16(t)
	for i := 0; i < n; i += 16 {
		xv := archsimd.LoadFloat32x16Slice(x[i:])
		bv := archsimd.LoadFloat32x16Slice(best[i:])
		gt := xv.Greater(bv)
		xv.Merge(bv, gt).StoreSlice(best[i:])
		tv.Merge(archsimd.LoadInt32x16Slice(arg[i:]), gt).StoreSlice(arg[i:])
	}
	archsimd.ClearAVXUpperBits()
}

func adamStep512(p, g, m, v []float32, lr, b1, b2, eps, bc1, bc2 float32) {
	g = g[:len(p)]
	m = m[:len(p)]
	v = v[:len(p)]
	// The scalar tail goes first: a scalar float live after the vector loop
	// gets spilled and reloaded in it with legacy-SSE moves, and each of
	// those pays the AVX–SSE transition (about 300 ns here).
	n := len(p) &^ (16 - 1)
	adamStepGo(p[n:], g[n:], m[n:], v[n:], lr, b1, b2, eps, bc1, bc2)
	b1v := archsimd.BroadcastFloat32x16(b1)
	b2v := archsimd.BroadcastFloat32x16(b2)
	c1v := archsimd.BroadcastFloat32x16(1 - b1)
	c2v := archsimd.BroadcastFloat32x16(1 - b2)
	sv := archsimd.BroadcastFloat32x16(lr / bc1)
	iv := archsimd.BroadcastFloat32x16(1 / sqrt32(bc2))
	ev := archsimd.BroadcastFloat32x16(eps)
	for i := 0; i < n; i += 16 {
		gv := archsimd.LoadFloat32x16Slice(g[i:])
		mv := archsimd.LoadFloat32x16Slice(m[i:]).MulAdd(b1v, gv.Mul(c1v))
		vv := archsimd.LoadFloat32x16Slice(v[i:]).MulAdd(b2v, gv.Mul(c2v).Mul(gv))
		mv.StoreSlice(m[i:])
		vv.StoreSlice(v[i:])
		d := vv.Sqrt().MulAdd(iv, ev)
		pv := archsimd.LoadFloat32x16Slice(p[i:])
		pv.Sub(sv.Mul(mv).Div(d)).StoreSlice(p[i:])
	}
	archsimd.ClearAVXUpperBits()
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

func axpy256(alpha float32, x, y []float32) {
	y = y[:len(x)]
	// The scalar tail goes first, so that no scalar is needed after the
	// vector loop (see adamStep256).
	n := len(x) &^ (8 - 1)
	axpyGo(alpha, x[n:], y[n:])
	av := archsimd.BroadcastFloat32x8(alpha)
	for i := 0; i < n; i += 8 {
		xv := archsimd.LoadFloat32x8Slice(x[i:])
		yv := archsimd.LoadFloat32x8Slice(y[i:])
		xv.MulAdd(av, yv).StoreSlice(y[i:])
	}
	archsimd.ClearAVXUpperBits()
}

func addTo256(dst, x []float32) {
	dst = dst[:len(x)]
	n := len(x) &^ (8 - 1)
	addToGo(dst[n:], x[n:])
	for i := 0; i < n; i += 8 {
		xv := archsimd.LoadFloat32x8Slice(x[i:])
		dv := archsimd.LoadFloat32x8Slice(dst[i:])
		dv.Add(xv).StoreSlice(dst[i:])
	}
	archsimd.ClearAVXUpperBits()
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

func maxUpdate256(best []float32, arg []int32, x []float32, t int32) {
	best = best[:len(x)]
	arg = arg[:len(x)]
	n := len(x) &^ (8 - 1)
	maxUpdateGo(best[n:], arg[n:], x[n:], t)
	tv := archsimd.BroadcastInt32x8(t)
	for i := 0; i < n; i += 8 {
		xv := archsimd.LoadFloat32x8Slice(x[i:])
		bv := archsimd.LoadFloat32x8Slice(best[i:])
		gt := xv.Greater(bv)
		xv.Merge(bv, gt).StoreSlice(best[i:])
		tv.Merge(archsimd.LoadInt32x8Slice(arg[i:]), gt).StoreSlice(arg[i:])
	}
	archsimd.ClearAVXUpperBits()
}

func adamStep256(p, g, m, v []float32, lr, b1, b2, eps, bc1, bc2 float32) {
	g = g[:len(p)]
	m = m[:len(p)]
	v = v[:len(p)]
	// The scalar tail goes first: a scalar float live after the vector loop
	// gets spilled and reloaded in it with legacy-SSE moves, and each of
	// those pays the AVX–SSE transition (about 300 ns here).
	n := len(p) &^ (8 - 1)
	adamStepGo(p[n:], g[n:], m[n:], v[n:], lr, b1, b2, eps, bc1, bc2)
	b1v := archsimd.BroadcastFloat32x8(b1)
	b2v := archsimd.BroadcastFloat32x8(b2)
	c1v := archsimd.BroadcastFloat32x8(1 - b1)
	c2v := archsimd.BroadcastFloat32x8(1 - b2)
	sv := archsimd.BroadcastFloat32x8(lr / bc1)
	iv := archsimd.BroadcastFloat32x8(1 / sqrt32(bc2))
	ev := archsimd.BroadcastFloat32x8(eps)
	for i := 0; i < n; i += 8 {
		gv := archsimd.LoadFloat32x8Slice(g[i:])
		mv := archsimd.LoadFloat32x8Slice(m[i:]).MulAdd(b1v, gv.Mul(c1v))
		vv := archsimd.LoadFloat32x8Slice(v[i:]).MulAdd(b2v, gv.Mul(c2v).Mul(gv))
		mv.StoreSlice(m[i:])
		vv.StoreSlice(v[i:])
		d := vv.Sqrt().MulAdd(iv, ev)
		pv := archsimd.LoadFloat32x8Slice(p[i:])
		pv.Sub(sv.Mul(mv).Div(d)).StoreSlice(p[i:])
	}
	archsimd.ClearAVXUpperBits()
}

// windowMax512 computes 64 filters (four vectors) per pass over the
// windows: for each window it adds the four vectors of each slot's row, 256
// contiguous bytes, so a rarely used word's row streams in whole runs of
// lines instead of one line per 16 filters. The running maxima and their
// arguments stay in registers, twelve vectors in all, which the compiler
// keeps without spilling; there is no branch on whether a maximum changed
// (such branches are unpredictable). The lanes past nf read the rows' slack
// and are never returned to callers as results.
func windowMax512(rows []*float32, w, nf, col int, bias, best []float32, arg []int32, t0, t1 int) {
	if t1 <= t0 {
		return
	}
	np := padLanes(nf)
	_ = rows[t1-1+w-1]
	bias, best, arg = bias[:np], best[:np], arg[:np]
	stride := uintptr(4 * nf)
	for j := 0; j < np; j += 64 {
		bp := (*[64]float32)(bias[j : j+64])
		mp := (*[64]float32)(best[j : j+64])
		ap := (*[64]int32)(arg[j : j+64])
		m0 := archsimd.LoadFloat32x16((*[16]float32)(mp[0:16]))
		m1 := archsimd.LoadFloat32x16((*[16]float32)(mp[16:32]))
		m2 := archsimd.LoadFloat32x16((*[16]float32)(mp[32:48]))
		m3 := archsimd.LoadFloat32x16((*[16]float32)(mp[48:64]))
		i0 := archsimd.LoadInt32x16((*[16]int32)(ap[0:16]))
		i1 := archsimd.LoadInt32x16((*[16]int32)(ap[16:32]))
		i2 := archsimd.LoadInt32x16((*[16]int32)(ap[32:48]))
		i3 := archsimd.LoadInt32x16((*[16]int32)(ap[48:64]))
		off := uintptr(4 * (col + j))
		for t := t0; t < t1; t++ {
			a0 := archsimd.LoadFloat32x16((*[16]float32)(bp[0:16]))
			a1 := archsimd.LoadFloat32x16((*[16]float32)(bp[16:32]))
			a2 := archsimd.LoadFloat32x16((*[16]float32)(bp[32:48]))
			a3 := archsimd.LoadFloat32x16((*[16]float32)(bp[48:64]))
			o := off
			for _, r := range rows[t : t+w] {
				p := unsafe.Add(unsafe.Pointer(r), o)
				a0 = a0.Add(archsimd.LoadFloat32x16((*[16]float32)(p)))
				a1 = a1.Add(archsimd.LoadFloat32x16((*[16]float32)(unsafe.Add(p, 64))))
				a2 = a2.Add(archsimd.LoadFloat32x16((*[16]float32)(unsafe.Add(p, 128))))
				a3 = a3.Add(archsimd.LoadFloat32x16((*[16]float32)(unsafe.Add(p, 192))))
				o += stride
			}
			tv := archsimd.BroadcastInt32x16(int32(t))
			g := a0.Greater(m0)
			m0, i0 = a0.Merge(m0, g), tv.Merge(i0, g)
			g = a1.Greater(m1)
			m1, i1 = a1.Merge(m1, g), tv.Merge(i1, g)
			g = a2.Greater(m2)
			m2, i2 = a2.Merge(m2, g), tv.Merge(i2, g)
			g = a3.Greater(m3)
			m3, i3 = a3.Merge(m3, g), tv.Merge(i3, g)
		}
		m0.Store((*[16]float32)(mp[0:16]))
		m1.Store((*[16]float32)(mp[16:32]))
		m2.Store((*[16]float32)(mp[32:48]))
		m3.Store((*[16]float32)(mp[48:64]))
		i0.Store((*[16]int32)(ap[0:16]))
		i1.Store((*[16]int32)(ap[16:32]))
		i2.Store((*[16]int32)(ap[32:48]))
		i3.Store((*[16]int32)(ap[48:64]))
	}
	archsimd.ClearAVXUpperBits()
}

// windowMax256 is windowMax512 with two 8-lane halves per chunk.
func windowMax256(rows []*float32, w, nf, col int, bias, best []float32, arg []int32, t0, t1 int) {
	if t1 <= t0 {
		return
	}
	np := padLanes(nf)
	_ = rows[t1-1+w-1]
	bias, best, arg = bias[:np], best[:np], arg[:np]
	for j := 0; j < np; j += 8 {
		bv := archsimd.LoadFloat32x8Slice(bias[j:])
		mx := archsimd.LoadFloat32x8Slice(best[j:])
		ag := archsimd.LoadInt32x8Slice(arg[j:])
		off := uintptr(4 * (col + j))
		stride := uintptr(4 * nf)
		for t := t0; t < t1; t++ {
			acc := bv
			o := off
			for _, r := range rows[t : t+w] {
				acc = acc.Add(archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(unsafe.Pointer(r), o))))
				o += stride
			}
			gt := acc.Greater(mx)
			mx = acc.Merge(mx, gt)
			ag = archsimd.BroadcastInt32x8(int32(t)).Merge(ag, gt)
		}
		mx.StoreSlice(best[j:])
		ag.StoreSlice(arg[j:])
	}
	archsimd.ClearAVXUpperBits()
}

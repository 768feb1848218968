//go:build goexperiment.simd && amd64

package cnn

import (
	"simd/archsimd"
	"unsafe"

	"telltale/internal/f32"
)

// SIMD kernels written with Go's experimental simd/archsimd package (build
// with GOEXPERIMENT=simd). At start-up the dispatch functions pick, from the
// CPU's features, AVX-512 (Float32x16) where present, else AVX2 with FMA
// (Float32x8), else the portable versions of kernel.go. The matrix product
// and dot product live in telltale/internal/f32, which picks the same level.
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

var avx2Kernels = kernelSet{
	name:      "avx2",
	axpy:      axpy256,
	addTo:     addTo256,
	maxUpdate: maxUpdate256,
	adamStep:  adamStep256,
	windowMax: windowMax256,
}

var avx512Kernels = kernelSet{
	name:      "avx512",
	axpy:      axpy512,
	addTo:     addTo512,
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

// ---- AVX-512 ----

func axpy512(alpha float32, x, y []float32) {
	if len(x) < 16 {
		// No vector to run: the scalar loop alone, without touching the
		// vector registers (a wide row of a few labels takes this path).
		axpyGo(alpha, x, y)
		return
	}
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
	if len(x) < 16 {
		addToGo(dst, x)
		return
	}
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

func axpy256(alpha float32, x, y []float32) {
	if len(x) < 8 {
		// No vector to run: the scalar loop alone, without touching the
		// vector registers (a wide row of a few labels takes this path).
		axpyGo(alpha, x, y)
		return
	}
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
	if len(x) < 8 {
		addToGo(dst, x)
		return
	}
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
// (such branches are unpredictable). A last run of 33 to 48 filters takes a
// pass of three vectors (windowMax512x3), so that 100 filters cost 7
// vectors a slot instead of 8. The lanes past nf read the rows' slack and
// are never returned to callers as results.
func windowMax512(rows []*float32, w, nf, col int, bias, best []float32, arg []int32, t0, t1 int) {
	if t1 <= t0 {
		return
	}
	np := padLanes(nf)
	_ = rows[t1-1+w-1]
	bias, best, arg = bias[:np], best[:np], arg[:np]
	for j := 0; j < np; j += 64 {
		if rem := nf - j; rem > 32 && rem <= 48 {
			windowMax512x3(rows[:t1-1+w], w, nf, col+j, (*[48]float32)(bias[j:j+48]), (*[48]float32)(best[j:j+48]), (*[48]int32)(arg[j:j+48]), t0, t1)
			continue
		}
		windowMax512x4(rows[:t1-1+w], w, nf, col+j, (*[64]float32)(bias[j:j+64]), (*[64]float32)(best[j:j+64]), (*[64]int32)(arg[j:j+64]), t0, t1)
	}
	archsimd.ClearAVXUpperBits()
}

// windowMax512x4 is one pass of windowMax512 over 64 filters, those whose
// slot-0 values start at column col of the rows.
func windowMax512x4(rows []*float32, w, nf, col int, bp, mp *[64]float32, ap *[64]int32, t0, t1 int) {
	stride := uintptr(4 * nf)
	m0 := archsimd.LoadFloat32x16((*[16]float32)(mp[0:16]))
	m1 := archsimd.LoadFloat32x16((*[16]float32)(mp[16:32]))
	m2 := archsimd.LoadFloat32x16((*[16]float32)(mp[32:48]))
	m3 := archsimd.LoadFloat32x16((*[16]float32)(mp[48:64]))
	i0 := archsimd.LoadInt32x16((*[16]int32)(ap[0:16]))
	i1 := archsimd.LoadInt32x16((*[16]int32)(ap[16:32]))
	i2 := archsimd.LoadInt32x16((*[16]int32)(ap[32:48]))
	i3 := archsimd.LoadInt32x16((*[16]int32)(ap[48:64]))
	off := uintptr(4 * col)
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

// windowMax512x3 is windowMax512x4 over 48 filters.
func windowMax512x3(rows []*float32, w, nf, col int, bp, mp *[48]float32, ap *[48]int32, t0, t1 int) {
	stride := uintptr(4 * nf)
	m0 := archsimd.LoadFloat32x16((*[16]float32)(mp[0:16]))
	m1 := archsimd.LoadFloat32x16((*[16]float32)(mp[16:32]))
	m2 := archsimd.LoadFloat32x16((*[16]float32)(mp[32:48]))
	i0 := archsimd.LoadInt32x16((*[16]int32)(ap[0:16]))
	i1 := archsimd.LoadInt32x16((*[16]int32)(ap[16:32]))
	i2 := archsimd.LoadInt32x16((*[16]int32)(ap[32:48]))
	off := uintptr(4 * col)
	for t := t0; t < t1; t++ {
		a0 := archsimd.LoadFloat32x16((*[16]float32)(bp[0:16]))
		a1 := archsimd.LoadFloat32x16((*[16]float32)(bp[16:32]))
		a2 := archsimd.LoadFloat32x16((*[16]float32)(bp[32:48]))
		o := off
		for _, r := range rows[t : t+w] {
			p := unsafe.Add(unsafe.Pointer(r), o)
			a0 = a0.Add(archsimd.LoadFloat32x16((*[16]float32)(p)))
			a1 = a1.Add(archsimd.LoadFloat32x16((*[16]float32)(unsafe.Add(p, 64))))
			a2 = a2.Add(archsimd.LoadFloat32x16((*[16]float32)(unsafe.Add(p, 128))))
			o += stride
		}
		tv := archsimd.BroadcastInt32x16(int32(t))
		g := a0.Greater(m0)
		m0, i0 = a0.Merge(m0, g), tv.Merge(i0, g)
		g = a1.Greater(m1)
		m1, i1 = a1.Merge(m1, g), tv.Merge(i1, g)
		g = a2.Greater(m2)
		m2, i2 = a2.Merge(m2, g), tv.Merge(i2, g)
	}
	m0.Store((*[16]float32)(mp[0:16]))
	m1.Store((*[16]float32)(mp[16:32]))
	m2.Store((*[16]float32)(mp[32:48]))
	i0.Store((*[16]int32)(ap[0:16]))
	i1.Store((*[16]int32)(ap[16:32]))
	i2.Store((*[16]int32)(ap[32:48]))
}

// windowMax256 is windowMax512 with one 8-lane vector per pass, and as
// many passes as nf needs (13 for 100 filters, not the 16 of padLanes).
func windowMax256(rows []*float32, w, nf, col int, bias, best []float32, arg []int32, t0, t1 int) {
	if t1 <= t0 {
		return
	}
	np := padLanes(nf)
	_ = rows[t1-1+w-1]
	bias, best, arg = bias[:np], best[:np], arg[:np]
	for j := 0; j < nf; j += 8 {
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

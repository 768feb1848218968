package cnn

import (
	"math"
	"unsafe"
)

// Dense float32 kernels used by the hot loops.
//
// Callers use axpy, addTo, maxUpdate, adamStep and windowMax. Those names
// are dispatch functions defined in kernel_generic.go (the default build: they
// call the portable versions in this file) and in kernel_simd_amd64.go (built
// with GOEXPERIMENT=simd on amd64: they pick an AVX-512 or AVX2+FMA version at
// start-up from the CPU's features, and fall back to these otherwise).
//
// Every version must agree with the portable one on every input up to float32
// rounding; kernel_test.go checks each available version against a float64
// reference on random inputs and odd sizes.
//
// All kernels are single-threaded, allocate nothing in steady state, keep no
// state between calls and are safe to call from many goroutines at once.
// The matrix product and the dot product are package telltale/internal/f32
// (MatMulNT, MatMulNTPacked, Dot), shared with package explain.

// kernelSet is one complete implementation of the kernels, for tests and
// benchmarks that compare implementations side by side.
type kernelSet struct {
	name      string
	axpy      func(alpha float32, x, y []float32)
	addTo     func(dst, x []float32)
	maxUpdate func(best []float32, arg []int32, x []float32, t int32)
	adamStep  func(p, g, m, v []float32, lr, b1, b2, eps, bc1, bc2 float32)
	windowMax func(rows []*float32, w, nf, col int, bias, best []float32, arg []int32, t0, t1 int)
}

// portableKernels is the pure-Go implementation, available in every build.
var portableKernels = kernelSet{
	name:      "go",
	axpy:      axpyGo,
	addTo:     addToGo,
	maxUpdate: maxUpdateGo,
	adamStep:  adamStepGo,
	windowMax: windowMaxGo,
}

// axpyGo adds alpha·x to y. Len(y) must be at least len(x).
func axpyGo(alpha float32, x, y []float32) {
	y = y[:len(x)]
	for i, v := range x {
		y[i] += alpha * v
	}
}

// axpyRow is axpy for the short rows of the wide tables (a weight per
// label): below eight values, shorter than a vector of any SIMD version,
// where every version of axpy is axpyGo, it runs that loop inline, saving
// the dispatch; a longer row goes to axpy. Len(y) must be at least len(x).
func axpyRow(alpha float32, x, y []float32) {
	if len(x) < 8 {
		axpyGo(alpha, x, y)
		return
	}
	axpy(alpha, x, y)
}

// addToGo adds x to dst elementwise. Len(dst) must be at least len(x).
func addToGo(dst, x []float32) {
	dst = dst[:len(x)]
	for i, v := range x {
		dst[i] += v
	}
}

// maxUpdateGo sets best[i], arg[i] = x[i], t wherever x[i] > best[i]: one step
// of a running maximum with first-maximum tie break (a later equal value does
// not replace an earlier one). Len(best) and len(arg) must be at least len(x).
func maxUpdateGo(best []float32, arg []int32, x []float32, t int32) {
	best = best[:len(x)]
	arg = arg[:len(x)]
	for i, v := range x {
		if v > best[i] {
			best[i], arg[i] = v, t
		}
	}
}

// adamStepGo applies one Adam update (Kingma & Ba 2015, "Adam: A Method for
// Stochastic Optimization", ICLR; in PyTorch's formulation of torch.optim.Adam
// without weight decay) to parameters p with gradient g and moment estimates
// m and v:
//
//	m ← b1·m + (1−b1)·g
//	v ← b2·v + (1−b2)·g²
//	p ← p − (lr/bc1)·m / (√v/√bc2 + eps)
//
// where bc1 = 1−b1^t and bc2 = 1−b2^t are the bias corrections of step t
// (t counts from 1). Len(g), len(m) and len(v) must be at least len(p).
func adamStepGo(p, g, m, v []float32, lr, b1, b2, eps, bc1, bc2 float32) {
	g = g[:len(p)]
	m = m[:len(p)]
	v = v[:len(p)]
	step := lr / bc1
	isb2 := 1 / sqrt32(bc2)
	c1, c2 := 1-b1, 1-b2
	for i, gi := range g {
		mi := b1*m[i] + c1*gi
		vi := b2*v[i] + c2*gi*gi
		m[i], v[i] = mi, vi
		d := sqrt32(vi)*isb2 + eps
		p[i] -= step * mi / d
	}
}

// winLanes is the padding unit of windowMax's filter vectors: bias, best
// and arg hold padLanes(nf) values, and every table row is readable that far
// past its last slot (the AVX-512 kernel computes 64 filters per pass).
const winLanes = 64

// padLanes rounds n up to a multiple of winLanes.
func padLanes(n int) int { return (n + winLanes - 1) &^ (winLanes - 1) }

// windowMaxGo runs the windows t ∈ [t0, t1) of one filter bank of width w
// over a text given by its slot-table rows (rows[p] points at the table row
// of the word at position p; a PAD position points at a zero row): the
// pre-activations
//
//	a[f] = bias[f] + Σ_{s<w} rows[t+s][col + s·nf + f]   (summed in order of s)
//
// of the nf filters update the running maximum best, arg (first maximum:
// a later equal value does not replace an earlier one). Len(rows) must be at
// least t1−1+w; bias, best and arg must hold padLanes(nf) values (the
// padding is scratch: its contents are unspecified afterwards); every row
// must be readable at col + (w−1)·nf + padLanes(nf) values.
func windowMaxGo(rows []*float32, w, nf, col int, bias, best []float32, arg []int32, t0, t1 int) {
	if t1 <= t0 {
		return
	}
	_ = rows[t1-1+w-1]
	bias, best, arg = bias[:nf], best[:nf], arg[:nf]
	var acc [winLanes]float32
	for j := 0; j < nf; j += winLanes {
		n := min(winLanes, nf-j)
		bj, aj := best[j:j+n], arg[j:j+n]
		for t := t0; t < t1; t++ {
			a := acc[:n]
			copy(a, bias[j:j+n])
			for s := 0; s < w; s++ {
				r := unsafe.Slice((*float32)(unsafe.Add(unsafe.Pointer(rows[t+s]), 4*(col+s*nf+j))), n)
				for i, v := range r {
					a[i] += v
				}
			}
			for i, v := range a {
				if v > bj[i] {
					bj[i], aj[i] = v, int32(t)
				}
			}
		}
	}
}

// sqrt32 is the correctly rounded float32 square root (rounding the float64
// root once more is exact for float32 arguments).
func sqrt32(x float32) float32 { return float32(math.Sqrt(float64(x))) }

// KernelName names the float32 kernels this build runs on this CPU: "go"
// (portable), "avx2" or "avx512".
func KernelName() string { return kernelLevel }

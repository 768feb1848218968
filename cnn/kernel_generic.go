//go:build !(goexperiment.simd && amd64)

package cnn

// Dispatch for builds without SIMD kernels: every kernel is the portable
// version of kernel.go. Build with GOEXPERIMENT=simd on amd64 for the fast
// path (kernel_simd_amd64.go).

// axpy adds alpha·x to y. Len(y) must be at least len(x).
func axpy(alpha float32, x, y []float32) { axpyGo(alpha, x, y) }

// addTo adds x to dst elementwise. Len(dst) must be at least len(x).
func addTo(dst, x []float32) { addToGo(dst, x) }

// maxUpdate sets best[i], arg[i] = x[i], t wherever x[i] > best[i] (see
// maxUpdateGo). Len(best) and len(arg) must be at least len(x).
func maxUpdate(best []float32, arg []int32, x []float32, t int32) { maxUpdateGo(best, arg, x, t) }

// adamStep applies one Adam update to p (see adamStepGo for the formula and
// the meaning of bc1, bc2).
func adamStep(p, g, m, v []float32, lr, b1, b2, eps, bc1, bc2 float32) {
	adamStepGo(p, g, m, v, lr, b1, b2, eps, bc1, bc2)
}

// windowMax runs the windows of one filter bank over a text's table rows
// (see windowMaxGo).
func windowMax(rows []*float32, w, nf, col int, bias, best []float32, arg []int32, t0, t1 int) {
	windowMaxGo(rows, w, nf, col, bias, best, arg, t0, t1)
}

// kernelLevel names the implementation the dispatch functions use.
const kernelLevel = "go"

// kernelSets lists every implementation this build and CPU can run; the
// first is the portable one.
func kernelSets() []kernelSet { return []kernelSet{portableKernels} }

//go:build !(goexperiment.simd && amd64)

package explain

// Dispatch for builds without SIMD kernels: every kernel is the portable
// version of kernel.go. Build with GOEXPERIMENT=simd on amd64 for the fast
// path (kernel_simd_amd64.go).

// poolBank max-pools one bank of filters over a text (see poolBankGo).
func poolBank(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32) {
	poolBankGo(pre, start, bias, rows, w, F, win)
}

// poolBankNeg is poolBank with the negative-window screen (see
// poolBankNegGo).
func poolBankNeg(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, sc *bankScreen, cands []negCand) []negCand {
	return poolBankNegGo(pre, start, bias, rows, w, F, sc, cands)
}

// maxInto sets dst[f] = max(dst[f], x[f]) (see maxIntoGo).
func maxInto(dst, x []float32) { maxIntoGo(dst, x) }

// subMaxInto sets dst[f] = max(dst[f], a[f] − b[f]) (see subMaxIntoGo).
func subMaxInto(dst, a, b []float32) { subMaxIntoGo(dst, a, b) }

// kernelLevel names the implementation the dispatch functions use.
const kernelLevel = "go"

// kernelSets lists every implementation this build and CPU can run; the
// first is the portable one.
func kernelSets() []kernelSet { return []kernelSet{portableKernels} }

//go:build !(goexperiment.simd && amd64)

package explain

// bestPositive is the kept-down windows search of one bank (see
// bestPositiveGo); without SIMD kernels it is the portable version.
func bestPositive(best []float32, at []int32, bias []float32, rows [][]float32, w, F int, skip []int32) {
	bestPositiveGo(best, at, bias, rows, w, F, skip)
}

// bestPositiveSets lists every implementation of bestPositive this build
// and CPU can run; the first is the portable one.
func bestPositiveSets() []namedBestPositive {
	return []namedBestPositive{{"go", bestPositiveGo}}
}

//go:build !(goexperiment.simd && amd64)

package explain

// occludeToken is the occlusion of one token in one bank (see
// occludeTokenGo); without SIMD kernels it is the portable version.
func occludeToken(nm, before, after, win, row []float32, F, t0, t1, i int) {
	occludeTokenGo(nm, before, after, win, row, F, t0, t1, i)
}

// changedUnits marks the pooled units that differ (see changedUnitsGo).
func changedUnits(bits []uint64, nm, old []float32) { changedUnitsGo(bits, nm, old) }

// maxOf sets dst to the elementwise maximum of a and b (see maxOfGo).
func maxOf(dst, a, b []float32) { maxOfGo(dst, a, b) }

// occKernelSets lists every implementation this build and CPU can run; the
// first is the portable one.
func occKernelSets() []occKernels {
	return []occKernels{{"go", occludeTokenGo, changedUnitsGo, maxOfGo}}
}

//go:build !(goexperiment.simd && amd64)

package explain

// poolKept pools one bank and keeps its two best positive parts (see
// poolKeptGo).
func poolKept(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32, top *keptTop) {
	poolKeptGo(pre, start, bias, rows, w, F, win, top)
}

// poolKeptSets lists every implementation of poolKept this build and CPU
// can run; the first is the portable one.
func poolKeptSets() []namedPoolKept { return []namedPoolKept{{"go", poolKeptGo}} }

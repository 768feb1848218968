package explain

// The kept-down windows search runs with the pooling of Explain: the
// portable kernel is poolKeptGo (poolkept.go); the dispatch function
// poolKept (keptkernel_generic.go, or keptkernel_simd_amd64.go when built
// with GOEXPERIMENT=simd on amd64) calls it or its SIMD versions.

// namedPoolKept is one implementation of poolKept, for the tests that
// compare every implementation with the portable one.
type namedPoolKept struct {
	name string
	fn   func(pre []float32, start []int32, bias []float32, rows [][]float32, w, F int, win []float32, top *keptTop)
}

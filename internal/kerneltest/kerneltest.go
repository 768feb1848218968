// Package kerneltest holds what the tests of the float32 kernels share
// (internal/f32, cnn, explain): the sizes they try, the tolerance against
// float64 references, random inputs and guard regions that catch writes past
// the end of a slice. It is imported by tests only.
package kerneltest

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Sizes are the odd and even sizes every kernel is tried on.
var Sizes = []int{1, 2, 3, 7, 15, 16, 17, 31, 33, 100, 129}

// Tol is the relative tolerance of float32 kernels against float64
// references, relative to the sum of absolute terms. A float32 sum of k
// terms errs by at most about k·2⁻²⁴ of that sum (standard rounding-error
// bound, Higham, "Accuracy and Stability of Numerical Algorithms", §3.1);
// random rounding errors grow like √k, well inside 1e-5 for k ≤ 129.
const Tol = 1e-5

// RandSlice returns n standard-normal values.
func RandSlice(r *rand.Rand, n int) []float32 {
	s := make([]float32, n)
	for i := range s {
		s[i] = float32(r.NormFloat64())
	}
	return s
}

// WithGuard returns a slice of n values filled with fill, followed by a
// guard region (in the same array, beyond len) that a kernel must not touch.
func WithGuard(n int, fill float32) (s, guard []float32) {
	full := make([]float32, n+8)
	for i := range full {
		full[i] = fill
	}
	return full[:n], full[n:]
}

// CheckGuard fails the test if a kernel wrote into guard.
func CheckGuard(t *testing.T, guard []float32, fill float32, what string) {
	t.Helper()
	for i, v := range guard {
		if v != fill && !(math.IsNaN(float64(v)) && math.IsNaN(float64(fill))) {
			t.Fatalf("%s: wrote past the end: guard[%d] = %g", what, i, v)
		}
	}
}

//go:build !linux

package explain

// largeFloats returns a zeroed slice of n float32 (see the Linux version,
// which asks for huge pages).
func largeFloats(n int) []float32 { return make([]float32, n) }

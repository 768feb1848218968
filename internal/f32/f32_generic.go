//go:build !(goexperiment.simd && amd64)

package f32

// Dispatch for builds without SIMD kernels: every kernel is the portable
// version of f32.go. Build with GOEXPERIMENT=simd on amd64 for the fast path
// (f32_simd_amd64.go).

// MatMulNT sets c (m×n) to a (m×k) times the transpose of b (n×k), all
// row-major and contiguous. Len(c) must be at least m·n, len(a) at least m·k,
// len(b) at least n·k.
func MatMulNT(c, a, b []float32, m, n, k int) { matMulNTGo(c, a, b, m, n, k) }

// Dot returns the dot product of x and y[:len(x)].
func Dot(x, y []float32) float32 { return dotGo(x, y) }

// PackWeights packs nothing in this build (see the SIMD build's version): it
// returns nil, which MatMulNTPacked takes as "not packed".
func PackWeights(dst, b []float32, n, k int) []float32 { return nil }

// MatMulNTPacked is MatMulNT (b is never packed in this build).
func MatMulNTPacked(c, a, b, pb []float32, m, n, k int) { MatMulNT(c, a, b, m, n, k) }

// kernelLevel names the implementation the dispatch functions use.
const kernelLevel = "go"

// kernelSets lists every implementation this build and CPU can run; the
// first is the portable one.
func kernelSets() []kernelSet { return []kernelSet{portableKernels} }

package f32

// Portable kernels. The dispatch functions MatMulNT, Dot, PackWeights and
// MatMulNTPacked (f32_generic.go, or f32_simd_amd64.go when built with
// GOEXPERIMENT=simd on amd64) call these or their SIMD versions.

// kernelSet is one complete implementation of the kernels, for tests and
// benchmarks that compare implementations side by side.
type kernelSet struct {
	name     string
	matMulNT func(c, a, b []float32, m, n, k int)
	dot      func(x, y []float32) float32
}

// portableKernels is the pure-Go implementation, available in every build.
var portableKernels = kernelSet{name: "go", matMulNT: matMulNTGo, dot: dotGo}

// KernelName names the implementation this build runs on this CPU: "go"
// (portable), "avx2" or "avx512".
func KernelName() string { return kernelLevel }

// checkMatMulNT panics unless the slices hold the matrices their shapes say.
func checkMatMulNT(c, a, b []float32, m, n, k int) {
	if m < 0 || n < 0 || k < 0 || len(c) < m*n || len(a) < m*k || len(b) < n*k {
		panic("f32: MatMulNT: slice too short for its shape")
	}
}

// matMulNTGo sets c (m×n) to a (m×k) times the transpose of b (n×k), all
// row-major and contiguous: c[i*n+j] = Σ_p a[i*k+p]·b[j*k+p]. Len(c) must be
// at least m·n, len(a) at least m·k and len(b) at least n·k.
//
// It computes four outputs of a row at a time so that each load of a[i][p]
// serves four products and the four sums run as independent chains.
func matMulNTGo(c, a, b []float32, m, n, k int) {
	checkMatMulNT(c, a, b, m, n, k)
	for i := 0; i < m; i++ {
		ai := a[i*k : i*k+k]
		ci := c[i*n : i*n+n]
		j := 0
		for ; j+4 <= n; j += 4 {
			b0 := b[j*k : j*k+k]
			b1 := b[(j+1)*k : (j+1)*k+k]
			b2 := b[(j+2)*k : (j+2)*k+k]
			b3 := b[(j+3)*k : (j+3)*k+k]
			var s0, s1, s2, s3 float32
			for p, v := range ai {
				s0 += v * b0[p]
				s1 += v * b1[p]
				s2 += v * b2[p]
				s3 += v * b3[p]
			}
			ci[j], ci[j+1], ci[j+2], ci[j+3] = s0, s1, s2, s3
		}
		for ; j < n; j++ {
			ci[j] = dotGo(ai, b[j*k:j*k+k])
		}
	}
}

// dotGo returns the dot product of x and y[:len(x)]. Len(y) must be at least
// len(x).
func dotGo(x, y []float32) float32 {
	y = y[:len(x)]
	var s0, s1, s2, s3 float32
	i := 0
	for ; i+4 <= len(x); i += 4 {
		s0 += x[i] * y[i]
		s1 += x[i+1] * y[i+1]
		s2 += x[i+2] * y[i+2]
		s3 += x[i+3] * y[i+3]
	}
	for ; i < len(x); i++ {
		s0 += x[i] * y[i]
	}
	return (s0 + s1) + (s2 + s3)
}

// RowDot returns entry j of the one-row product MatMulNT(c, a, b, 1, n, k),
// bit for bit, without computing the other n−1 entries. Len(a) must be at
// least k, len(b) at least n·k, and 0 ≤ j < n.
//
// Every implementation computes a one-row product four columns at a time,
// the group of column j being columns j&^3 … (j&^3)+3, and the columns past
// the last whole group one at a time with Dot; a group's four sums do not
// depend on the other columns. So RowDot multiplies a by the four rows of
// b of j's group (or returns Dot for a column past the last group).
// TestRowDot checks the equality for every implementation.
func RowDot(a, b []float32, n, k, j int) float32 {
	if j < 0 || j >= n || k < 0 || len(a) < k || len(b) < n*k {
		panic("f32: RowDot: index or slice length outside the shape")
	}
	j0 := j &^ 3
	if j0+4 > n {
		return Dot(a[:k], b[j*k:j*k+k])
	}
	var c [4]float32
	MatMulNT(c[:], a[:k], b[j0*k:(j0+4)*k], 1, 4, k)
	return c[j-j0]
}

// StableRows returns the row count, at least m, to which a caller pads a
// (with rows of its choosing, e.g. zeros) so that each row of the result
// of MatMulNT or MatMulNTPacked is the same bit for bit whatever the other
// rows and their number. Every implementation then computes each row alone
// with one kernel: the portable one always does, and the SIMD ones send a
// product of at least 8 rows, a multiple of 4, through their 4-row
// micro-kernel only (fewer rows go through dot products, and the rows past
// the last group of 4 through a one-row kernel, both summing in another
// order). Tables built this way in pieces, in any order, are equal to one
// built at once. TestStableRows checks it for every implementation.
func StableRows(m int) int { return max(8, (m+3)&^3) }

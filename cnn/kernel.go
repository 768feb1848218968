package cnn

// Dense float32 kernels used by the hot loops. These are the portable
// versions; faster ones for amd64 live beside them behind build tags and must
// agree with these on every input (see kernel_test.go).

// matMulNT sets c (m×n) to a (m×k) times the transpose of b (n×k), all
// row-major and contiguous.
func matMulNT(c, a, b []float32, m, n, k int) {
	for i := 0; i < m; i++ {
		ai := a[i*k : i*k+k]
		ci := c[i*n : i*n+n]
		for j := 0; j < n; j++ {
			bj := b[j*k : j*k+k]
			var s float32
			for p, v := range ai {
				s += v * bj[p]
			}
			ci[j] = s
		}
	}
}

// axpy adds alpha·x to y. Len(y) must be at least len(x).
func axpy(alpha float32, x, y []float32) {
	y = y[:len(x)]
	for i, v := range x {
		y[i] += alpha * v
	}
}

// addTo adds x to dst elementwise. Len(dst) must be at least len(x).
func addTo(dst, x []float32) {
	dst = dst[:len(x)]
	for i, v := range x {
		dst[i] += v
	}
}

// dot returns the dot product of x and y[:len(x)].
func dot(x, y []float32) float32 {
	y = y[:len(x)]
	var s float32
	for i, v := range x {
		s += v * y[i]
	}
	return s
}

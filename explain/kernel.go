package explain

// matMulNT sets c (m×n) to a (m×k) times the transpose of b (n×k), all
// row-major and contiguous. Each c[i][j] is accumulated over p in order, so
// it equals dot(a_i, b_j) bit for bit; blocking over 4 columns only reuses
// the loads of a_i.
func matMulNT(c, a, b []float32, m, n, k int) {
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
			ci[j] = dot(ai, b[j*k:j*k+k])
		}
	}
}

// dot returns the dot product of x and y[:len(x)], accumulated in order.
func dot(x, y []float32) float32 {
	y = y[:len(x)]
	var s float32
	for i, v := range x {
		s += v * y[i]
	}
	return s
}

// addTo adds x to dst elementwise. Len(dst) must be at least len(x).
func addTo(dst, x []float32) {
	dst = dst[:len(x)]
	for i, v := range x {
		dst[i] += v
	}
}

package explain

import (
	"math"
	"math/rand/v2"
	"testing"
)

func randSlice(rng *rand.Rand, n int) []float32 {
	x := make([]float32, n)
	for i := range x {
		x[i] = float32(rng.NormFloat64())
	}
	return x
}

// Every kernel set this build and CPU can run must agree with the portable
// one on random inputs of odd sizes: poolBank bit for bit (the sums are taken
// in the same order), matMulNT and dot within float rounding of a float64
// reference.
func TestKernelsAgree(t *testing.T) {
	sets := kernelSets()
	t.Logf("kernel level %s, %d implementations", kernelLevel, len(sets))
	rng := rand.New(rand.NewPCG(40, 40))
	for _, ks := range sets {
		for trial := 0; trial < 300; trial++ {
			F := 1 + rng.IntN(70)
			if trial%5 == 0 {
				F = 100
			}
			w := 1 + rng.IntN(6)
			n := w + rng.IntN(90)
			rows := make([][]float32, n)
			vocab := make([][]float32, 1+rng.IntN(8))
			for i := range vocab {
				vocab[i] = randSlice(rng, w*F+rng.IntN(3))
				if trial%7 == 0 {
					// Ties between windows: first maximum must win.
					for j := range vocab[i] {
						vocab[i][j] = float32(rng.IntN(3))
					}
				}
			}
			for i := range rows {
				rows[i] = vocab[rng.IntN(len(vocab))]
			}
			bias := randSlice(rng, F)
			nw := n - w + 1
			keep := trial%2 == 0
			run := func(fn func([]float32, []int32, []float32, [][]float32, int, int, []float32)) ([]float32, []int32, []float32) {
				pre, start := make([]float32, F), make([]int32, F)
				var win []float32
				if keep {
					win = make([]float32, nw*F)
				}
				fn(pre, start, bias, rows, w, F, win)
				return pre, start, win
			}
			p0, s0, w0 := run(portableKernels.poolBank)
			p1, s1, w1 := run(ks.poolBank)
			for f := 0; f < F; f++ {
				if math.Float32bits(p0[f]) != math.Float32bits(p1[f]) || s0[f] != s1[f] {
					t.Fatalf("%s poolBank F=%d w=%d n=%d filter %d: (%g, %d), portable (%g, %d)", ks.name, F, w, n, f, p1[f], s1[f], p0[f], s0[f])
				}
			}
			for i := range w0 {
				if math.Float32bits(w0[i]) != math.Float32bits(w1[i]) {
					t.Fatalf("%s poolBank F=%d w=%d windows[%d] = %g, portable %g", ks.name, F, w, i, w1[i], w0[i])
				}
			}
		}
		for trial := 0; trial < 200; trial++ {
			m, n, k := rng.IntN(40), 1+rng.IntN(70), rng.IntN(300)
			if trial%4 == 0 {
				m, n, k = 8+rng.IntN(150), 300, 128
			}
			a, b := randSlice(rng, m*k), randSlice(rng, n*k)
			c := randSlice(rng, m*n) // stale values must be overwritten
			ks.matMulNT(c, a, b, m, n, k)
			for i := 0; i < m; i++ {
				for j := 0; j < n; j++ {
					var want, mag float64
					for p := 0; p < k; p++ {
						v := float64(a[i*k+p]) * float64(b[j*k+p])
						want += v
						mag += math.Abs(v)
					}
					if got := float64(c[i*n+j]); math.Abs(got-want) > 1e-6*(1+mag) {
						t.Fatalf("%s matMulNT %d×%d×%d c[%d][%d] = %g, want %g", ks.name, m, n, k, i, j, got, want)
					}
				}
			}
			if k > 0 && n > 0 {
				x := randSlice(rng, k)
				got, want := float64(ks.dot(x, b)), float64(dotGo(x, b))
				if math.Abs(got-want) > 1e-5*(1+math.Abs(want)) {
					t.Fatalf("%s dot k=%d: %g, portable %g", ks.name, k, got, want)
				}
			}
		}
	}
}

// A word computed on the fly (fewer than smallM rows) gets exactly the slot
// scores that SlotScore reports.
func TestSmallMatMulIsDot(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 41))
	for _, k := range []int{1, 7, 16, 33, 128, 300} {
		a, b := randSlice(rng, k), randSlice(rng, 50*k)
		c := make([]float32, 50)
		matMulNT(c, a, b, 1, 50, k)
		for j := range c {
			if d := dot(a, b[j*k:(j+1)*k]); math.Float32bits(d) != math.Float32bits(c[j]) {
				t.Fatalf("k=%d column %d: %g, dot gives %g", k, j, c[j], d)
			}
		}
	}
}

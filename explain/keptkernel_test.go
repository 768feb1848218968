package explain

import (
	"math"
	"math/rand/v2"
	"testing"
)

// bestPositiveNaive finds, filter by filter, window by window, as the
// kept-down search reads (see keptDown), the window with the largest
// positive part other than skip[f] (first maximum; −Inf and −1 when none is
// left): the check of the kernels (common practice, no source).
func bestPositiveNaive(best []float32, at []int32, bias []float32, rows [][]float32, w, F int, skip []int32) {
	for f := 0; f < F; f++ {
		best[f], at[f] = negInf, -1
		for t := 0; t+w <= len(rows); t++ {
			if int32(t) == skip[f] {
				continue
			}
			p := bias[f]
			for s := 0; s < w; s++ {
				p += max(rows[t+s][s*F+f], 0)
			}
			if p > best[f] {
				best[f], at[f] = p, int32(t)
			}
		}
	}
}

// Every implementation of the pooling with the kept-down search gives
// poolBankGo's pooling and kept windows bit for bit, and, for any skipped
// window, the best other window of the naive search, on random banks of odd
// sizes with ties between windows and skipped windows (the winning window
// of a fired filter).
func TestKeptKernelsAgree(t *testing.T) {
	rng := rand.New(rand.NewPCG(44, 44))
	for trial := 0; trial < 300; trial++ {
		F := 1 + rng.IntN(70)
		if trial%5 == 0 {
			F = 100
		}
		w := 1 + rng.IntN(6)
		n := w + rng.IntN(90)
		if trial%11 == 0 {
			n = w // one window: skipping it leaves none
		}
		vocab := make([][]float32, 1+rng.IntN(8))
		for i := range vocab {
			vocab[i] = randSlice(rng, w*F+rng.IntN(3))
			if trial%7 == 0 {
				for j := range vocab[i] {
					vocab[i][j] = float32(rng.IntN(3)) - 1
				}
			}
		}
		rows := make([][]float32, n)
		for i := range rows {
			rows[i] = vocab[rng.IntN(len(vocab))]
		}
		nw := n - w + 1
		bias, skip := randSlice(rng, F), make([]int32, F)
		for f := range skip {
			skip[f] = int32(rng.IntN(nw+1)) - 1
		}
		pre0, start0, win0 := make([]float32, F), make([]int32, F), make([]float32, nw*F)
		poolBankGo(pre0, start0, bias, rows, w, F, win0)
		best0, at0 := make([]float32, F), make([]int32, F)
		bestPositiveNaive(best0, at0, bias, rows, w, F, skip)
		for _, impl := range poolKeptSets() {
			pre, start, win, top := make([]float32, F), make([]int32, F), make([]float32, nw*F), newKeptTop(F)
			impl.fn(pre, start, bias, rows, w, F, win, top)
			for f := 0; f < F; f++ {
				if math.Float32bits(pre[f]) != math.Float32bits(pre0[f]) || start[f] != start0[f] {
					t.Fatalf("%s F=%d w=%d n=%d filter %d: pooled (%g, %d), poolBankGo (%g, %d)", impl.name, F, w, n, f, pre[f], start[f], pre0[f], start0[f])
				}
				if best, at := top.best(f, skip[f]); math.Float32bits(best) != math.Float32bits(best0[f]) || at != at0[f] {
					t.Fatalf("%s F=%d w=%d n=%d filter %d skip %d: best other window (%g, %d), naive (%g, %d)", impl.name, F, w, n, f, skip[f], best, at, best0[f], at0[f])
				}
			}
			for i := range win {
				if math.Float32bits(win[i]) != math.Float32bits(win0[i]) {
					t.Fatalf("%s F=%d w=%d windows[%d] = %g, poolBankGo %g", impl.name, F, w, i, win[i], win0[i])
				}
			}
		}
	}
}

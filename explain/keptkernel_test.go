package explain

import (
	"math"
	"math/rand/v2"
	"testing"
)

// bestPositiveNaive is the search of bestPositiveGo written filter by
// filter, window by window, as its definition reads: the check of the
// portable kernel (common practice, no source).
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

// Every implementation of the kept-down search agrees bit for bit with the
// naive search on random banks of odd sizes, with ties between windows and
// skipped windows (the winning window of a fired filter).
func TestKeptKernelsAgree(t *testing.T) {
	rng := rand.New(rand.NewPCG(44, 44))
	impls := append([]namedBestPositive{{"naive", bestPositiveNaive}}, bestPositiveSets()...)
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
		bias, skip := randSlice(rng, F), make([]int32, F)
		for f := range skip {
			skip[f] = int32(rng.IntN(n-w+2)) - 1
		}
		best0, at0 := make([]float32, F), make([]int32, F)
		bestPositiveNaive(best0, at0, bias, rows, w, F, skip)
		for _, impl := range impls {
			best, at := make([]float32, F), make([]int32, F)
			impl.fn(best, at, bias, rows, w, F, skip)
			for f := 0; f < F; f++ {
				if math.Float32bits(best[f]) != math.Float32bits(best0[f]) || at[f] != at0[f] {
					t.Fatalf("%s F=%d w=%d n=%d filter %d: (%g, %d), naive (%g, %d)", impl.name, F, w, n, f, best[f], at[f], best0[f], at0[f])
				}
			}
		}
	}
}

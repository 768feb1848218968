package f32

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// Benchmarks, for every implementation this build can run:
//
//	go test ./internal/f32 -run '^$' -bench . -benchmem
//	GOEXPERIMENT=simd go test ./internal/f32 -run '^$' -bench . -benchmem
//
// MatMulNT reports GFLOP/s counting 2·m·n·k floating-point operations; Dot
// reports GB/s of the slices it reads.

func BenchmarkMatMulNT(b *testing.B) {
	// n = 1200, k = 128 is the word-slot table of the default model
	// (100 filters × widths 3, 4, 5 over 128-d embeddings) for m distinct
	// words; m = 1 is one word (explain); the last shape is odd-sized.
	shapes := [][3]int{{1, 1200, 128}, {4, 1200, 128}, {16, 1200, 128}, {100, 1200, 128},
		{500, 1200, 128}, {1000, 1200, 128}, {2000, 1200, 128}, {129, 33, 100}}
	r := rand.New(rand.NewPCG(1, 1))
	for _, ks := range kernelSets() {
		for _, sh := range shapes {
			m, n, k := sh[0], sh[1], sh[2]
			a, w, c := randSlice(r, m*k), randSlice(r, n*k), make([]float32, m*n)
			b.Run(fmt.Sprintf("%s/m=%d/n=%d/k=%d", ks.name, m, n, k), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					ks.matMulNT(c, a, w, m, n, k)
				}
				b.ReportMetric(2*float64(m*n*k)*float64(b.N)/b.Elapsed().Seconds()/1e9, "GFLOP/s")
			})
		}
	}
}

var sinkF32 float32

func BenchmarkDot(b *testing.B) {
	r := rand.New(rand.NewPCG(4, 4))
	for _, ks := range kernelSets() {
		for _, n := range []int{100, 128, 1 << 16} {
			x, y := randSlice(r, n), randSlice(r, n)
			b.Run(fmt.Sprintf("%s/n=%d", ks.name, n), func(b *testing.B) {
				b.ReportAllocs()
				b.SetBytes(int64(n * 8))
				for b.Loop() {
					sinkF32 = ks.dot(x, y)
				}
			})
		}
	}
}

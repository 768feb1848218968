package cnn

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// Kernel benchmarks, for every implementation this build can run:
//
//	go test ./cnn -run '^$' -bench Kernel -benchmem
//	GOEXPERIMENT=simd go test ./cnn -run '^$' -bench Kernel -benchmem
//
// matMulNT reports GFLOP/s counting 2·m·n·k floating-point operations; the
// elementwise kernels report GB/s of the slices they read and write.

func BenchmarkKernelMatMulNT(b *testing.B) {
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

func benchVec(b *testing.B, name string, lengths []int, bytesPer int, f func(n int) func()) {
	for _, n := range lengths {
		run := f(n)
		b.Run(fmt.Sprintf("%s/n=%d", name, n), func(b *testing.B) {
			b.ReportAllocs()
			b.SetBytes(int64(n * bytesPer))
			for b.Loop() {
				run()
			}
		})
	}
}

var benchLengths = []int{100, 128, 1 << 16}

func BenchmarkKernelAxpy(b *testing.B) {
	r := rand.New(rand.NewPCG(2, 2))
	for _, ks := range kernelSets() {
		benchVec(b, ks.name, benchLengths, 12, func(n int) func() {
			x, y := randSlice(r, n), randSlice(r, n)
			return func() { ks.axpy(1e-3, x, y) }
		})
	}
}

func BenchmarkKernelAddTo(b *testing.B) {
	r := rand.New(rand.NewPCG(3, 3))
	for _, ks := range kernelSets() {
		benchVec(b, ks.name, benchLengths, 12, func(n int) func() {
			x, y := randSlice(r, n), randSlice(r, n)
			return func() { ks.addTo(y, x) }
		})
	}
}

var sinkF32 float32

func BenchmarkKernelDot(b *testing.B) {
	r := rand.New(rand.NewPCG(4, 4))
	for _, ks := range kernelSets() {
		benchVec(b, ks.name, benchLengths, 8, func(n int) func() {
			x, y := randSlice(r, n), randSlice(r, n)
			return func() { sinkF32 = ks.dot(x, y) }
		})
	}
}

func BenchmarkKernelMaxUpdate(b *testing.B) {
	r := rand.New(rand.NewPCG(5, 5))
	for _, ks := range kernelSets() {
		benchVec(b, ks.name, benchLengths, 16, func(n int) func() {
			best, x := randSlice(r, n), randSlice(r, n)
			arg := make([]int32, n)
			return func() { ks.maxUpdate(best, arg, x, 7) }
		})
	}
}

func BenchmarkKernelAdamStep(b *testing.B) {
	r := rand.New(rand.NewPCG(6, 6))
	for _, ks := range kernelSets() {
		benchVec(b, ks.name, []int{1 << 16, 1 << 20}, 28, func(n int) func() {
			p, g := randSlice(r, n), randSlice(r, n)
			m, v := make([]float32, n), make([]float32, n)
			return func() { ks.adamStep(p, g, m, v, 1e-3, 0.9, 0.999, 1e-8, 0.1, 0.001) }
		})
	}
}

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
// The elementwise kernels report GB/s of the slices they read and write
// (MatMulNT and Dot: package telltale/internal/f32).

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

// Package f32 holds the dense float32 matrix and dot products shared by the
// model (package cnn) and the explanations (package explain), so that both
// compute every product with the same kernels and the same summation order.
//
// MatMulNT sets c = a·bᵀ for row-major a (m×k) and b (n×k); Dot is the dot
// product of two vectors; PackWeights and MatMulNTPacked let a caller pack a
// fixed b once and multiply many a by it with the same result bit for bit;
// RowDot is one entry of a one-row MatMulNT, bit for bit, at the cost of at
// most four dot products.
//
// The default build runs portable Go. Built with GOEXPERIMENT=simd on amd64,
// the functions pick an AVX-512 or AVX2+FMA implementation at start-up from
// the CPU's features (KernelName says which). Every implementation agrees
// with a float64 reference up to float32 rounding (f32_test.go); they differ
// from one another in the last bits, because they sum in different orders.
//
// All functions are single-threaded, allocate nothing (PackWeights only to
// grow its dst), keep no state between calls and are safe to call from many
// goroutines at once.
package f32

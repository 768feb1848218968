package f32

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sync"
	"testing"

	"telltale/internal/kerneltest"
)

// The shared kernel-test helpers (internal/kerneltest).
var (
	kernelSizes = kerneltest.Sizes
	randSlice   = kerneltest.RandSlice
	withGuard   = kerneltest.WithGuard
	checkGuard  = kerneltest.CheckGuard
)

const kernelTol = kerneltest.Tol

// The tests run every implementation this build can use (the portable one
// always; AVX2 and AVX-512 ones when built with GOEXPERIMENT=simd on a CPU
// that has them) against float64 references computed here, on random inputs
// and odd sizes. Run them in both builds:
//
//	go test ./internal/f32
//	GOEXPERIMENT=simd go test ./internal/f32

func TestKernelSets(t *testing.T) {
	sets := kernelSets()
	if len(sets) == 0 || sets[0].name != "go" {
		t.Fatalf("kernelSets()[0] must be the portable set, got %v", sets)
	}
	found := false
	for _, s := range sets {
		if s.name == KernelName() {
			found = true
		}
	}
	if !found {
		t.Fatalf("dispatch level %q is not among the tested sets", KernelName())
	}
	t.Logf("dispatch uses %q; testing %d implementation(s)", KernelName(), len(sets))
}

func TestMatMulNT(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 1))
	shapes := [][3]int{{37, 1200, 128}, {1, 1200, 128}, {5, 300, 128}, {64, 64, 0}, {9, 40, 300}, {13, 33, 513}}
	for _, m := range kernelSizes {
		for _, n := range kernelSizes {
			for _, k := range kernelSizes {
				shapes = append(shapes, [3]int{m, n, k})
			}
		}
	}
	for _, ks := range append(kernelSets(), kernelSet{name: "dispatch", matMulNT: MatMulNT}) {
		t.Run(ks.name, func(t *testing.T) {
			for _, sh := range shapes {
				m, n, k := sh[0], sh[1], sh[2]
				a := randSlice(r, m*k)
				b := randSlice(r, n*k)
				c, guard := withGuard(m*n, float32(math.NaN()))
				ks.matMulNT(c, a, b, m, n, k)
				checkGuard(t, guard, float32(math.NaN()), fmt.Sprintf("m=%d n=%d k=%d", m, n, k))
				for i := 0; i < m; i++ {
					for j := 0; j < n; j++ {
						var want, scale float64
						for p := 0; p < k; p++ {
							x := float64(a[i*k+p]) * float64(b[j*k+p])
							want += x
							scale += math.Abs(x)
						}
						got := float64(c[i*n+j])
						if !(math.Abs(got-want) <= kernelTol*scale) {
							t.Fatalf("m=%d n=%d k=%d: c[%d][%d] = %.9g, want %.9g (scale %g)", m, n, k, i, j, got, want, scale)
						}
					}
				}
			}
		})
	}
}

// kernelLengths are the vector lengths of Dot: every length up to 70 (all
// tails of 8- and 16-lane loops) and the model's sizes.
func kernelLengths() []int {
	var l []int
	for n := 0; n <= 70; n++ {
		l = append(l, n)
	}
	return append(l, 100, 128, 129, 300, 1000, 1201)
}

func TestDot(t *testing.T) {
	r := rand.New(rand.NewPCG(2, 2))
	for _, ks := range append(kernelSets(), kernelSet{name: "dispatch", dot: Dot}) {
		t.Run(ks.name, func(t *testing.T) {
			for _, n := range kernelLengths() {
				x := randSlice(r, n)
				// y longer than x: only y[:len(x)] counts.
				y := randSlice(r, n+3)
				var want, scale float64
				for i := range x {
					want += float64(x[i]) * float64(y[i])
					scale += math.Abs(float64(x[i]) * float64(y[i]))
				}
				if got := float64(ks.dot(x, y)); !(math.Abs(got-want) <= kernelTol*scale) {
					t.Fatalf("dot n=%d: got %g, want %g", n, got, want)
				}
			}
		})
	}
}

// A one-row product is computed four columns at a time, each group alone,
// and the columns past the last group with Dot; RowDot relies on it and must
// equal the one-row MatMulNT bit for bit.
func TestRowDot(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 3))
	for _, ks := range kernelSets() {
		for _, n := range []int{1, 2, 3, 4, 5, 7, 8, 9, 33, 50, 300} {
			for _, k := range []int{0, 1, 7, 16, 33, 128, 300} {
				a, b := randSlice(r, k), randSlice(r, n*k)
				c := make([]float32, n)
				ks.matMulNT(c, a, b, 1, n, k)
				for j := range c {
					var got float32
					if j0 := j &^ 3; j0+4 <= n {
						var g [4]float32
						ks.matMulNT(g[:], a, b[j0*k:(j0+4)*k], 1, 4, k)
						got = g[j-j0]
					} else {
						got = ks.dot(a, b[j*k:(j+1)*k])
					}
					if math.Float32bits(got) != math.Float32bits(c[j]) {
						t.Fatalf("%s n=%d k=%d column %d: group gives %g, product %g", ks.name, n, k, j, got, c[j])
					}
				}
			}
		}
	}
	for _, n := range []int{1, 3, 4, 6, 50, 1200} {
		k := 128
		a, b := randSlice(r, k), randSlice(r, n*k)
		c := make([]float32, n)
		MatMulNT(c, a, b, 1, n, k)
		for j := range c {
			if d := RowDot(a, b, n, k, j); math.Float32bits(d) != math.Float32bits(c[j]) {
				t.Fatalf("n=%d k=%d column %d: RowDot %g, MatMulNT %g", n, k, j, d, c[j])
			}
		}
	}
}

// TestConcurrent runs MatMulNT from several goroutines at once with
// different shapes (each call packs on its own stack); run with -race.
func TestConcurrent(t *testing.T) {
	for _, ks := range kernelSets() {
		t.Run(ks.name, func(t *testing.T) {
			var wg sync.WaitGroup
			errs := make([]error, 6)
			for w := range errs {
				wg.Add(1)
				go func() {
					defer wg.Done()
					r := rand.New(rand.NewPCG(uint64(w), 5))
					m, n, k := 9+w, 40+7*w, 17+13*w
					a, b := randSlice(r, m*k), randSlice(r, n*k)
					want := make([]float32, m*n)
					matMulNTGo(want, a, b, m, n, k)
					c := make([]float32, m*n)
					for range 20 {
						ks.matMulNT(c, a, b, m, n, k)
						for i := range c {
							if d := math.Abs(float64(c[i] - want[i])); d > 1e-4*(1+math.Abs(float64(want[i]))) {
								errs[w] = fmt.Errorf("worker %d: c[%d] = %g, want %g", w, i, c[i], want[i])
								return
							}
						}
					}
				}()
			}
			wg.Wait()
			for _, err := range errs {
				if err != nil {
					t.Error(err)
				}
			}
		})
	}
}

func TestNoAllocs(t *testing.T) {
	r := rand.New(rand.NewPCG(6, 6))
	const m, n, k = 64, 1200, 128
	a, b, c := randSlice(r, m*k), randSlice(r, n*k), make([]float32, m*n)
	x, y := randSlice(r, 1000), randSlice(r, 1000)
	pb := PackWeights(nil, b, n, k)
	for _, ks := range kernelSets() {
		allocs := map[string]float64{
			"matMulNT":     testing.AllocsPerRun(20, func() { ks.matMulNT(c, a, b, m, n, k) }),
			"matMulNT m=1": testing.AllocsPerRun(20, func() { ks.matMulNT(c, a, b, 1, n, k) }),
			"dot":          testing.AllocsPerRun(20, func() { _ = ks.dot(x, y) }),
		}
		for name, a := range allocs {
			if a != 0 {
				t.Errorf("%s %s: %v allocations per call, want 0", ks.name, name, a)
			}
		}
	}
	if a := testing.AllocsPerRun(20, func() { MatMulNTPacked(c, a, b, pb, m, n, k) }); a != 0 {
		t.Errorf("MatMulNTPacked: %v allocations per call, want 0", a)
	}
	if a := testing.AllocsPerRun(20, func() { _ = RowDot(x, b, n, k, 601) }); a != 0 {
		t.Errorf("RowDot: %v allocations per call, want 0", a)
	}
}

// MatMulNTPacked with weights packed once must equal MatMulNT bit for bit.
func TestMatMulNTPacked(t *testing.T) {
	r := rand.New(rand.NewPCG(9, 9))
	for _, sh := range [][3]int{{1, 1200, 128}, {7, 33, 17}, {8, 40, 128}, {13, 1200, 128}, {100, 31, 5}, {9, 64, 300}} {
		m, n, k := sh[0], sh[1], sh[2]
		a, b := randSlice(r, m*k), randSlice(r, n*k)
		want, got := make([]float32, m*n), make([]float32, m*n)
		MatMulNT(want, a, b, m, n, k)
		MatMulNTPacked(got, a, b, PackWeights(nil, b, n, k), m, n, k)
		for i := range want {
			if math.Float32bits(got[i]) != math.Float32bits(want[i]) {
				t.Fatalf("m=%d n=%d k=%d: c[%d] = %g, MatMulNT %g", m, n, k, i, got[i], want[i])
			}
		}
	}
}

// TestStableRows checks StableRows's promise: a row computed in a product
// padded to StableRows rows is the same bit for bit whatever the other rows,
// their number and the row's place among them.
func TestStableRows(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 7))
	for _, sh := range [][2]int{{1200, 128}, {33, 300}, {40, 7}} {
		n, k := sh[0], sh[1]
		const m = 23
		a := randSlice(r, m*k)
		b := randSlice(r, n*k)
		pb := PackWeights(nil, b, n, k)
		products := []struct {
			name string
			mul  func(c, a []float32, m int)
		}{
			{"MatMulNTPacked", func(c, a []float32, m int) { MatMulNTPacked(c, a, b, pb, m, n, k) }},
		}
		for _, ks := range kernelSets() {
			products = append(products, struct {
				name string
				mul  func(c, a []float32, m int)
			}{ks.name, func(c, a []float32, m int) { ks.matMulNT(c, a, b, m, n, k) }})
		}
		for _, p := range products {
			all := stableProduct(p.mul, a, m, k, n, 0)
			for i := 0; i < m; i++ {
				// Row i alone, at the start and at the end of its padded block.
				for _, at := range []int{0, StableRows(1) - 1} {
					one := stableProduct(p.mul, a[i*k:(i+1)*k], 1, k, n, at)
					for j := 0; j < n; j++ {
						if math.Float32bits(one[j]) != math.Float32bits(all[i*n+j]) {
							t.Fatalf("%s n=%d k=%d: row %d alone at %d: c[%d] = %g, with the others %g", p.name, n, k, i, at, j, one[j], all[i*n+j])
						}
					}
				}
			}
		}
	}
}

// stableProduct multiplies the m rows of a (placed from row at on, the
// other rows zero) padded to StableRows(m+at) rows and returns the m rows
// of the result.
func stableProduct(mul func(c, a []float32, m int), a []float32, m, k, n, at int) []float32 {
	rows := StableRows(m + at)
	pa := make([]float32, rows*k)
	copy(pa[at*k:], a[:m*k])
	c := make([]float32, rows*n)
	mul(c, pa, rows)
	return c[at*n : (at+m)*n]
}

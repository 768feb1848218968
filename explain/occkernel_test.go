package explain

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Every implementation of the occlusion kernels agrees bit for bit with the
// portable one, and the portable one with the definition written out
// filter by filter (common practice, no source), on random banks of odd
// sizes, tokens at the ends of the text included.
func TestOccKernelsAgree(t *testing.T) {
	rng := rand.New(rand.NewPCG(47, 47))
	sets := occKernelSets()
	for trial := 0; trial < 400; trial++ {
		F := 1 + rng.IntN(150)
		if trial%5 == 0 {
			F = 100
		}
		w := 1 + rng.IntN(6)
		n := w + rng.IntN(60)
		nw := n - w + 1
		i := rng.IntN(n)
		if trial%3 == 0 {
			i = []int{0, n - 1}[trial%2]
		}
		t0, t1 := max(0, i-w+1), min(i, nw-1)
		win, row := randSlice(rng, nw*F), randSlice(rng, w*F)
		var before, after []float32
		if t0 > 0 {
			before = randSlice(rng, F)
		}
		if t1+1 < nw {
			after = randSlice(rng, F)
		}
		want := make([]float32, F)
		for f := range want {
			a := float32(math.Inf(-1))
			if before != nil {
				a = before[f]
			}
			if after != nil {
				a = max(a, after[f])
			}
			for t := t0; t <= t1; t++ {
				a = max(a, win[t*F+f]-row[(i-t)*F+f])
			}
			want[f] = a
		}
		old := make([]float32, F)
		for f := range old {
			if rng.IntN(2) == 0 {
				old[f] = max(want[f], 0) // unchanged
			} else if rng.IntN(2) == 0 {
				old[f] = max(want[f], 0) + 1
			}
		}
		for _, ks := range sets {
			nm := make([]float32, F)
			ks.occludeToken(nm, before, after, win, row, F, t0, t1, i)
			for f := range nm {
				if math.Float32bits(nm[f]) != math.Float32bits(want[f]) {
					t.Fatalf("%s occludeToken F=%d w=%d n=%d i=%d filter %d: %g, want %g", ks.name, F, w, n, i, f, nm[f], want[f])
				}
			}
			bits := make([]uint64, (F+63)/64+1)
			bits[len(bits)-1] = 7 // past the end: left alone
			ks.changedUnits(bits, nm, old)
			for f := range nm {
				got := bits[f/64]>>(f%64)&1 == 1
				if got != (max(want[f], 0) != old[f]) {
					t.Fatalf("%s changedUnits F=%d filter %d: marked %v, pooled %g, old %g", ks.name, F, f, got, max(want[f], 0), old[f])
				}
			}
			if F%64 != 0 && bits[(F-1)/64]>>(F%64) != 0 {
				t.Fatalf("%s changedUnits F=%d: bits past the last filter set", ks.name, F)
			}
			if bits[len(bits)-1] != 7 {
				t.Fatalf("%s changedUnits F=%d: wrote past its words", ks.name, F)
			}
			mx := make([]float32, F)
			ks.maxOf(mx, win[:F], row[:F])
			for f := range mx {
				if mx[f] != max(win[f], row[f]) {
					t.Fatalf("%s maxOf F=%d filter %d: %g, want max(%g, %g)", ks.name, F, f, mx[f], win[f], row[f])
				}
			}
		}
	}
}

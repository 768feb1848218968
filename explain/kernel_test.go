package explain

import (
	"cmp"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"telltale/internal/kerneltest"
)

// randSlice is the shared kernel-test helper.
var randSlice = kerneltest.RandSlice

// Every kernel set this build and CPU can run must agree with the portable
// one on random inputs of odd sizes, bit for bit (the sums are taken in the
// same order). The matrix and dot products are tested in
// telltale/internal/f32.
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

	}
}

// A word outside the table gets, from the row computed on the fly
// (wordRow, a one-row f32.MatMulNT), exactly the slot scores that SlotScore
// reports for it.
func TestUntabledRowIsSlotScore(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 41))
	for trial := 0; trial < 10; trial++ {
		m, _ := tableCase(rng, trial)
		st := mustTable(t, m, TableOptions{Words: []int32{}}) // PAD and UNK only
		for id := int32(2); int(id) < m.Config.VocabSize; id++ {
			if st.Has(id) {
				t.Fatalf("trial %d: word %d tabled, want only PAD and UNK", trial, id)
			}
			for g := 0; g < m.Config.NumFilters(); g++ {
				b, f := m.FilterConv(g)
				F := m.Config.Filters
				row := st.wordRow(b, id, make([]float32, m.FilterWidth(g)*F))
				for s := 0; s < m.FilterWidth(g); s++ {
					got, want := row[s*F+f], st.SlotScore(g, s, id)
					if math.Float32bits(got) != math.Float32bits(want) {
						t.Fatalf("trial %d word %d g %d s %d: row %g, SlotScore %g", trial, id, g, s, got, want)
					}
				}
			}
		}
	}
}

// The screened kernels agree with the portable one bit for bit on the
// pooled values and on the set of windows they pass (the order of the
// candidates is not part of the contract), and the portable one passes
// exactly the windows that bankScreen.passes accepts.
func TestKernelsNegAgree(t *testing.T) {
	rng := rand.New(rand.NewPCG(42, 42))
	for _, ks := range kernelSets() {
		for trial := 0; trial < 200; trial++ {
			F := 1 + rng.IntN(70)
			w := 1 + rng.IntN(6)
			n := w + rng.IntN(60)
			vocab := make([][]float32, 1+rng.IntN(8))
			for i := range vocab {
				vocab[i] = randSlice(rng, w*F+rng.IntN(3))
			}
			rows := make([][]float32, n)
			for i := range rows {
				rows[i] = vocab[rng.IntN(len(vocab))]
			}
			bias := randSlice(rng, F)
			// Bands: none, open, or random; staircase corners and floors
			// random or open. Every filter of a group may be off, so the
			// pooling-only path runs too.
			sc := newBankScreen(F)
			off := trial%4 == 0
			for f := 0; f < F; f++ {
				switch {
				case off || rng.IntN(4) == 0:
					sc.band(f, posInf, negInf)
				case rng.IntN(3) == 0:
					sc.band(f, minHeldDown, posInf)
				default:
					lo := float32(math.Abs(rng.NormFloat64())) + 1e-3
					sc.band(f, lo, lo+float32(rng.Float64()))
				}
				if rng.IntN(2) == 0 {
					// A staircase that runs down, as bankScreen asks,
					// with repeated values.
					pc, ac := float32(2*rng.NormFloat64()), float32(2*rng.NormFloat64())
					for i := 2; i < corners; i++ {
						sc.pc[i][f], sc.ac[i][f] = pc, ac
						if rng.IntN(3) > 0 {
							pc -= float32(rng.Float64())
						}
						if rng.IntN(3) > 0 {
							ac -= float32(rng.Float64())
						}
					}
				}
				if rng.IntN(2) == 0 {
					sc.dmin[f] = max(float32(rng.Float64()), minHeldDown)
				}
			}
			run := func(fn func([]float32, []int32, []float32, [][]float32, int, int, *bankScreen, []negCand) []negCand) ([]float32, []int32, []negCand) {
				pre, start := make([]float32, F), make([]int32, F)
				c := fn(pre, start, bias, rows, w, F, &sc, nil)
				slices.SortFunc(c, func(x, y negCand) int { return cmp.Or(cmp.Compare(x.t, y.t), cmp.Compare(x.f, y.f)) })
				return pre, start, c
			}
			p0, s0, c0 := run(portableKernels.poolBankNeg)
			p1, s1, c1 := run(ks.poolBankNeg)
			for f := 0; f < F; f++ {
				if math.Float32bits(p0[f]) != math.Float32bits(p1[f]) || s0[f] != s1[f] {
					t.Fatalf("%s poolBankNeg F=%d w=%d filter %d: (%g, %d), portable (%g, %d)", ks.name, F, w, f, p1[f], s1[f], p0[f], s0[f])
				}
			}
			if !slices.Equal(c0, c1) {
				t.Fatalf("%s poolBankNeg F=%d w=%d: %d candidates, portable %d", ks.name, F, w, len(c1), len(c0))
			}
			// Skipping the filters whose screen passes nothing finds the
			// same candidates.
			sc.skipIdle = true
			_, _, c2 := run(ks.poolBankNeg)
			sc.skipIdle = false
			if !slices.Equal(c0, c2) {
				t.Fatalf("%s poolBankNeg F=%d w=%d, idle filters skipped: %d candidates, portable %d", ks.name, F, w, len(c2), len(c0))
			}
			// The portable kernel against the definition, window by window.
			want := 0
			for tt := 0; tt+w <= n; tt++ {
				for f := 0; f < F; f++ {
					a, p := bias[f], bias[f]
					for s := 0; s < w; s++ {
						a += rows[tt+s][s*F+f]
						p += max(rows[tt+s][s*F+f], 0)
					}
					if sc.passes(f, a, p) {
						want++
					}
				}
			}
			if want != len(c0) {
				t.Fatalf("poolBankNegGo F=%d w=%d: %d candidates, the screen passes %d windows", F, w, len(c0), want)
			}
		}
	}
}

// The element-wise max kernels of the occluder agree with the portable ones
// bit for bit (max and one subtraction round the same way everywhere).
func TestKernelsMaxAgree(t *testing.T) {
	rng := rand.New(rand.NewPCG(43, 43))
	for _, ks := range kernelSets() {
		for trial := 0; trial < 100; trial++ {
			n := rng.IntN(70)
			dst, a, b := randSlice(rng, n), randSlice(rng, n+rng.IntN(3)), randSlice(rng, n+rng.IntN(3))
			d0, d1 := slices.Clone(dst), slices.Clone(dst)
			portableKernels.maxInto(d0, a)
			ks.maxInto(d1, a)
			portableKernels.subMaxInto(d0, a, b)
			ks.subMaxInto(d1, a, b)
			for i := range d0 {
				if math.Float32bits(d0[i]) != math.Float32bits(d1[i]) {
					t.Fatalf("%s n=%d: [%d] = %g, portable %g", ks.name, n, i, d1[i], d0[i])
				}
				if want := max(dst[i], a[i], a[i]-b[i]); d0[i] != want {
					t.Fatalf("portable n=%d: [%d] = %g, want %g", n, i, d0[i], want)
				}
			}
		}
	}
}

package explain

import (
	"math"
	"math/rand/v2"
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

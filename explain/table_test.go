package explain

import (
	"math/rand/v2"
	"testing"

	"telltale/cnn"
)

// tableCase builds a random model and a table for it: every third model has
// masked filters, every second a table with room for about a third of the
// words only (the others are computed on the fly), and two of every five
// the wide path with a random table (drawn from its own generator, so the
// other draws are those of the models without it).
func tableCase(rng *rand.Rand, trial int) (*cnn.Model, TableOptions) {
	m := randomModel(rng, randomConfig(rng))
	if trial%5 == 1 || trial%5 == 3 {
		withWide(m, uint64(trial))
	}
	if trial%3 == 0 {
		m.Masked = make([]bool, m.Config.NumFilters())
		for g := range m.Masked {
			m.Masked[g] = rng.IntN(3) == 0
		}
	}
	var opt TableOptions
	if trial%2 == 1 {
		per := int64(0)
		for _, w := range m.Config.Widths {
			per += int64(4 * w * m.Config.Filters)
		}
		opt.MaxBytes = per * int64(m.Config.VocabSize/3)
		for _, id := range rng.Perm(m.Config.VocabSize)[:m.Config.VocabSize/2] {
			opt.Words = append(opt.Words, int32(id))
		}
	}
	return m, opt
}

// The fast path (a sum of table rows per window) must agree with the
// reference direct convolution cnn.Model.Forward on many random models and
// texts. Argmax may differ only on a float tie, checked against float64
// window activations computed from the model layout.
func TestRunnerMatchesForward(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	for trial := 0; trial < 80; trial++ {
		m, opt := tableCase(rng, trial)
		st := mustTable(t, m, opt)
		if opt.MaxBytes > 0 && st.Tabled() >= m.Config.VocabSize {
			t.Fatalf("trial %d: table holds %d of %d words despite the bound", trial, st.Tabled(), m.Config.VocabSize)
		}
		r := st.NewRunner()
		for k := 0; k < 20; k++ {
			ids := randomText(rng, m.Config.VocabSize, 25)
			want := m.Forward(ids)
			got := r.Run(ids)
			x := cnn.Padded(ids, m.Config.MaxWidth())
			if got.Len != want.Len {
				t.Fatalf("trial %d: len %d, want %d", trial, got.Len, want.Len)
			}
			for g := range want.Pre {
				if !near(float64(got.Pre[g]), float64(want.Pre[g]), 1e-5, 1e-5) {
					t.Fatalf("trial %d text %v filter %d: pre %g, want %g", trial, ids, g, got.Pre[g], want.Pre[g])
				}
				if int(got.Start[g]) != want.Argmax[g] {
					a := directWindow(m, x, g, int(got.Start[g]))
					b := directWindow(m, x, g, want.Argmax[g])
					if !near(a, b, 1e-5, 1e-5) {
						t.Fatalf("trial %d filter %d: window %d (%g), want %d (%g)", trial, g, got.Start[g], a, want.Argmax[g], b)
					}
				}
				if !near(float64(got.Pooled[g]), float64(want.Pooled[g]), 1e-5, 1e-5) {
					t.Fatalf("trial %d filter %d: pooled %g, want %g", trial, g, got.Pooled[g], want.Pooled[g])
				}
			}
			for c := range want.Logits {
				if !near(float64(got.Logits[c]), float64(want.Logits[c]), 1e-5, 1e-5) {
					t.Fatalf("trial %d class %d: logit %g, want %g", trial, c, got.Logits[c], want.Logits[c])
				}
			}
		}
	}
}

// Every table entry is the dot product of the word's embedding with the
// filter slot (checked in float64 against the model layout), whether it comes
// from the table or is computed on the fly.
func TestSlotScoreIsDotProduct(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 2))
	for trial := 0; trial < 20; trial++ {
		m, opt := tableCase(rng, trial)
		st := mustTable(t, m, opt)
		for g := 0; g < m.Config.NumFilters(); g++ {
			for s := 0; s < m.FilterWidth(g); s++ {
				for id := int32(0); int(id) < m.Config.VocabSize; id++ {
					got, want := float64(st.SlotScore(g, s, id)), directSlot(m, g, s, id)
					if !near(got, want, 1e-5, 1e-5) {
						t.Fatalf("trial %d g %d s %d word %d: %g, want %g", trial, g, s, id, got, want)
					}
				}
			}
		}
		if st.SlotScore(0, 0, 0) != 0 {
			t.Fatalf("PAD slot score %g, want 0", st.SlotScore(0, 0, 0))
		}
	}
}

func TestTableRejectsBadWords(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	m := randomModel(rng, randomConfig(rng))
	if _, err := NewSlotTable(m, TableOptions{Words: []int32{int32(m.Config.VocabSize)}}); err == nil {
		t.Fatal("no error for a word id past the vocabulary")
	}
}

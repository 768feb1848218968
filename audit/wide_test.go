package audit

import (
	"context"
	"math/rand/v2"
	"slices"
	"testing"

	"telltale/cnn"
	"telltale/explain"
)

// Masking filters in the audit's filter evidence predicts what the model
// with those filters masked predicts (cnn.Model.Forward, the reference
// forward pass) on a model with the wide path, whose term masking leaves
// as it is; texts hold PAD ids and may be empty. Texts whose two largest
// masked logits lie within 1e-4 are left out (the table sums in another
// order and may break such a tie the other way).
func TestMaskedPredsWide(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	cfg := cnn.Config{VocabSize: 40, Dim: 6, Widths: []int{2, 3}, Filters: 4, Classes: 3, Wide: true}
	m, err := cnn.New(cfg, nil, []string{"a", "b", "c"}, 5)
	if err != nil {
		t.Fatal(err)
	}
	for i := cfg.Classes; i < len(m.Wide); i++ {
		m.Wide[i] = float32(rng.NormFloat64() * 2)
	}
	d := Data{IDs: make([][]int32, 300)}
	for i := range d.IDs {
		ids := make([]int32, rng.IntN(15))
		for j := range ids {
			if rng.IntN(5) > 0 {
				ids[j] = int32(1 + rng.IntN(cfg.VocabSize-1))
			}
		}
		d.IDs[i] = ids
	}
	st, err := explain.NewSlotTable(m, explain.TableOptions{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	nf := cfg.NumFilters()
	b, err := runBase(context.Background(), st, d, cfg.Classes, nf, 2)
	if err != nil {
		t.Fatal(err)
	}
	checked, byWide := 0, 0
	for trial := range 20 {
		gs := rng.Perm(nf)[:1+trial%(nf-1)]
		got := maskedPreds(m, b, gs)
		masked := m.Clone()
		masked.Masked = make([]bool, nf)
		for _, g := range gs {
			masked.Masked[g] = true
		}
		bare := masked.Clone()
		bare.Config.Wide, bare.Wide = false, nil
		for i, ids := range d.IDs {
			out := masked.Forward(ids)
			z := slices.Clone(out.Logits)
			slices.Sort(z)
			if z[len(z)-1]-z[len(z)-2] < 1e-4 {
				continue
			}
			checked++
			want := slices.Index(out.Logits, z[len(z)-1])
			if got[i] != want {
				t.Fatalf("filters %v masked, text %v: prediction %d, forward %d", gs, ids, got[i], want)
			}
			if bo := bare.Forward(ids); argmaxOf(bo.Logits) != want {
				byWide++
			}
		}
	}
	if checked < 5000 || byWide < 100 {
		t.Fatalf("%d predictions checked, %d of them decided by the wide term: the check checked little", checked, byWide)
	}
}

func argmaxOf(z []float32) int {
	return slices.Index(z, slices.Max(z))
}

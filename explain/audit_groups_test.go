package explain

import (
	"context"
	"math/rand/v2"
	"slices"
	"testing"
)

func docRange(lo, hi int) []int32 {
	var out []int32
	for d := lo; d < hi; d++ {
		out = append(out, int32(d))
	}
	return out
}

// Words join a group when their texts overlap with Jaccard ≥ 0.8 and they
// share a label; overlaps chain.
func TestMergeCues(t *testing.T) {
	docs := [][]int32{
		docRange(0, 100),   // 0: footer word
		docRange(5, 100),   // 1: J(0,1) = 95/100
		docRange(10, 105),  // 2: J(1,2) = 90/100, J(0,2) = 90/105
		docRange(0, 100),   // 3: same texts as 0, another label
		docRange(0, 72),    // 4: J(0,4) = 0.72
		docRange(200, 220), // 5: alone
		nil,                // 6: no texts
		docRange(25, 112),  // 7: J(2,7) = 80/102, J(1,7) = 75/107, J(0,7) = 75/112
	}
	class := []int{1, 1, 1, 0, 1, 1, 1, 1}
	got := mergeCues(class, docs, 0.8)
	want := []int{0, 0, 0, 3, 4, 5, 6, 7}
	if !slices.Equal(got, want) {
		t.Errorf("mergeCues = %v, want %v", got, want)
	}
	// At 0.7 word 4 joins through 0, and 7 through 1 and 2.
	got = mergeCues(class, docs, 0.7)
	want = []int{0, 0, 0, 3, 0, 5, 6, 0}
	if !slices.Equal(got, want) {
		t.Errorf("mergeCues at 0.7 = %v, want %v", got, want)
	}
	if n := intersectCount([]int32{1, 3, 5, 7}, []int32{2, 3, 4, 5, 8}); n != 2 {
		t.Errorf("intersectCount = %d, want 2", n)
	}
}

// A word that comes with two artifacts (its texts are those of both) is
// shared by both; a word that also lives elsewhere is not.
func TestSharedWords(t *testing.T) {
	groups := [][]int32{docRange(0, 50), docRange(100, 160), docRange(300, 310)}
	dash := append(docRange(0, 50), docRange(100, 160)...)
	dash = append(dash, 400, 401, 402, 403, 404)             // 115 texts, 110 covered
	common := append(docRange(0, 50), docRange(500, 600)...) // 150, a third covered
	sub := docRange(0, 45)                                   // smaller than every group it sits in
	docs := [][]int32{dash, common, sub, docRange(0, 50)}
	own := []int{-1, -1, -1, 0} // the last word is group 0's own
	got := sharedWords(docs, own, groups, 0.8, 700)
	if !slices.Equal(got[0], []int{0, 1}) {
		t.Errorf("dash shared by %v, want groups [0 1]", got[0])
	}
	if got[1] != nil || got[2] != nil || got[3] != nil {
		t.Errorf("shared %v %v %v, want none", got[1], got[2], got[3])
	}
}

// The exact one-sided McNemar p-values agree with SciPy's
// scipy.stats.binomtest(b, b+c, 0.5, alternative='greater').pvalue
// (SciPy 1.10.1, Debian python3-scipy), computed once and written here.
func TestMcNemarExact(t *testing.T) {
	cases := []struct {
		b, c int
		want float64
	}{
		{40, 5, 3.9391920836351346e-08},
		{4, 1, 0.1875},
		{10, 10, 0.5880985260009766},
		{7, 2, 0.08984375},
		{120, 95, 0.05072616382435342},
		{0, 0, 1},
	}
	for _, c := range cases {
		if got := McNemarExact(c.b, c.c); !near(got, c.want, 1e-12, 1e-9) {
			t.Errorf("McNemarExact(%d, %d) = %.17g, SciPy %.17g", c.b, c.c, got, c.want)
		}
	}
}

// Round robin: the first of each group with a positive score in group
// order, then the second of each, then the rest in their own order.
func TestRoundRobin(t *testing.T) {
	var sus []Suspect
	for g := range 8 {
		sus = append(sus, Suspect{Filter: g})
	}
	groups := []CueGroup{{Score: 0.3}, {Score: 0.2}, {Score: 0}}
	of := []int{0, 0, 0, 1, 2, -1, 1, 2}
	got, og := roundRobin(sus, of, groups)
	var order []int
	for _, s := range got {
		order = append(order, s.Filter)
	}
	if want := []int{0, 3, 1, 6, 2, 4, 5, 7}; !slices.Equal(order, want) {
		t.Errorf("order %v, want %v", order, want)
	}
	if want := []int{0, 1, 0, 1, 0, 2, -1, 2}; !slices.Equal(og, want) {
		t.Errorf("groups %v, want %v", og, want)
	}
}

// Masking a set of filters by subtracting their output-layer terms agrees
// with the reference forward pass of a copy with all of them masked
// (Model.Masked), and bestPrefix finds the best prefix by brute force.
func TestJointAblationMatchesMasked(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 1))
	for trial := 0; trial < 10; trial++ {
		cfg := randomConfig(rng)
		m := randomModel(rng, cfg)
		var d AuditData
		for i := 0; i < 40; i++ {
			d.IDs = append(d.IDs, randomText(rng, cfg.VocabSize, 12))
			d.Gold = append(d.Gold, rng.IntN(cfg.Classes))
		}
		a := &auditor{m: m, held: d, nf: cfg.NumFilters(), C: cfg.Classes, progress: func(string, int, int) {}}
		a.opt.defaults(len(d.IDs))
		a.assoc = Associate(d.IDs, d.Gold, labelNames(m), m.Vocab, AssociationOptions{MinCount: 1})
		if err := a.table(); err != nil {
			t.Fatal(err)
		}
		if err := a.heldoutPass(context.Background()); err != nil {
			t.Fatal(err)
		}
		gs := rng.Perm(cfg.NumFilters())[:1+rng.IntN(cfg.NumFilters())]
		z := make([]float64, cfg.Classes)
		best, bestK := -1, 0
		for k := 1; k <= len(gs); k++ {
			mm, err := MaskFilters(m, gs[:k])
			if err != nil {
				t.Fatal(err)
			}
			right := 0
			for i, ids := range d.IDs {
				a.ablatedSet(i, gs[:k], z)
				o := mm.Forward(ids)
				for c := range z {
					if !near(z[c], float64(o.Logits[c]), 1e-4, 1e-4) {
						t.Fatalf("trial %d filters %v text %d class %d: ablated logit %g, masked forward %g", trial, gs[:k], i, c, z[c], o.Logits[c])
					}
				}
				if audArgmax(z) == d.Gold[i] {
					right++
				}
			}
			if right > best {
				best, bestK = right, k
			}
		}
		if got := a.bestPrefix(gs); got != bestK {
			t.Errorf("trial %d: bestPrefix %d, brute force %d", trial, got, bestK)
		}
	}
}

package explain

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"telltale/cnn"
)

// A growing table's rows are each computed alone, so they are the same bit
// for bit whatever the order of the texts that filled it, and the same as
// the rows of a table of the whole vocabulary built at once (whose
// products run through the same 4-row kernel when the vocabulary is a
// multiple of 4 words: f32.StableRows).
func TestGrowingTableRowsAlone(t *testing.T) {
	rng := rand.New(rand.NewPCG(45, 45))
	m := randomModel(rng, cnn.Config{VocabSize: 300, Dim: 64, Widths: []int{2, 3, 5}, Filters: 20, Classes: 3})
	whole := mustTable(t, m, TableOptions{})
	var texts [][]int32
	for range 30 {
		texts = append(texts, randomText(rng, m.Config.VocabSize, 40))
	}
	forward, err := NewGrowingTable(m, 0)
	if err != nil {
		t.Fatal(err)
	}
	backward, err := NewGrowingTable(m, 0)
	if err != nil {
		t.Fatal(err)
	}
	for i := range texts {
		forward.Add(texts[i])
		backward.Add(texts[len(texts)-1-i])
	}
	words := slices.Compact(slices.Sorted(slices.Values(slices.Concat(texts...))))
	for _, gt := range []*GrowingTable{forward, backward} {
		st := gt.Table()
		if st.Tabled() != len(words)+1 && st.Tabled() != len(words)+2 {
			t.Fatalf("%d words tabled, the texts hold %d (and PAD, UNK)", st.Tabled(), len(words))
		}
		for _, id := range words {
			if !st.Has(id) {
				t.Fatalf("word %d of a text is not tabled", id)
			}
			for g := 0; g < m.Config.NumFilters(); g++ {
				for s := 0; s < m.FilterWidth(g); s++ {
					a, b := st.SlotScore(g, s, id), whole.SlotScore(g, s, id)
					if math.Float32bits(a) != math.Float32bits(b) {
						t.Fatalf("word %d, filter %d, slot %d: %g in the growing table, %g in the whole one", id, g, s, a, b)
					}
				}
			}
		}
	}
	e1, err := Explain(m, nil, texts[3], ExplainOptions{Table: forward.Table(), Occlusion: true, IG: true, KeptDown: 3})
	if err != nil {
		t.Fatal(err)
	}
	e2, err := Explain(m, nil, texts[3], ExplainOptions{Table: whole, Occlusion: true, IG: true, KeptDown: 3})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(e1.LogOdds.Tokens, e2.LogOdds.Tokens) || !slices.Equal(e1.Attributions.Occlusion, e2.Attributions.Occlusion) {
		t.Fatalf("the explanations with the growing and the whole table differ")
	}
}

// Past its memory bound a growing table tables no more words; those words
// are computed for each text, and the explanations stay those of the whole
// table (up to the order of float32 sums).
func TestGrowingTableBound(t *testing.T) {
	rng := rand.New(rand.NewPCG(46, 46))
	m := randomModel(rng, cnn.Config{VocabSize: 200, Dim: 16, Widths: []int{1, 3}, Filters: 6, Classes: 2})
	perWord := int64(4 * (1 + 3) * 6)
	gt, err := NewGrowingTable(m, 20*perWord)
	if err != nil {
		t.Fatal(err)
	}
	whole := mustTable(t, m, TableOptions{})
	for i := range 20 {
		ids := randomText(rng, m.Config.VocabSize, 30)
		st := gt.Add(ids)
		if st.Tabled() > 20 || st.Bytes() > 20*perWord {
			t.Fatalf("text %d: %d words, %d bytes tabled past the bound of 20 words", i, st.Tabled(), st.Bytes())
		}
		a, err := Explain(m, nil, ids, ExplainOptions{Table: st, Occlusion: true, KeptDown: 2})
		if err != nil {
			t.Fatal(err)
		}
		b, err := Explain(m, nil, ids, ExplainOptions{Table: whole, Occlusion: true, KeptDown: 2})
		if err != nil {
			t.Fatal(err)
		}
		for j := range a.LogOdds.Tokens {
			if !near(a.LogOdds.Tokens[j], b.LogOdds.Tokens[j], 1e-5, 1e-5) || !near(a.Attributions.Occlusion[j], b.Attributions.Occlusion[j], 1e-5, 1e-5) {
				t.Fatalf("text %d token %d: share %g, occlusion %g with the bounded table; %g, %g with the whole one",
					i, j, a.LogOdds.Tokens[j], a.Attributions.Occlusion[j], b.LogOdds.Tokens[j], b.Attributions.Occlusion[j])
			}
		}
	}
	if gt.Table().Tabled() != 20 {
		t.Fatalf("%d words tabled, the bound holds 20", gt.Table().Tabled())
	}
}

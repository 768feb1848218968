package explain

import (
	"math/rand/v2"
	"testing"
)

// On models with the wide path, every occlusion value and kept-down edit is
// what cnn.Model.Forward gives on the edited text, and the shares add up
// to its logits, on texts with PAD ids inside (they count for nothing in
// the wide term's mean), texts of one word, texts of PAD only, and windows
// that replace every word (no wide term is left).
func TestWideOcclusionBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(35, 35))
	allGone := 0
	for trial := 0; trial < 40; trial++ {
		m := withWide(randomModel(rng, randomConfig(rng)), uint64(200+trial))
		st := mustTable(t, m, TableOptions{})
		for range 12 {
			ids := make([]int32, rng.IntN(13))
			for i := range ids {
				if rng.IntN(10) >= 3 {
					ids[i] = int32(1 + rng.IntN(m.Config.VocabSize-1))
				}
			}
			widths := []int{2, 3, max(1, len(ids))}
			e, err := Explain(m, nil, ids, ExplainOptions{Table: st, Occlusion: true, OcclusionWidths: widths, IG: true, KeptDown: 3})
			if err != nil {
				t.Fatal(err)
			}
			checkExact(t, m, ids, e)
			checkOcclusion(t, m, ids, e)
			checkKeptDown(t, m, ids, e, 3)
			checkIdentities(t, m, ids, e)
			if words(ids) > 0 {
				allGone++ // the window of the text's length replaces every word
			}
		}
	}
	if allGone < 300 {
		t.Fatalf("only %d texts with a word", allGone)
	}
}

// words counts the non-PAD ids.
func words(ids []int32) int {
	n := 0
	for _, id := range ids {
		if id != 0 {
			n++
		}
	}
	return n
}

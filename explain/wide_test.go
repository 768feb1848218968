package explain

import (
	"context"
	"encoding/json"
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

// Faithfulness on a model with the wide path, under that path's shift
// (wideShifted): every figure stays put but AOPC. Its last point removes
// every token, and a text without words has no wide term, so p(ŷ) there
// moves with the shift (see Explanation); that point is the same for every
// method, so the methods' AOPCs move alike and their differences, in Pairs
// too, stay put. Texts hold two tokens or more, so that no other removal
// (the single top token included) removes every word, and no word twice:
// removing one or the other copy of a word gives the same probability up
// to float rounding, and the Wilcoxon test's p then counts such a
// difference as zero or not by that rounding alone.
func TestFaithfulnessWideShift(t *testing.T) {
	rng := rand.New(rand.NewPCG(36, 36))
	m := withWide(randomModel(rng, randomConfig(rng)), 36)
	ids := make([][]int32, 40)
	gold := make([]int, len(ids))
	for i := range ids {
		for len(ids[i]) < 2 {
			ids[i] = distinct(randomText(rng, m.Config.VocabSize, 20))
		}
		gold[i] = rng.IntN(m.Config.Classes)
	}
	a := make([]float32, m.Config.Classes)
	for c := range a {
		a[c] = float32(rng.NormFloat64() * 3)
	}
	opt := FaithOptions{Percents: []float64{10, 50}, Workers: 1, Resamples: 100, Seed: 4}
	r1, err := Faithfulness(context.Background(), m, ids, gold, opt)
	if err != nil {
		t.Fatal(err)
	}
	r2, err := Faithfulness(context.Background(), wideShifted(m, a), ids, gold, opt)
	if err != nil {
		t.Fatal(err)
	}
	for i := range r1.Methods {
		d1 := r1.Methods[i].AOPC - r1.Methods[0].AOPC
		d2 := r2.Methods[i].AOPC - r2.Methods[0].AOPC
		if !near(d1, d2, 1e-5, 1e-4) {
			t.Fatalf("AOPC of %s minus %s: %g, shifted %g", r1.Methods[i].Method, r1.Methods[0].Method, d1, d2)
		}
	}
	for _, r := range []*FaithReport{r1, r2} {
		for i := range r.Methods {
			r.Methods[i].AOPC, r.Methods[i].AOPCCI = 0, Interval{}
		}
	}
	j1, _ := json.Marshal(r1)
	j2, _ := json.Marshal(r2)
	if path, ok := jsonClose(j1, j2, 1e-5, 1e-4); !ok {
		t.Fatalf("report changed under the wide path's shift at %s:\n%s\n%s", path, j1, j2)
	}
}

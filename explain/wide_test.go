package explain

import (
	"context"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"testing"

	"telltale/cnn"
)

// On models with the wide path, every occlusion value and kept-down edit is
// what cnn.Model.Forward gives on the edited text, and the shares add up
// to its logits, on texts with PAD ids inside (they count for nothing in
// the wide term's mean), texts of one word, texts of PAD only, and windows
// that replace every word. Those leave the unknown word's row as the wide
// term: the window of the text's length is also checked against the model
// written out from that definition (noWordLeft). Every other model has
// bigram weights: an edit takes out the found pairs of the words it
// replaces, and leaves no pair behind the PAD it puts in.
func TestWideOcclusionBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(35, 35))
	allGone, pairs := 0, 0
	for trial := 0; trial < 40; trial++ {
		m := withWide(randomModel(rng, randomConfig(rng)), uint64(200+trial))
		if trial%2 == 1 {
			m = withBigrams(t, m, uint64(200+trial))
		}
		st := mustTable(t, m, TableOptions{})
		plain := m.Clone()
		plain.Config.Wide, plain.Wide = false, nil
		plain.Config.WideBigrams, plain.Bigrams, plain.WideBigram = false, nil, nil
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
			pairs += len(foundPairs(m, ids))
			if words(ids) > 0 {
				allGone++ // the window of the text's length replaces every word
				checkNoWordLeft(t, m, plain, ids, e)
			}
		}
	}
	if allGone < 300 {
		t.Fatalf("only %d texts with a word", allGone)
	}
	if pairs < 100 {
		t.Fatalf("only %d bigrams found in the texts: too few to check their edits", pairs)
	}
}

// checkNoWordLeft checks the drop of e's window over the whole text ids
// against p(ŷ) of the text of PAD alone, written out from the wide path's
// definition (cnn/model.go): the logits of plain (m without the wide path)
// plus the unknown word's row, id 1, of m's wide table.
func checkNoWordLeft(t *testing.T, m, plain *cnn.Model, ids []int32, e *Explanation) {
	t.Helper()
	C := m.Config.Classes
	z := make([]float64, C)
	for c, v := range plain.Forward(make([]int32, len(ids))).Logits {
		z[c] = float64(v) + float64(m.Wide[C+c])
	}
	p := softmax64(z, make([]float64, C))
	for _, w := range e.Attributions.Windows {
		if w.Start == 0 && w.End == len(ids) {
			if want := e.Probabilities[e.Class] - p[e.Class]; !near(w.Drop, want, 2e-6, 1e-4) {
				t.Fatalf("text %v, every word replaced: drop %.7g, from the definition %.7g", ids, w.Drop, want)
			}
			return
		}
	}
	t.Fatalf("text %v: no window over the whole text", ids)
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
// (wideShifted): every figure stays put, those whose removals take every
// word of a text too (AOPC's last point, comprehensiveness at 100%, the
// single top token of the one-word texts among them): a text with no word
// left is scored by the unknown word's row, which the shift moves with the
// output biases (see Explanation). Texts hold no word twice: removing one
// or the other copy of a word gives the same probability up to float
// rounding, and a paired test could then count such a difference as
// zero or not by that rounding alone. With bigram weights too, their rows
// shifted with the words'.
func TestFaithfulnessWideShift(t *testing.T) {
	for _, bigrams := range []bool{false, true} {
		t.Run(fmt.Sprint("bigrams=", bigrams), func(t *testing.T) { faithfulnessWideShift(t, bigrams) })
	}
}

func faithfulnessWideShift(t *testing.T, bigrams bool) {
	rng := rand.New(rand.NewPCG(36, 36))
	m := withWide(randomModel(rng, randomConfig(rng)), 36)
	if bigrams {
		m = withBigrams(t, m, 36)
	}
	ids := make([][]int32, 40)
	gold := make([]int, len(ids))
	for i := range ids {
		for len(ids[i]) < 1 {
			ids[i] = distinct(randomText(rng, m.Config.VocabSize, 20))
		}
		if i%5 == 0 {
			ids[i] = ids[i][:1]
		}
		gold[i] = rng.IntN(m.Config.Classes)
	}
	a := make([]float32, m.Config.Classes)
	for c := range a {
		a[c] = float32(rng.NormFloat64() * 3)
	}
	opt := FaithOptions{Percents: []float64{10, 50, 100}, Workers: 1, Resamples: 100, Seed: 4}
	r1, err := Faithfulness(context.Background(), m, ids, gold, opt)
	if err != nil {
		t.Fatal(err)
	}
	r2, err := Faithfulness(context.Background(), wideShifted(m, a), ids, gold, opt)
	if err != nil {
		t.Fatal(err)
	}
	j1, _ := json.Marshal(r1)
	j2, _ := json.Marshal(r2)
	if path, ok := jsonClose(j1, j2, 1e-5, 1e-4); !ok {
		t.Fatalf("report changed under the wide path's shift at %s:\n%s\n%s", path, j1, j2)
	}
}

package gui

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"

	"telltale/cnn"
	"telltale/explain"
	"telltale/internal/rescalecheck"
)

// The Filters view's list rows, headings, families and slot words say the
// same when filters of a model are rescaled (cnn.Model.WithFiltersRescaled), which changes no
// prediction: every number they show is identified. The raw highest
// activations do move, so the check would catch a raw number shown.
func TestFilterTextsInvariantUnderRescale(t *testing.T) {
	vocab := []string{"<pad>", "<unk>"}
	for i := 2; i < 60; i++ {
		vocab = append(vocab, fmt.Sprintf("w%d", i))
	}
	m, err := cnn.New(cnn.Config{VocabSize: len(vocab), Dim: 8, Widths: []int{2, 3}, Filters: 6, Classes: 3}, vocab, []string{"a", "b", "c"}, 5)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(8, 8))
	var ids [][]int32
	var gold []int
	for range 500 {
		x := make([]int32, 3+rng.IntN(12))
		for i := range x {
			x[i] = int32(1 + rng.IntN(len(vocab)-1))
		}
		ids = append(ids, x)
		gold = append(gold, rng.IntN(3))
	}
	ks := map[int]float32{0: 40, 4: 0.03, 7: 6.5, 11: 0.2}
	var shown [2][]string
	var raw [2][]float64
	for i, mm := range []*cnn.Model{m, m.WithFiltersRescaled(ks)} {
		prof, err := explain.Profile(context.Background(), mm, ids, gold, explain.ProfileOptions{Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		for g := range prof.Filters {
			fp := &prof.Filters[g]
			shown[i] = append(shown[i], fmt.Sprint(filterRow(fp, nil)), filterTitle(fp, prof.Texts), fmt.Sprint(familyRows(fp)))
			for _, sw := range fp.Slots {
				shown[i] = append(shown[i], wordScores(sw.Triggers), wordScores(sw.Suppressors))
			}
			raw[i] = append(raw[i], fp.MaxActivation)
		}
	}
	rescalecheck.Same(t, ks, shown, raw)
}

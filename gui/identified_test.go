package gui

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"

	"telltale/cnn"
	"telltale/explain"
)

// rescaled returns a copy of m with each filter g of ks multiplied by
// ks[g] > 0: its convolution weights and bias times ks[g], its
// output-weight column divided by it. ReLU and max pooling are positively
// homogeneous, so no prediction moves (up to float32 rounding).
func rescaled(m *cnn.Model, ks map[int]float32) *cnn.Model {
	s := m.Clone()
	nf := m.Config.NumFilters()
	for g, k := range ks {
		b, f := m.FilterConv(g)
		cv := &s.Convs[b]
		per := len(cv.W) / m.Config.Filters
		for i := f * per; i < (f+1)*per; i++ {
			cv.W[i] *= k
		}
		cv.B[f] *= k
		for c := 0; c < m.Config.Classes; c++ {
			s.OutW[c*nf+g] /= k
		}
	}
	return s
}

// The Filters view's list rows, headings, families and slot words say the
// same when filters of a model are rescaled (rescaled), which changes no
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
	for i, mm := range []*cnn.Model{m, rescaled(m, ks)} {
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
	for j := range shown[0] {
		if shown[0][j] != shown[1][j] {
			t.Errorf("filters rescaled by %v: shown\n%s\nbecomes\n%s", ks, shown[0][j], shown[1][j])
		}
	}
	moved := 0
	for g := range raw[0] {
		if raw[0][g] != raw[1][g] {
			moved++
		}
	}
	if moved < len(ks) {
		t.Fatalf("only %d raw highest activations moved under the rescaling: the check checks little", moved)
	}
}

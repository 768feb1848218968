package report

import (
	"context"
	"fmt"
	"testing"

	"telltale/cnn"
	"telltale/explain"
	"telltale/internal/rescalecheck"
)

// The filter cards and the explained examples' fired-filter rows show the
// same text when filters of the demo model are rescaled (cnn.Model.WithFiltersRescaled), which
// changes no prediction: every number they show is identified. The raw
// activations do move, so the check would catch a raw number shown.
func TestShownNumbersInvariantUnderRescale(t *testing.T) {
	d := loadDemo(t)
	m := d.model
	ks := map[int]float32{0: 37, 3: 0.02, 9: 5.5, 12: 0.3}
	s := m.WithFiltersRescaled(ks)
	enc, err := m.Encoder()
	if err != nil {
		t.Fatal(err)
	}
	class := map[string]int{}
	for c, l := range m.Labels {
		class[l] = c
	}
	var ids [][]int32
	var gold []int
	for _, e := range d.train.Examples[:600] {
		_, x := enc.Encode(e.Text)
		ids = append(ids, x)
		gold = append(gold, class[e.Label])
	}
	var shown [2][]string
	var raw [2][]float64
	for i, mm := range []*cnn.Model{m, s} {
		prof, err := explain.Profile(context.Background(), mm, ids, gold, explain.ProfileOptions{Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		for _, f := range prof.Filters {
			shown[i] = append(shown[i], fmt.Sprintf("%+v", filterCardOf(f, prof.Labels)))
			raw[i] = append(raw[i], f.MaxActivation)
		}
		for _, x := range ids[:40] {
			e, err := explain.Explain(mm, nil, x, explain.ExplainOptions{Profiles: prof})
			if err != nil {
				t.Fatal(err)
			}
			shown[i] = append(shown[i], fmt.Sprintf("%+v", firedRows(Input{Profiles: prof}, e)))
		}
	}
	rescalecheck.Same(t, ks, shown, raw)
}

package audit

import (
	"encoding/json"
	"math/rand/v2"
	"slices"
	"testing"

	"telltale/internal/testref"
)

// What the audit shows of the filters (the filters keyed on each cue, the
// mask it suggests and that mask's figures) stays the same for a model
// whose filters' output weights are shifted alike across the classes
// (cnn.Model.WithVotesShifted) or whose filters are rescaled
// (cnn.Model.WithFiltersRescaled): neither moves a prediction, so neither
// may move an identified number (common practice, no source: the softmax
// is invariant to a shift shared by every logit; ReLU and max pooling are
// positively homogeneous). The shifts are large beside the weights, so a
// raw weight read anywhere would move the lists.
func TestAuditFiltersIdentified(t *testing.T) {
	testref.SequentialSkipInRace(t, "the demo audit")
	d := demoAudit(t, "demo", 1)
	nf := d.m.Config.NumFilters()
	rng := rand.New(rand.NewPCG(9, 9))
	shift, scale := map[int]float32{}, map[int]float32{}
	for g := range nf {
		shift[g] = float32(rng.NormFloat64())
		scale[g] = float32(0.1 + 10*rng.Float64())
	}
	keyedSeen := 0
	for _, alt := range []struct {
		name string
		res  *Result
	}{
		{"votes shifted", run(t, d.m.WithVotesShifted(shift), data(t, d.m, d.train), d.held, Options{Seed: 1})},
		{"filters rescaled", run(t, d.m.WithFiltersRescaled(scale), data(t, d.m, d.train), d.held, Options{Seed: 1})},
	} {
		if len(alt.res.Ranked) != len(d.res.Ranked) {
			t.Fatalf("%s: %d cues ranked, against %d", alt.name, len(alt.res.Ranked), len(d.res.Ranked))
		}
		for k, c := range d.res.Ranked {
			a := alt.res.Ranked[k]
			if c.name() != a.name() {
				t.Fatalf("%s: cue %d is %s, against %s", alt.name, k, a.name(), c.name())
			}
			var want, got []int
			if c.Filters != nil {
				want = c.Filters.Keyed
				keyedSeen += len(want)
			}
			if a.Filters != nil {
				got = a.Filters.Keyed
			}
			if !slices.Equal(want, got) {
				t.Errorf("%s, cue %s: keyed filters %v, against %v", alt.name, c.name(), got, want)
			}
		}
		w, _ := json.Marshal(d.res.Action)
		g, _ := json.Marshal(alt.res.Action)
		if string(w) != string(g) {
			t.Errorf("%s: the action\n%s\nagainst\n%s", alt.name, g, w)
		}
	}
	if keyedSeen == 0 {
		t.Fatal("no filter keyed on any cue of the demo: the check checks nothing")
	}
}

package explain

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"telltale/cnn"
)

// checkExact asserts, on one explanation, what the identified shares are
// built from (checkIdentities checks the shares themselves): the logits
// and the predicted class equal those of the reference cnn.Model.Forward,
// the fired filters are its positive pooled units, and each fired filter's
// bias plus slot scores equals its activation.
func checkExact(t *testing.T, m *cnn.Model, ids []int32, e *Explanation) {
	t.Helper()
	want := m.Forward(ids)
	for c := range want.Logits {
		if !near(e.logits[c], float64(want.Logits[c]), 1e-4, 1e-5) {
			t.Fatalf("class %d: logit %g, forward %g", c, e.logits[c], want.Logits[c])
		}
	}
	if argmax32(want.Logits) != e.Class && math.Abs(float64(want.Logits[e.Class]-want.Logits[argmax32(want.Logits)])) > 1e-5 {
		t.Fatalf("class %d, forward %d", e.Class, argmax32(want.Logits))
	}
	fired := 0
	for g, h := range want.Pooled {
		if h > 0 {
			fired++
		}
		_ = g
	}
	if fired != len(e.Filters) {
		t.Fatalf("%d fired filters, forward has %d positive pooled units", len(e.Filters), fired)
	}
	for _, ff := range e.Filters {
		sum := ff.BiasTerm
		for _, s := range ff.Slots {
			sum += s
		}
		if !near(sum, ff.Activation, 1e-5, 1e-5) {
			t.Fatalf("filter %d: bias + slots = %g, activation %g", ff.Filter, sum, ff.Activation)
		}
		if !near(ff.Activation, float64(want.Pooled[ff.Filter]), 1e-5, 1e-5) {
			t.Fatalf("filter %d: activation %g, forward %g", ff.Filter, ff.Activation, want.Pooled[ff.Filter])
		}
		// In log-odds units: times the range of the filter's output-weight
		// column, from the model layout; bias + slots still add up.
		r := columnRange(m, ff.Filter)
		sum = ff.BiasLogOdds
		for _, s := range ff.SlotsLogOdds {
			sum += s
		}
		if !near(ff.ActivationLogOdds, r*float64(want.Pooled[ff.Filter]), 1e-5, 1e-5) || !near(sum, ff.ActivationLogOdds, 1e-5, 1e-5) {
			t.Fatalf("filter %d: activation %g log-odds, bias + slots %g, forward %g × range %g", ff.Filter, ff.ActivationLogOdds, sum, want.Pooled[ff.Filter], r)
		}
	}
}

// columnRange is max_c OutW[c][g] − min_c OutW[c][g] from the layout.
func columnRange(m *cnn.Model, g int) float64 {
	nf := m.Config.NumFilters()
	var ws []float64
	for c := 0; c < m.Config.Classes; c++ {
		ws = append(ws, float64(m.OutW[c*nf+g]))
	}
	return slices.Max(ws) - slices.Min(ws)
}

// checkOcclusion re-predicts every edited text with cnn.Model.Forward.
func checkOcclusion(t *testing.T, m *cnn.Model, ids []int32, e *Explanation) {
	t.Helper()
	y := e.Class
	p0 := e.Probabilities[y]
	edited := make([]int32, len(ids))
	check := func(lo, hi int, drop, dropLog float64) {
		copy(edited, ids)
		for i := lo; i < hi; i++ {
			edited[i] = 0
		}
		out := m.Forward(edited)
		p := float64(out.Probs[y])
		if !near(drop, p0-p, 2e-6, 1e-4) {
			t.Fatalf("text %v span [%d,%d): drop %.7g, brute force %.7g", ids, lo, hi, drop, p0-p)
		}
		if p > 1e-30 && !near(dropLog, math.Log(p0)-math.Log(p), 1e-4, 1e-4) {
			t.Fatalf("text %v span [%d,%d): log drop %.7g, brute force %.7g", ids, lo, hi, dropLog, math.Log(p0)-math.Log(p))
		}
	}
	if len(e.Attributions.Occlusion) != len(ids) {
		t.Fatalf("%d occlusion values for %d tokens", len(e.Attributions.Occlusion), len(ids))
	}
	for i := range ids {
		check(i, i+1, e.Attributions.Occlusion[i], e.Attributions.OcclusionLog[i])
	}
	for _, w := range e.Attributions.Windows {
		check(w.Start, w.End, w.Drop, w.DropLog)
	}
}

func TestExactAndOcclusionRandomModels(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	for trial := 0; trial < 60; trial++ {
		m, opt := tableCase(rng, trial)
		var st *SlotTable
		if trial%4 != 0 { // every fourth explanation builds its own table
			st = mustTable(t, m, opt)
		}
		for k := 0; k < 10; k++ {
			ids := randomText(rng, m.Config.VocabSize, 30)
			e, err := Explain(m, nil, ids, ExplainOptions{Table: st, Occlusion: true, OcclusionWidths: []int{2, 3}})
			if err != nil {
				t.Fatal(err)
			}
			checkExact(t, m, ids, e)
			checkOcclusion(t, m, ids, e)
		}
	}
}

// Integrated gradients checked by brute force: the right Riemann sum of
// directional derivatives along each token's embedding, each taken by central
// finite differences of cnn.Model.Forward on a model whose embedding rows are
// the scaled token vectors. With ReLU and max pooling F is piecewise linear,
// so central differences are exact away from kinks.
func TestIntegratedGradientsFiniteDifferences(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	const steps = 6
	for trial := 0; trial < 15; trial++ {
		m := randomModel(rng, randomConfig(rng))
		// Distinct words: a repeated n-gram makes exact ties between windows,
		// where the gradient is a tie-break convention and central differences
		// average the tied windows instead.
		ids := distinct(randomText(rng, m.Config.VocabSize, 12))
		if len(ids) == 0 {
			continue
		}
		e, err := Explain(m, nil, ids, ExplainOptions{IG: true, IGSteps: steps})
		if err != nil {
			t.Fatal(err)
		}
		L, d := len(ids), m.Config.Dim
		// Model over position ids 1 … L whose row i+1 is α·Emb[x_i] + ε·Emb[x_j].
		pm := *m
		pm.Config.VocabSize = L + 1
		pm.Emb = make([]float32, (L+1)*d)
		pos := make([]int32, L)
		for i := range pos {
			pos[i] = int32(i + 1)
		}
		logit := func(alpha float64, j int, eps float64, c int) float64 {
			for i, id := range ids {
				row := m.Row(id)
				for k := 0; k < d; k++ {
					v := alpha * float64(row[k])
					if i == j {
						v += eps * float64(row[k])
					}
					pm.Emb[(i+1)*d+k] = float32(v)
				}
			}
			return float64(pm.Forward(pos).Logits[c])
		}
		// The identified quantities: the log-odds of the predicted class
		// against the runner-up, then each class's centred logit.
		C := m.Config.Classes
		quantity := func(alpha float64, j int, eps float64, q int) float64 {
			if q == 0 {
				return logit(alpha, j, eps, e.Class) - logit(alpha, j, eps, e.RunnerUp)
			}
			var mean float64
			for c := 0; c < C; c++ {
				mean += logit(alpha, j, eps, c) / float64(C)
			}
			return logit(alpha, j, eps, q-1) - mean
		}
		ig := append([]IGShares{e.Integrated.LogOdds}, e.Integrated.Centred...)
		const eps = 1e-4
		for q := range ig {
			for j := 0; j < L; j++ {
				var want float64
				for k := 1; k <= steps; k++ {
					a := float64(k) / steps
					want += 1.0 / steps * (quantity(a, j, eps, q) - quantity(a, j, -eps, q)) / (2 * eps)
				}
				if got := ig[q].Tokens[j]; !near(got, want, 2e-3, 1e-3) {
					t.Errorf("trial %d token %d quantity %d: IG %.6g, finite differences %.6g", trial, j, q, got, want)
				}
			}
		}
	}
}

// The completeness gap must shrink as the number of steps grows, to well
// under the size of the logit change on these models.
func TestIntegratedGradientsCompleteness(t *testing.T) {
	rng := rand.New(rand.NewPCG(6, 6))
	var gapFew, gapMany float64
	for trial := 0; trial < 20; trial++ {
		m := randomModel(rng, randomConfig(rng))
		ids := randomText(rng, m.Config.VocabSize, 30)
		few, _ := Explain(m, nil, ids, ExplainOptions{IG: true, IGSteps: 4})
		many, _ := Explain(m, nil, ids, ExplainOptions{IG: true, IGSteps: 4000})
		gapFew += math.Abs(few.Integrated.LogOdds.Gap)
		gapMany += math.Abs(many.Integrated.LogOdds.Gap)
		for c := range few.Integrated.Centred {
			gapFew += math.Abs(few.Integrated.Centred[c].Gap)
			gapMany += math.Abs(many.Integrated.Centred[c].Gap)
		}
	}
	if !(gapMany < gapFew/20) || gapMany > 0.05 {
		t.Fatalf("total |gap| %g with 4000 steps, %g with 4", gapMany, gapFew)
	}
}

func TestExplainRejectsBadInput(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 7))
	m := randomModel(rng, randomConfig(rng))
	if _, err := Explain(m, nil, []int32{int32(m.Config.VocabSize)}, ExplainOptions{}); err == nil {
		t.Fatal("no error for an id past the vocabulary")
	}
	if _, err := Explain(m, nil, []int32{2}, ExplainOptions{OcclusionWidths: []int{0}}); err == nil {
		t.Fatal("no error for occlusion width 0")
	}
	other := randomModel(rng, m.Config)
	if _, err := Explain(m, nil, []int32{2}, ExplainOptions{Table: mustTable(t, other, TableOptions{})}); err == nil {
		t.Fatal("no error for a table of another model")
	}
}

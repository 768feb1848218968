package explain

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"telltale/cnn"
	"telltale/internal/testref"
)

// shifted returns a copy of m with k added to every class's output weight on
// filter g and kb added to every class's output bias. Softmax is invariant
// under both, and so is training's loss (its gradients with respect to
// the weights of one filter sum to zero over the classes), so nothing in the
// data pins these constants down: an identified number must not move.
func shifted(m *cnn.Model, g int, k, kb float32) *cnn.Model {
	s := m.Clone()
	nf := m.Config.NumFilters()
	for c := 0; c < m.Config.Classes; c++ {
		s.OutW[c*nf+g] += k
		s.OutB[c] += kb
	}
	return s
}

// randomScales draws a positive scale for up to three filters of m, far
// from 1 in both directions (from 1/300 to 300).
func randomScales(rng *rand.Rand, m *cnn.Model) (map[int]float32, string) {
	ks := map[int]float32{}
	nf := m.Config.NumFilters()
	for range min(3, nf) {
		e := rng.NormFloat64() * 2.5
		e = math.Copysign(math.Max(math.Abs(e), 1), e) // |ln k| ≥ 1
		ks[rng.IntN(nf)] = float32(math.Exp(math.Max(-5.7, math.Min(5.7, e))))
	}
	return ks, fmt.Sprintf("filters rescaled by %v", ks)
}

// shownNumbers lists every number of an explanation that is meant to be
// shown (the identified ones; see Explanation), with a name for messages.
func shownNumbers(e *Explanation) (names []string, vals []float64) {
	add := func(name string, v ...float64) {
		for i, x := range v {
			names = append(names, fmt.Sprintf("%s[%d]", name, i))
			vals = append(vals, x)
		}
	}
	shares := func(name string, s Shares) {
		add(name+".class/against", float64(s.Class), float64(s.Against))
		add(name+".value", s.Value, s.OutputBias)
		add(name+".filter_bias", s.FilterBias...)
		add(name+".filters", s.Filters...)
		add(name+".tokens", s.Tokens...)
		add(name+".words", s.Words...)
	}
	add("class", float64(e.Class), float64(e.RunnerUp))
	add("probabilities", e.Probabilities...)
	shares("log_odds", e.LogOdds)
	for c, s := range e.Centred {
		shares(fmt.Sprint("centred", c), s)
	}
	add("occlusion", e.Attributions.Occlusion...)
	add("occlusion_log", e.Attributions.OcclusionLog...)
	for _, w := range e.Attributions.Windows {
		add("window", float64(w.Start), float64(w.End), w.Drop, w.DropLog)
	}
	for _, f := range e.Filters {
		add("filter", float64(f.Filter), float64(f.Start), f.ActivationLogOdds, f.BiasLogOdds, float64(f.Family))
		add("filter.slots", f.SlotsLogOdds...)
	}
	if ig := e.Integrated; ig != nil {
		for j, s := range append([]IGShares{ig.LogOdds}, ig.Centred...) {
			add(fmt.Sprint("ig", j), s.Value, s.Baseline)
			add(fmt.Sprint("ig", j, ".tokens"), s.Tokens...)
			add(fmt.Sprint("ig", j, ".words"), s.Words...)
		}
	}
	for _, kd := range e.KeptDown {
		add("kept_down", float64(kd.Filter), float64(kd.Start), kd.ActivationLogOdds, kd.PositiveLogOdds, kd.WinnerLogOdds,
			kd.Effect, kd.PooledLogOdds, kd.Own, kd.WordsHeld, kd.LogOdds, kd.Drop)
		add("kept_down.slots", kd.SlotsLogOdds...)
		add("kept_down.by", intsToFloats(kd.By)...)
	}
	return names, vals
}

func intsToFloats(xs []int) []float64 {
	out := make([]float64, len(xs))
	for i, x := range xs {
		out[i] = float64(x)
	}
	return out
}

// checkInvariant explains ids with m and with a shifted copy and compares
// every shown number. The tolerance is the float32 rounding of the shifted
// weights (a few units in 1e-7 of |k|) carried through sums of a few
// hundred terms. Texts whose two largest logits lie within 1e-4 are left
// out: there the predicted class itself may flip with that rounding.
func checkInvariant(t *testing.T, m *cnn.Model, ids []int32, opt ExplainOptions, rng *rand.Rand) bool {
	t.Helper()
	g := rng.IntN(m.Config.NumFilters())
	k, kb := float32(rng.NormFloat64()*3), float32(rng.NormFloat64()*3)
	what := fmt.Sprintf("filter %d +%g, biases +%g", g, k, kb)
	if !sameShown(t, m, shifted(m, g, k, kb), ids, opt, what, 2e-5*(1+math.Abs(float64(k)))) {
		return false
	}
	ks, what := randomScales(rng, m)
	return sameShown(t, m, m.WithFiltersRescaled(ks), ids, opt, what, 2e-5)
}

// sameShown explains ids with m and with s, a copy that predicts the same,
// and compares every shown number to tol (absolute, and 2e-5 relative).
// It returns false, comparing nothing, when the two largest logits lie
// within 1e-4.
func sameShown(t *testing.T, m, s *cnn.Model, ids []int32, opt ExplainOptions, what string, tol float64) bool {
	t.Helper()
	e1, err := Explain(m, nil, ids, opt)
	if err != nil {
		t.Fatal(err)
	}
	if z := e1.logits; len(z) > 1 && z[e1.Class]-z[e1.RunnerUp] < 1e-4 {
		return false
	}
	opt2 := opt
	if opt.Table != nil {
		opt2.Table = mustTable(t, s, TableOptions{})
	}
	e2, err := Explain(s, nil, ids, opt2)
	if err != nil {
		t.Fatal(err)
	}
	n1, v1 := shownNumbers(e1)
	n2, v2 := shownNumbers(e2)
	if !slices.Equal(n1, n2) {
		t.Fatalf("%s: the shown numbers change shape:\n%v\n%v", what, n1, n2)
	}
	for i := range v1 {
		if !testref.Close(v1[i], v2[i], tol, 2e-5) {
			t.Fatalf("text %v, %s: %s = %.9g, changed model %.9g", ids, what, n1[i], v1[i], v2[i])
		}
	}
	return true
}

// wideShifted returns a copy of m with the vector a added to every word's
// row of the wide table but PAD's, and to every bigram row
// (cnn.Config.WideBigrams), and subtracted from the output biases. The
// wide term of a text with N ≥ 1 words and M found pairs is the mean of
// N+M rows, that of a text with none UNK's row, so it gains exactly a and
// every logit stays put; nothing in the data pins a down, so an
// identified number must not move.
func wideShifted(m *cnn.Model, a []float32) *cnn.Model {
	s := m.Clone()
	C := m.Config.Classes
	for i := C; i < len(s.Wide); i++ {
		s.Wide[i] += a[i%C]
	}
	for i := range s.WideBigram {
		s.WideBigram[i] += a[i%C]
	}
	for c := range s.OutB {
		s.OutB[c] -= a[c]
	}
	return s
}

// Every shown number of a model with the wide path is invariant under the
// wide path's own shift (wideShifted), on random models and texts. Among
// the texts are ones of PAD only, of one word (its occlusion removes every
// word), of two words (so does the window of two) and of six words or more
// (every edit leaves a word): a text with no word left is scored by the
// unknown word's row, which the shift moves with the output biases (see
// Explanation). Every other model has bigram weights, whose rows the
// shift moves too.
func TestShownNumbersInvariantWideShift(t *testing.T) {
	rng := rand.New(rand.NewPCG(34, 34))
	checked, words, pairs := 0, 0.0, 0
	for trial := 0; trial < 40; trial++ {
		m := withWide(randomModel(rng, randomConfig(rng)), uint64(100+trial))
		if trial%4 >= 2 {
			m = withBigrams(t, m, uint64(100+trial))
		}
		var st *SlotTable
		if trial%2 == 0 {
			st = mustTable(t, m, TableOptions{})
		}
		a := make([]float32, m.Config.Classes)
		amax := 0.0
		for c := range a {
			a[c] = float32(rng.NormFloat64() * 3)
			amax = max(amax, math.Abs(float64(a[c])))
		}
		s := wideShifted(m, a)
		for k := range 8 {
			ids := fewWords(rng, m.Config.VocabSize, k%4)
			if k%4 == 3 {
				ids = randomText(rng, m.Config.VocabSize, 24)
				for len(ids) < 6 {
					ids = append(ids, int32(1+rng.IntN(m.Config.VocabSize-1)))
				}
			}
			eo := ExplainOptions{Table: st, Occlusion: true, OcclusionWidths: []int{2}, IG: true, KeptDown: 4}
			if sameShown(t, m, s, ids, eo, fmt.Sprintf("wide rows %+v, biases minus that", a), 2e-5*(1+amax)) {
				checked++
				e, _ := Explain(m, nil, ids, eo)
				for _, v := range e.LogOdds.Words {
					words += math.Abs(v)
				}
				pairs += len(foundPairs(m, ids))
			}
		}
	}
	if checked < 250 {
		t.Fatalf("only %d of 320 texts checked: too many near-ties", checked)
	}
	if words == 0 {
		t.Fatal("every word's wide part is zero: the check checked nothing of the wide path")
	}
	if pairs < 100 {
		t.Fatalf("only %d bigrams found in the texts checked: too few to check their rows", pairs)
	}
}

// foundPairs lists the positions t of the pairs (ids[t], ids[t+1]) found
// in m's bigram keys, by binary search in the sorted keys (not the
// model's index); nil without bigram weights.
func foundPairs(m *cnn.Model, ids []int32) []int {
	var out []int
	for t := 0; t+1 < len(ids) && m.Config.WideBigrams; t++ {
		if _, ok := slices.BinarySearch(m.Bigrams, uint64(ids[t])<<32|uint64(ids[t+1])); ok {
			out = append(out, t)
		}
	}
	return out
}

// Every shown number is invariant when a constant is added to one filter's
// output-weight column and another to every class's output bias, and when
// filters are rescaled (cnn.Model.WithFiltersRescaled), on many random models and texts.
func TestShownNumbersInvariant(t *testing.T) {
	rng := rand.New(rand.NewPCG(30, 30))
	checked := 0
	for trial := 0; trial < 60; trial++ {
		m, opt := tableCase(rng, trial)
		var st *SlotTable
		if trial%2 == 0 {
			st = mustTable(t, m, opt)
		}
		for range 8 {
			ids := randomText(rng, m.Config.VocabSize, 30)
			eo := ExplainOptions{Table: st, Occlusion: true, OcclusionWidths: []int{2}, IG: true, KeptDown: 4}
			if checkInvariant(t, m, ids, eo, rng) {
				checked++
			}
		}
	}
	if checked < 400 {
		t.Fatalf("only %d of 480 texts checked: too many near-ties", checked)
	}
}

// checkIdentities asserts, on one explanation, the exact decompositions to
// 1e-5 relative to the sum of the magnitudes of their terms (the float32
// model rounds each term at about 6e-8 of its size): Value = Parts() for the
// log-odds and each centred logit, against the reference forward pass of
// package cnn; each fired filter's part = its bias part + its tokens' shares;
// the centred values and shares sum to zero over the classes; and
// completeness of integrated gradients.
func checkIdentities(t *testing.T, m *cnn.Model, ids []int32, e *Explanation) {
	t.Helper()
	want := m.Forward(ids)
	all := append([]Shares{e.LogOdds}, e.Centred...)
	checkWideParts(t, m, ids, e, all)
	for j, s := range all {
		scale := math.Abs(s.OutputBias)
		for _, v := range s.FilterBias {
			scale += math.Abs(v)
		}
		for _, v := range s.Tokens {
			scale += math.Abs(v)
		}
		ref := contrastOf(want.Logits, s)
		if !testref.Close(s.Parts(), ref, 1e-5*scale+1e-6, 1e-5) || !testref.Close(s.Value, ref, 1e-5*scale+1e-6, 1e-5) {
			t.Fatalf("text %v target %d (%d vs %d): value %.9g, parts %.9g, forward %.9g (scale %g)", ids, j, s.Class, s.Against, s.Value, s.Parts(), ref, scale)
		}
		for k, ff := range e.Filters {
			part := s.FilterBias[k]
			col := columnOf(m, s, ff.Filter)
			for _, v := range ff.Slots {
				part += col * v
			}
			if !testref.Close(part, s.Filters[k], 1e-5*math.Abs(s.Filters[k])+1e-7, 1e-5) {
				t.Fatalf("target %d filter %d: bias part + slot parts %.9g, filter part %.9g", j, ff.Filter, part, s.Filters[k])
			}
		}
	}
	if C := len(e.Centred); C > 0 {
		var sum float64
		for _, s := range e.Centred {
			sum += s.Value
		}
		if math.Abs(sum) > 1e-9*(1+math.Abs(e.LogOdds.Value)) {
			t.Fatalf("centred logits sum to %g", sum)
		}
		for i := range e.Tokens {
			var ts float64
			for _, s := range e.Centred {
				ts += s.Tokens[i]
			}
			if math.Abs(ts) > 1e-9 {
				t.Fatalf("token %d: centred shares sum to %g", i, ts)
			}
		}
	}
	if ig := e.Integrated; ig != nil && ig.Steps == 0 {
		for j, s := range append([]IGShares{ig.LogOdds}, ig.Centred...) {
			scale := math.Abs(s.Value) + math.Abs(s.Baseline)
			for _, v := range s.Tokens {
				scale += math.Abs(v)
			}
			if math.Abs(s.Gap) > 1e-5*scale+1e-6 {
				t.Fatalf("text %v IG target %d: completeness gap %g (scale %g)", ids, j, s.Gap, scale)
			}
		}
	}
}

// checkWideParts checks the wide path's parts of every split quantity
// against their definition, written out from the model layout: the output
// bias holds Σ_c v_c·(OutB[c] + Wide[UNK][c]) for every text, token
// i's wide part is Σ_c v_c·(Wide[x_i][c] − Wide[UNK][c])/N (0 for PAD),
// plus, with bigram weights, half of Σ_c v_c·(WideBigram[p][c] −
// Wide[UNK][c])/N for each found pair p holding token i (N then counting
// the words and the found pairs), it is in the token's share next to what
// its slot scores give, and integrated gradients carry the same parts
// (their baseline the unknown word's).
func checkWideParts(t *testing.T, m *cnn.Model, ids []int32, e *Explanation, all []Shares) {
	t.Helper()
	C := m.Config.Classes
	found := foundPairs(m, ids)
	n := len(found)
	for _, id := range ids {
		if id != 0 {
			n++
		}
	}
	var igs []IGShares
	if e.Integrated != nil {
		igs = append([]IGShares{e.Integrated.LogOdds}, e.Integrated.Centred...)
	}
	for j, s := range all {
		if !m.Config.Wide {
			if s.Words != nil || (igs != nil && igs[j].Words != nil) {
				t.Fatalf("target %d: wide parts on a model without the wide path", j)
			}
			continue
		}
		v := weightsOf(C, s)
		var bias, unk float64
		for c := range C {
			bias += v[c] * float64(m.OutB[c])
			unk += v[c] * float64(m.Wide[C+c]) // row 1 is UNK
		}
		if !testref.Close(s.OutputBias, bias+unk, 1e-9, 1e-9) {
			t.Fatalf("text %v target %d: output bias %.12g, want %.12g + %.12g", ids, j, s.OutputBias, bias, unk)
		}
		if len(s.Words) != len(ids) {
			t.Fatalf("target %d: %d wide parts for %d tokens", j, len(s.Words), len(ids))
		}
		slotParts := make([]float64, len(ids))
		for _, ff := range e.Filters {
			col := columnOf(m, s, ff.Filter)
			for sl, sc := range ff.Slots {
				if i := ff.Start + sl; i < len(ids) {
					slotParts[i] += col * sc
				}
			}
		}
		for i, id := range ids {
			var want float64
			if id != 0 {
				for c := range C {
					want += v[c] * (float64(m.Wide[int(id)*C+c]) - float64(m.Wide[C+c])) / float64(n)
				}
			}
			for _, p := range found {
				if p == i || p+1 == i {
					row := m.BigramRow(ids[p], ids[p+1])
					for c := range C {
						want += v[c] * (float64(row[c]) - float64(m.Wide[C+c])) / float64(2*n)
					}
				}
			}
			if !testref.Close(s.Words[i], want, 1e-9, 1e-9) || !testref.Close(s.Tokens[i], slotParts[i]+want, 1e-9, 1e-9) {
				t.Fatalf("text %v target %d token %d: wide part %.12g, want %.12g; share %.12g, want %.12g",
					ids, j, i, s.Words[i], want, s.Tokens[i], slotParts[i]+want)
			}
			if igs != nil && igs[j].Words[i] != s.Words[i] {
				t.Fatalf("target %d token %d: integrated gradients' wide part %g, the shares' %g", j, i, igs[j].Words[i], s.Words[i])
			}
		}
		if igs != nil && !testref.Close(igs[j].Baseline-unk, baselineOf(m, v), 1e-9, 1e-9) {
			t.Fatalf("text %v target %d: IG baseline %.12g, want %.12g + %.12g", ids, j, igs[j].Baseline, baselineOf(m, v), unk)
		}
	}
}

// weightsOf is the class weights v of the quantity s splits.
func weightsOf(C int, s Shares) []float64 {
	v := make([]float64, C)
	if s.Against >= 0 {
		v[s.Class], v[s.Against] = 1, -1
		return v
	}
	for c := range v {
		v[c] = -1 / float64(C)
	}
	v[s.Class]++
	return v
}

// baselineOf is Σ_c v_c·logit[c] with every word vector zero, from the
// layout: every unmasked filter pools relu(B_g).
func baselineOf(m *cnn.Model, v []float64) float64 {
	nf := m.Config.NumFilters()
	var z float64
	for c, vc := range v {
		z += vc * float64(m.OutB[c])
		for g := range nf {
			if b := m.FilterBias(g); b > 0 && !m.IsMasked(g) {
				z += vc * float64(m.OutW[c*nf+g]) * float64(b)
			}
		}
	}
	return z
}

// columnOf is Σ_c v_c·OutW[c][g] for the quantity s splits.
func columnOf(m *cnn.Model, s Shares, g int) float64 {
	nf := m.Config.NumFilters()
	if s.Against >= 0 {
		return float64(m.OutW[s.Class*nf+g]) - float64(m.OutW[s.Against*nf+g])
	}
	var mean float64
	for c := 0; c < m.Config.Classes; c++ {
		mean += float64(m.OutW[c*nf+g])
	}
	return float64(m.OutW[s.Class*nf+g]) - mean/float64(m.Config.Classes)
}

// contrastOf evaluates the quantity s splits on float32 logits.
func contrastOf(z []float32, s Shares) float64 {
	if s.Against >= 0 {
		return float64(z[s.Class]) - float64(z[s.Against])
	}
	var mean float64
	for _, v := range z {
		mean += float64(v)
	}
	return float64(z[s.Class]) - mean/float64(len(z))
}

func TestIdentitiesRandomModels(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 31))
	for trial := 0; trial < 80; trial++ {
		m, opt := tableCase(rng, trial)
		st := mustTable(t, m, opt)
		for range 10 {
			ids := randomText(rng, m.Config.VocabSize, 40)
			e, err := Explain(m, nil, ids, ExplainOptions{Table: st, IG: true})
			if err != nil {
				t.Fatal(err)
			}
			checkExact(t, m, ids, e)
			checkIdentities(t, m, ids, e)
		}
	}
}

// The closed form of integrated gradients equals a right Riemann sum of 10⁴
// steps to 1e-4 relative to the token's gross attribution (the Riemann
// sum's error is at most one step, 1e-4, times each filter's part), and its
// completeness gap is float rounding (checkIdentities: 1e-5 relative).
func TestIGClosedFormMatchesRiemann(t *testing.T) {
	rng := rand.New(rand.NewPCG(32, 32))
	const steps = 10000
	for trial := 0; trial < 40; trial++ {
		m := randomModel(rng, randomConfig(rng))
		// Distinct words: repeated n-grams tie exactly, and the two sums
		// round window sums in different orders.
		ids := distinct(randomText(rng, m.Config.VocabSize, 20))
		exact, err := Explain(m, nil, ids, ExplainOptions{IG: true})
		if err != nil {
			t.Fatal(err)
		}
		checkIdentities(t, m, ids, exact)
		riemann, err := Explain(m, nil, ids, ExplainOptions{IG: true, IGSteps: steps})
		if err != nil {
			t.Fatal(err)
		}
		gross := grossIG(m, exact)
		for j, s := range append([]IGShares{exact.Integrated.LogOdds}, exact.Integrated.Centred...) {
			r := riemann.Integrated.LogOdds
			if j > 0 {
				r = riemann.Integrated.Centred[j-1]
			}
			for i := range s.Tokens {
				if !testref.Close(s.Tokens[i], r.Tokens[i], 1e-4*gross[i]+1e-7, 0) {
					t.Errorf("trial %d target %d token %d: closed form %.8g, Riemann %.8g (gross %g)", trial, j, i, s.Tokens[i], r.Tokens[i], gross[i])
				}
			}
		}
	}
}

// grossIG bounds each token's attribution: Σ over the filters whose winning
// window covers it of max_c |OutW[c][g]|·|slot score|·2.
func grossIG(m *cnn.Model, e *Explanation) []float64 {
	out := make([]float64, len(e.Tokens))
	nf := m.Config.NumFilters()
	x := cnn.Padded(append([]int32(nil), tokenIDs(e)...), m.Config.MaxWidth())
	f := m.Forward(x)
	for g := 0; g < nf; g++ {
		var col float64
		for c := 0; c < m.Config.Classes; c++ {
			col = math.Max(col, math.Abs(float64(m.OutW[c*nf+g])))
		}
		for s := 0; s < m.FilterWidth(g); s++ {
			if i := f.Argmax[g] + s; i < len(out) {
				out[i] += 2 * col * math.Abs(directSlot(m, g, s, x[i]))
			}
		}
	}
	return out
}

func tokenIDs(e *Explanation) []int32 {
	ids := make([]int32, len(e.Tokens))
	for i, t := range e.Tokens {
		ids[i] = t.ID
	}
	return ids
}

// Kept-down windows checked by brute force: every window of every filter
// re-scored in float64 from the model layout, and every measured edit
// re-run with the reference forward pass.
func TestKeptDownBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(33, 33))
	found := 0
	for trial := 0; trial < 60; trial++ {
		m, opt := tableCase(rng, trial)
		st := mustTable(t, m, opt)
		for range 6 {
			ids := randomText(rng, m.Config.VocabSize, 25)
			e, err := Explain(m, nil, ids, ExplainOptions{Table: st, KeptDown: 3})
			if err != nil {
				t.Fatal(err)
			}
			found += len(e.KeptDown)
			checkKeptDown(t, m, ids, e, 3)
		}
	}
	if found < 100 {
		t.Fatalf("only %d kept-down windows in 360 texts: the check checked little", found)
	}
}

// bruteKept is, per filter, the window a brute-force scan keeps.
type bruteKept struct {
	start          int
	positive, act  float64
	effect, winner float64
}

func bruteKeptDown(m *cnn.Model, ids []int32, e *Explanation) map[int]bruteKept {
	x := cnn.Padded(ids, m.Config.MaxWidth())
	f := m.Forward(ids)
	nf := m.Config.NumFilters()
	out := map[int]bruteKept{}
	for g := 0; g < nf; g++ {
		if m.IsMasked(g) {
			continue
		}
		w := m.FilterWidth(g)
		h := float64(f.Pooled[g])
		best := bruteKept{start: -1}
		for t := 0; t+w <= len(x); t++ {
			if h > 0 && t == f.Argmax[g] {
				continue
			}
			p, a := float64(m.FilterBias(g)), float64(m.FilterBias(g))
			for s := 0; s < w; s++ {
				v := directSlot(m, g, s, x[t+s])
				p += math.Max(v, 0)
				a += v
			}
			if p > h+1e-5 && (best.start < 0 || p > best.positive) {
				best = bruteKept{start: t, positive: p, act: a, winner: h}
			}
		}
		if best.start >= 0 {
			col := float64(m.OutW[e.Class*nf+g]) - float64(m.OutW[e.RunnerUp*nf+g])
			best.effect = col * (best.positive - h)
			out[g] = best
		}
	}
	return out
}

func checkKeptDown(t *testing.T, m *cnn.Model, ids []int32, e *Explanation, k int) {
	t.Helper()
	brute := bruteKeptDown(m, ids, e)
	reported := map[int]bool{}
	smallest := math.Inf(1)
	for _, kd := range e.KeptDown {
		reported[kd.Filter] = true
		smallest = math.Min(smallest, math.Abs(kd.Effect))
		b, ok := brute[kd.Filter]
		// A window within 1e-5 of the winner may be counted on either side.
		if !ok {
			if kd.Positive-kd.Winner > 1e-5 {
				t.Fatalf("text %v filter %d: kept-down window at %d not found by brute force", ids, kd.Filter, kd.Start)
			}
			continue
		}
		if b.start != kd.Start && math.Abs(b.positive-kd.Positive) > 1e-5 {
			t.Fatalf("text %v filter %d: window %d (positive %g), brute force %d (%g)", ids, kd.Filter, kd.Start, kd.Positive, b.start, b.positive)
		}
		if !testref.Close(kd.Positive, b.positive, 1e-5, 1e-5) || !testref.Close(kd.Effect, b.effect, 1e-5, 1e-5) ||
			(b.start == kd.Start && !testref.Close(kd.Activation, b.act, 1e-5, 1e-5)) {
			t.Fatalf("text %v filter %d: positive %g effect %g activation %g, brute force %g %g %g", ids, kd.Filter, kd.Positive, kd.Effect, kd.Activation, b.positive, b.effect, b.act)
		}
		// The edit, re-run by the reference forward pass.
		edited := append([]int32(nil), ids...)
		for _, i := range kd.By {
			if kd.Slots[i-kd.Start] >= 0 {
				t.Fatalf("filter %d: token %d listed with slot score %g", kd.Filter, i, kd.Slots[i-kd.Start])
			}
			edited[i] = 0
		}
		f := m.Forward(edited)
		if !testref.Close(kd.Pooled, float64(f.Pooled[kd.Filter]), 1e-5, 1e-5) || kd.Pooled < kd.Positive-1e-5 {
			t.Fatalf("filter %d: pooled after the edit %g, forward %g, positive part %g", kd.Filter, kd.Pooled, f.Pooled[kd.Filter], kd.Positive)
		}
		nf := m.Config.NumFilters()
		col := float64(m.OutW[e.Class*nf+kd.Filter]) - float64(m.OutW[e.RunnerUp*nf+kd.Filter])
		if own := col * (float64(f.Pooled[kd.Filter]) - b.winner); !testref.Close(kd.Own, own, 1e-4, 1e-5) {
			t.Fatalf("filter %d: own change %g after the edit, forward %g", kd.Filter, kd.Own, own)
		}
		lo := float64(f.Logits[e.Class]) - float64(f.Logits[e.RunnerUp])
		checkKeptFilterPath(t, m, ids, edited, e, kd, lo)
		if !testref.Close(kd.LogOdds, lo, 1e-4, 1e-5) || !testref.Close(kd.Drop, e.Probabilities[e.Class]-float64(f.Probs[e.Class]), 2e-6, 1e-4) {
			t.Fatalf("filter %d: log-odds %g drop %g after the edit, forward %g %g", kd.Filter, kd.LogOdds, kd.Drop, lo, e.Probabilities[e.Class]-float64(f.Probs[e.Class]))
		}
	}
	if len(e.KeptDown) < k && len(e.KeptDown) < len(brute) {
		t.Fatalf("text %v: %d kept-down windows reported, brute force finds %d", ids, len(e.KeptDown), len(brute))
	}
	for g, b := range brute {
		if !reported[g] && len(e.KeptDown) == k && math.Abs(b.effect) > smallest+1e-5 {
			t.Fatalf("text %v: filter %d left out with |effect| %g above the smallest reported %g", ids, g, math.Abs(b.effect), smallest)
		}
	}
}

// checkKeptFilterPath checks kd.WordsHeld, the edit with the wide
// path's term held, against the reference forward pass (cnn.Model.Forward)
// of m without its wide path on the edited text plus m's wide term of the
// text itself, as cnn.Model.AddWide adds it: the log-odds with only the
// filters' windows edited. Without the wide path it is lo, the whole edit's.
func checkKeptFilterPath(t *testing.T, m *cnn.Model, ids, edited []int32, e *Explanation, kd KeptDownWindow, lo float64) {
	t.Helper()
	want := lo
	if m.Config.Wide {
		plain := m.Clone()
		plain.Config.Wide, plain.Wide = false, nil
		plain.Config.WideBigrams, plain.Bigrams, plain.WideBigram = false, nil, nil
		z := plain.Forward(edited).Logits
		m.AddWide(ids, z)
		want = float64(z[e.Class]) - float64(z[e.RunnerUp])
	}
	if !testref.Close(kd.WordsHeld, want, 1e-4, 1e-5) {
		t.Fatalf("text %v filter %d: log-odds %g after the edit with the wide term held, forward %g (whole edit %g)", ids, kd.Filter, kd.WordsHeld, want, lo)
	}
}

// Every number of the filter profiles (all that JSON holds) is invariant
// when a constant is added to one filter's output-weight column and to all
// classes' biases, and when filters are rescaled (cnn.Model.WithFiltersRescaled), on random
// models and corpora.
func TestProfileShownNumbersInvariant(t *testing.T) {
	rng := rand.New(rand.NewPCG(34, 34))
	for trial := 0; trial < 12; trial++ {
		m, _ := tableCase(rng, trial)
		ids, gold := randomCorpus(rng, m, 200, 14)
		g := rng.IntN(m.Config.NumFilters())
		ks, what := randomScales(rng, m)
		for _, c := range []struct {
			s    *cnn.Model
			what string
		}{
			{shifted(m, g, float32(rng.NormFloat64()*3), float32(rng.NormFloat64()*3)), fmt.Sprintf("a shift of filter %d's output weights", g)},
			{m.WithFiltersRescaled(ks), what},
		} {
			var docs [2][]byte
			for i, mm := range []*cnn.Model{m, c.s} {
				prof, err := Profile(context.Background(), mm, ids, gold, ProfileOptions{Workers: 2})
				if err != nil {
					t.Fatal(err)
				}
				if docs[i], err = json.Marshal(prof); err != nil {
					t.Fatal(err)
				}
			}
			if path, ok := jsonClose(docs[0], docs[1], 1e-5, 1e-5); !ok {
				t.Fatalf("trial %d: a shown number of the profiles changes under %s, at %s", trial, c.what, path)
			}
		}
	}
}

// fewWords returns a text of n words (ids ≥ 1) with up to two PAD ids
// among them: n = 0 gives a text of PAD only, one to three long.
func fewWords(rng *rand.Rand, vocab, n int) []int32 {
	pads := rng.IntN(3)
	if n == 0 {
		pads++
	}
	ids := make([]int32, n+pads)
	for i := range n {
		ids[i] = int32(1 + rng.IntN(vocab-1))
	}
	rng.Shuffle(len(ids), func(i, j int) { ids[i], ids[j] = ids[j], ids[i] })
	return ids
}

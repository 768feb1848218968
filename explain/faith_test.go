package explain

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"telltale/cnn"
	"telltale/internal/testref"
)

// bruteFaith recomputes one text's figures for one ranking with the
// reference forward pass of package cnn, from the definitions.
func bruteFaith(m *cnn.Model, text []int32, order []int, y int, percents []float64, J int) textFaith {
	p0 := float64(m.Forward(text).Probs[y])
	prob := func(keep func(rank int) bool) float64 {
		x := append([]int32(nil), text...)
		for rank, pos := range order {
			if !keep(rank) {
				x[pos] = 0
			}
		}
		return float64(m.Forward(x).Probs[y])
	}
	L := len(text)
	f := textFaith{aggComp: math.NaN(), aggSuff: math.NaN()}
	var sc, ss float64
	n := 0
	for _, pc := range percents {
		k := int(math.Ceil(pc * float64(L) / 100))
		if k == 1 {
			f.comp, f.suff = append(f.comp, math.NaN()), append(f.suff, math.NaN())
			continue
		}
		c, s := p0-prob(func(r int) bool { return r >= k }), p0-prob(func(r int) bool { return r < k })
		f.comp, f.suff = append(f.comp, c), append(f.suff, s)
		sc, ss, n = sc+c, ss+s, n+1
	}
	if n > 0 {
		f.aggComp, f.aggSuff = sc/float64(n), ss/float64(n)
	}
	var area float64
	pts := 0
	for j := 0; j <= J; j++ {
		if k := int(math.Ceil(float64(j) * float64(L) / float64(J))); k != 1 {
			area += p0 - prob(func(r int) bool { return r >= k })
			pts++
		}
	}
	f.aopc = area / float64(pts)
	f.top1Comp = p0 - prob(func(r int) bool { return r >= 1 })
	f.top1Suff = p0 - prob(func(r int) bool { return r < 1 })
	return f
}

// Every figure of every method recomputed by brute force with the reference
// forward pass, the rankings drawn with the same seeds (ties and the random
// control's draws included), on a model without the wide path and one with
// it.
func TestFaithfulnessBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 11))
	m := randomModel(rng, randomConfig(rng))
	ids, gold := randomCorpus(rng, m, 40, 25)
	checkFaithBrute(t, m, ids, gold)
	wide := withWide(randomModel(rng, randomConfig(rng)), 11)
	ids, gold = randomCorpus(rng, wide, 40, 25)
	checkFaithBrute(t, wide, ids, gold)
}

func checkFaithBrute(t *testing.T, m *cnn.Model, ids [][]int32, gold []int) {
	t.Helper()
	opt := FaithOptions{Percents: []float64{5, 10, 50}, Methods: []string{MethodOcclusion, MethodExact, MethodRandom, MethodIG},
		Workers: 2, Draws: 3, Seed: 9}
	rep, err := Faithfulness(context.Background(), m, ids, gold, opt)
	if err != nil {
		t.Fatal(err)
	}
	var rows [][]textFaith
	correct := 0
	for i, text := range ids {
		if len(text) == 0 {
			continue
		}
		e, err := Explain(m, nil, text, ExplainOptions{Occlusion: true, IG: true})
		if err != nil {
			t.Fatal(err)
		}
		if gold[i] == e.Class {
			correct++
		}
		row := make([]textFaith, len(opt.Methods))
		for mi, meth := range opt.Methods {
			draws := 1
			if meth == MethodRandom {
				draws = opt.Draws
			}
			for d := range draws {
				r := rand.New(rand.NewPCG(opt.Seed, uint64(i)<<16|uint64(mi)<<8|uint64(d)))
				order := rankTokens(nil, Scores(e, meth, -1), len(text), r)
				row[mi] = addFaith(row[mi], bruteFaith(m, text, order, e.Class, opt.Percents, 10), float64(draws))
			}
		}
		rows = append(rows, row)
	}
	if rep.Texts != len(rows) || !near(rep.Accuracy, float64(correct)/float64(len(rows)), 1e-12, 0) {
		t.Fatalf("texts %d accuracy %g, want %d %g", rep.Texts, rep.Accuracy, len(rows), float64(correct)/float64(len(rows)))
	}
	if rep.AccuracyInterval == nil || *rep.AccuracyInterval != cnn.WilsonInterval(correct, len(rows), cnn.IntervalLevel) {
		t.Fatalf("accuracy interval %+v, want Wilson's of %d of %d", rep.AccuracyInterval, correct, len(rows))
	}
	same := func(what string, got, want float64) {
		t.Helper()
		if math.IsNaN(got) != math.IsNaN(want) || (!math.IsNaN(want) && !near(got, want, 1e-5, 1e-4)) {
			t.Fatalf("%s: %g, brute force %g", what, got, want)
		}
	}
	for mi, mf := range rep.Methods {
		col := func(get func(textFaith) float64) []float64 {
			var xs []float64
			for _, r := range rows {
				if v := get(r[mi]); !math.IsNaN(v) {
					xs = append(xs, v)
				}
			}
			return xs
		}
		for pi := range opt.Percents {
			c := col(func(f textFaith) float64 { return f.comp[pi] })
			same(mf.Method+" comprehensiveness", mf.Comprehensiveness[pi], mean(c))
			same(mf.Method+" sufficiency", mf.Sufficiency[pi], mean(col(func(f textFaith) float64 { return f.suff[pi] })))
			if mf.PercentTexts[pi] != len(c) {
				t.Fatalf("%s percent %g: %d texts, want %d", mf.Method, opt.Percents[pi], mf.PercentTexts[pi], len(c))
			}
			for _, iv := range []struct {
				v  float64
				ci Interval
			}{{mf.Comprehensiveness[pi], mf.ComprehensivenessCI[pi]}, {mf.Sufficiency[pi], mf.SufficiencyCI[pi]}} {
				if math.IsNaN(iv.v) != math.IsNaN(iv.ci.Low) || !math.IsNaN(iv.v) && !(iv.ci.Low <= iv.v && iv.v <= iv.ci.High) {
					t.Fatalf("%s percent %g: %g and its interval %+v", mf.Method, opt.Percents[pi], iv.v, iv.ci)
				}
			}
		}
		same(mf.Method+" comp", mf.Comp, mean(col(func(f textFaith) float64 { return f.aggComp })))
		same(mf.Method+" suff", mf.Suff, mean(col(func(f textFaith) float64 { return f.aggSuff })))
		same(mf.Method+" aopc", mf.AOPC, mean(col(func(f textFaith) float64 { return f.aopc })))
		same(mf.Method+" top1 comp", mf.Top1Comp, mean(col(func(f textFaith) float64 { return f.top1Comp })))
		same(mf.Method+" top1 suff", mf.Top1Suff, mean(col(func(f textFaith) float64 { return f.top1Suff })))
		for _, iv := range []struct {
			v  float64
			ci Interval
		}{{mf.Comp, mf.CompCI}, {mf.Suff, mf.SuffCI}, {mf.AOPC, mf.AOPCCI}, {mf.Top1Comp, mf.Top1CompCI}} {
			if !(iv.ci.Low <= iv.v && iv.v <= iv.ci.High) {
				t.Fatalf("%s: %g outside its interval %+v", mf.Method, iv.v, iv.ci)
			}
		}
	}
	if want := len(opt.Methods) * (len(opt.Methods) - 1) / 2 * 3; len(rep.Pairs) != want {
		t.Fatalf("%d pairs, want %d", len(rep.Pairs), want)
	}
	for _, p := range rep.Pairs {
		a, b := rep.Methods[indexOf(opt.Methods, p.A)], rep.Methods[indexOf(opt.Methods, p.B)]
		if p.Measure == "aopc" && p.Texts == rep.Texts && !near(p.Diff, a.AOPC-b.AOPC, 1e-9, 1e-9) {
			t.Fatalf("pair %s−%s aopc: diff %g, want %g", p.A, p.B, p.Diff, a.AOPC-b.AOPC)
		}
	}
}

func indexOf(xs []string, x string) int {
	for i, v := range xs {
		if v == x {
			return i
		}
	}
	return -1
}

// Removing the single token of largest occlusion drop removes, by
// definition, at least as much probability as any other single token, so
// occlusion's single-token comprehensiveness is the largest of all methods;
// that is why the single-token removals are kept out of the aggregates.
func TestFaithfulnessOcclusionBestAtOneToken(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 12))
	for trial := 0; trial < 5; trial++ {
		m := randomModel(rng, randomConfig(rng))
		ids, _ := randomCorpus(rng, m, 50, 40)
		rep, err := Faithfulness(context.Background(), m, ids, nil, FaithOptions{Percents: []float64{1}, Seed: 3, Resamples: 50})
		if err != nil {
			t.Fatal(err)
		}
		var occ float64
		for _, mf := range rep.Methods {
			if mf.Method == MethodOcclusion {
				occ = mf.Top1Comp
			}
		}
		for _, mf := range rep.Methods {
			if mf.Top1Comp > occ+1e-6 {
				t.Fatalf("trial %d: %s single-token comprehensiveness %g above occlusion's %g", trial, mf.Method, mf.Top1Comp, occ)
			}
			// At 1% every text of up to 100 tokens removes one token: no
			// text enters the per-percent figure.
			if mf.PercentTexts[0] != 0 || !math.IsNaN(mf.Comprehensiveness[0]) {
				t.Fatalf("trial %d: %s at 1%%: %d texts, %g", trial, mf.Method, mf.PercentTexts[0], mf.Comprehensiveness[0])
			}
		}
	}
}

// Faithfulness ranks by identified scores only: its report is unchanged
// when a constant is added to one filter's output-weight column and to all
// classes' biases.
func TestFaithfulnessInvariant(t *testing.T) {
	rng := rand.New(rand.NewPCG(14, 14))
	m := randomModel(rng, randomConfig(rng))
	ids, gold := randomCorpus(rng, m, 30, 20)
	opt := FaithOptions{Percents: []float64{10, 50}, Workers: 1, Resamples: 100, Seed: 4}
	a, err := Faithfulness(context.Background(), m, ids, gold, opt)
	if err != nil {
		t.Fatal(err)
	}
	b, err := Faithfulness(context.Background(), shifted(m, 0, 2.5, -1.5), ids, gold, opt)
	if err != nil {
		t.Fatal(err)
	}
	ja, _ := json.Marshal(a)
	jb, _ := json.Marshal(b)
	// Probabilities move by float32 rounding of the shifted weights.
	if path, ok := jsonClose(ja, jb, 1e-6, 1e-5); !ok {
		t.Fatalf("report changed under a shift of one output-weight column at %s:\n%s\n%s", path, ja, jb)
	}
}

// jsonClose compares two JSON documents: same structure and strings,
// numbers within abs or rel. It returns the path of the first difference.
func jsonClose(a, b []byte, abs, rel float64) (string, bool) {
	var x, y any
	if json.Unmarshal(a, &x) != nil || json.Unmarshal(b, &y) != nil {
		return "(not JSON)", false
	}
	var walk func(path string, x, y any) (string, bool)
	walk = func(path string, x, y any) (string, bool) {
		switch x := x.(type) {
		case map[string]any:
			y, ok := y.(map[string]any)
			if !ok || len(x) != len(y) {
				return path, false
			}
			for k, v := range x {
				if p, ok := walk(path+"."+k, v, y[k]); !ok {
					return p, false
				}
			}
			return "", true
		case []any:
			y, ok := y.([]any)
			if !ok || len(x) != len(y) {
				return path, false
			}
			for i := range x {
				if p, ok := walk(fmt.Sprintf("%s[%d]", path, i), x[i], y[i]); !ok {
					return p, false
				}
			}
			return "", true
		case float64:
			y, ok := y.(float64)
			return path, ok && testref.Close(x, y, abs, rel)
		}
		return path, x == y
	}
	return walk("", x, y)
}

func TestFaithfulnessErrors(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 13))
	m := randomModel(rng, randomConfig(rng))
	ids, gold := randomCorpus(rng, m, 300, 10)
	for _, tc := range []struct {
		name string
		opt  FaithOptions
		gold []int
	}{
		{"percent", FaithOptions{Percents: []float64{0}}, gold},
		{"method", FaithOptions{Methods: []string{"saliency"}}, gold},
		{"gold", FaithOptions{}, gold[:3]},
		{"ig steps", FaithOptions{IGSteps: -1}, gold},
	} {
		if _, err := Faithfulness(context.Background(), m, ids, tc.gold, tc.opt); err == nil {
			t.Errorf("%s: no error", tc.name)
		}
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Faithfulness(ctx, m, ids, gold, FaithOptions{}); !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled: %v", err)
	}
}

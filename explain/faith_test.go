package explain

import (
	"context"
	"errors"
	"math/rand/v2"
	"testing"

	"telltale/cnn"
)

// Comprehensiveness and sufficiency recomputed by brute force with the
// reference forward for the occlusion ranking.
func TestFaithfulnessBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 11))
	m := randomModel(rng, randomConfig(rng))
	ids, gold := randomCorpus(rng, m, 30, 20)
	opt := FaithOptions{Percents: []float64{10, 50}, Methods: []string{MethodOcclusion, MethodExact, MethodRandom, MethodIG}, Workers: 2}
	rep, err := Faithfulness(context.Background(), m, ids, gold, opt)
	if err != nil {
		t.Fatal(err)
	}
	var comp, suff [2]float64
	var aopc float64
	n, correct := 0, 0
	for i, text := range ids {
		if len(text) == 0 {
			continue
		}
		n++
		e, _ := Explain(m, nil, text, ExplainOptions{Occlusion: true})
		y := e.Class
		if gold[i] == y {
			correct++
		}
		order := ranking(nil, e, MethodOcclusion, y, nil)
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
		for pi, pc := range opt.Percents {
			k := (int(pc)*len(text) + 99) / 100
			comp[pi] += p0 - prob(func(r int) bool { return r >= k })
			suff[pi] += p0 - prob(func(r int) bool { return r < k })
		}
		var area float64
		for j := 0; j <= 10; j++ {
			k := (j*len(text) + 9) / 10
			area += p0 - prob(func(r int) bool { return r >= k })
		}
		aopc += area / 11
	}
	if rep.Texts != n || !near(rep.Accuracy, float64(correct)/float64(n), 1e-12, 0) {
		t.Fatalf("texts %d accuracy %g, want %d %g", rep.Texts, rep.Accuracy, n, float64(correct)/float64(n))
	}
	occ := rep.Methods[0]
	for pi := range opt.Percents {
		if !near(occ.Comprehensiveness[pi], comp[pi]/float64(n), 1e-5, 1e-4) || !near(occ.Sufficiency[pi], suff[pi]/float64(n), 1e-5, 1e-4) {
			t.Fatalf("percent %g: comp %g suff %g, brute force %g %g", opt.Percents[pi], occ.Comprehensiveness[pi], occ.Sufficiency[pi], comp[pi]/float64(n), suff[pi]/float64(n))
		}
	}
	if !near(occ.AOPC, aopc/float64(n), 1e-5, 1e-4) {
		t.Fatalf("AOPC %g, brute force %g", occ.AOPC, aopc/float64(n))
	}
}

// Removing the single token of largest occlusion drop removes, by
// definition, at least as much probability as any other single token: at 1%
// (one token for texts of up to 100 tokens) occlusion's comprehensiveness is
// the largest of all methods.
func TestFaithfulnessOcclusionBestAtOneToken(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 12))
	for trial := 0; trial < 5; trial++ {
		m := randomModel(rng, randomConfig(rng))
		ids, _ := randomCorpus(rng, m, 50, 40)
		rep, err := Faithfulness(context.Background(), m, ids, nil, FaithOptions{Percents: []float64{1}, Seed: 3})
		if err != nil {
			t.Fatal(err)
		}
		var occ float64
		for _, mf := range rep.Methods {
			if mf.Method == MethodOcclusion {
				occ = mf.Comprehensiveness[0]
			}
		}
		for _, mf := range rep.Methods {
			if mf.Comprehensiveness[0] > occ+1e-6 {
				t.Fatalf("trial %d: %s comprehensiveness %g above occlusion's %g", trial, mf.Method, mf.Comprehensiveness[0], occ)
			}
		}
	}
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

var _ = cnn.Padded

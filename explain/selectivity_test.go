package explain

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os/exec"
	"slices"
	"testing"

	"telltale/cnn"
	"telltale/internal/testref"
)

// The one-sided exact binomial p-value and the Clopper–Pearson interval
// against SciPy (scipy.stats.binomtest(k, n, p, alternative="greater") and
// its proportion_ci(method="exact")), run live on Debian's Python.
func TestBinomialSciPy(t *testing.T) {
	testref.SequentialSkipInRace(t, "the binomial test and interval against SciPy")
	testref.RequirePython(t, "scipy")
	rng := rand.New(rand.NewPCG(60, 60))
	type tc struct {
		K, N int
		P    float64
	}
	cases := []tc{{0, 10, 0.3}, {10, 10, 0.3}, {5, 10, 0.5}, {1, 1, 0.9}, {300, 400, 0.5}, {60, 1000, 0.02}}
	for range 40 {
		n := 1 + rng.IntN(2000)
		cases = append(cases, tc{rng.IntN(n + 1), n, rng.Float64()})
	}
	in, _ := json.Marshal(cases)
	cmd := exec.Command(testref.Python, "-c", `
import sys, json
from scipy.stats import binomtest
out = []
for c in json.load(sys.stdin):
    k, n, p = c["K"], c["N"], c["P"]
    ci = binomtest(k, n).proportion_ci(confidence_level=0.95, method="exact")
    out.append([binomtest(k, n, p, alternative="greater").pvalue, ci.low, ci.high])
print(json.dumps(out))
`)
	cmd.Stdin = bytes.NewReader(in)
	b, err := cmd.Output()
	if err != nil {
		t.Fatalf("scipy: %v", err)
	}
	var want [][3]float64
	if err := json.Unmarshal(b, &want); err != nil {
		t.Fatal(err)
	}
	for i, c := range cases {
		// SciPy sums the binomial probabilities; the incomplete beta
		// function agrees to about 1e-12 relative.
		if got := BinomialUpper(c.K, c.N, c.P); !testref.Close(got, want[i][0], 1e-13, 1e-9) {
			t.Errorf("BinomialUpper(%d, %d, %g) = %.15g, SciPy %.15g", c.K, c.N, c.P, got, want[i][0])
		}
		lo, hi := ClopperPearson(c.K, c.N, 0.95)
		if !testref.Close(lo, want[i][1], 1e-12, 1e-9) || !testref.Close(hi, want[i][2], 1e-12, 1e-9) {
			t.Errorf("ClopperPearson(%d, %d) = [%.15g, %.15g], SciPy [%.15g, %.15g]", c.K, c.N, lo, hi, want[i][1], want[i][2])
		}
	}
}

// Holm's adjustment worked by hand from its definition (Holm 1979):
// p = (0.01, 0.04, 0.03, 0.005), m = 4; sorted 0.005, 0.01, 0.03, 0.04
// → 4·0.005 = 0.02, 3·0.01 = 0.03, 2·0.03 = 0.06, max(0.06, 1·0.04) = 0.06.
// A NaN is left out of m and stays NaN.
func TestHolmHand(t *testing.T) {
	got := Holm([]float64{0.01, 0.04, math.NaN(), 0.03, 0.005})
	want := []float64{0.03, 0.06, math.NaN(), 0.06, 0.02}
	for i := range want {
		if math.IsNaN(want[i]) != math.IsNaN(got[i]) || (!math.IsNaN(want[i]) && math.Abs(got[i]-want[i]) > 1e-15) {
			t.Fatalf("Holm = %v, want %v", got, want)
		}
	}
	if got := Holm([]float64{0.6, 0.9}); got[0] != 1 || got[1] != 1 {
		t.Fatalf("Holm caps at 1: %v", got)
	}
}

// The selectivity threshold, its held-out counts and test checked by brute
// force: every text re-run with the reference forward pass, split into
// halves, and the threshold found by its definition.
func TestSelectivityBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(61, 61))
	thresholds := 0
	for trial := 0; trial < 25; trial++ {
		m, _ := tableCase(rng, trial)
		ids, gold := randomCorpus(rng, m, 60+rng.IntN(300), 12)
		opt := ProfileOptions{Workers: 1 + trial%3, Selective: []float64{0.5, 0.3, 0.8}[trial%3]}
		if trial%2 == 1 {
			opt.ExactTop = 7 // the histogram fallback
		}
		prof, err := Profile(context.Background(), m, ids, gold, opt)
		if err != nil {
			t.Fatal(err)
		}
		nf := m.Config.NumFilters()
		votes := make([]int, nf)
		for g := range votes {
			votes[g] = voteClass(m, g)
		}
		bw := bruteWinners(m, ids, votes)
		var texts, assigned [2]int
		preds := make([]int, len(ids))
		for i, text := range ids {
			preds[i] = argmax32(m.Forward(text).Logits)
			texts[half(i)]++
		}
		if prof.Halves != texts {
			t.Fatalf("halves %v, brute force %v", prof.Halves, texts)
		}
		for g := range prof.Filters {
			pr := &prof.Filters[g]
			s := &pr.Selectivity
			assigned = [2]int{}
			for i := range ids {
				if preds[i] == pr.Class {
					assigned[half(i)]++
				}
			}
			base := float64(assigned[0]) / float64(texts[0])
			if !testref.Close(s.Target, base+opt.Selective*(1-base), 1e-12, 1e-12) {
				t.Fatalf("trial %d filter %d: target %g, want %g", trial, g, s.Target, base+opt.Selective*(1-base))
			}
			var choose, held []bruteWin
			for _, w := range bw[g] {
				if half(w.text) == 0 {
					choose = append(choose, w)
				} else {
					held = append(held, w)
				}
			}
			if s.ThresholdExact {
				want, _ := brutePurity(choose, s.Target)
				if math.IsInf(want, 1) != math.IsInf(s.Threshold, 1) || (!math.IsInf(want, 1) && !near(s.Threshold, want, 1e-5, 1e-5)) {
					t.Fatalf("trial %d filter %d: threshold %g, brute force %g", trial, g, s.Threshold, want)
				}
			} else if n, in := purityAt(choose, s.Threshold); float64(in) < s.Target*float64(n) {
				t.Fatalf("trial %d filter %d: bin-edge threshold %g has purity %d/%d below %g", trial, g, s.Threshold, in, n, s.Target)
			}
			if math.IsInf(s.Threshold, 1) {
				if s.Selective || !math.IsNaN(s.P) {
					t.Fatalf("trial %d filter %d: no threshold, yet selective %v p %g", trial, g, s.Selective, s.P)
				}
				continue
			}
			thresholds++
			// The reference forward pass sums in another order than the
			// table: activations within 1e-5 of the threshold may fall on
			// either side.
			tol := 1e-5 * math.Max(1, math.Abs(s.Threshold))
			nLo, inLo := purityAt(held, s.Threshold-tol)
			nHi, inHi := purityAt(held, s.Threshold+tol)
			allLo, _ := purityAt(bw[g], s.Threshold-tol)
			allHi, _ := purityAt(bw[g], s.Threshold+tol)
			if s.Windows < nHi || s.Windows > nLo || s.InClass < inHi || s.InClass > inLo || s.Above < allHi || s.Above > allLo {
				t.Fatalf("trial %d filter %d: held out %d/%d (all %d), brute force %d–%d/%d–%d (%d–%d)", trial, g, s.InClass, s.Windows, s.Above, inHi, inLo, nHi, nLo, allHi, allLo)
			}
			n, in := s.Windows, s.InClass
			hb := float64(assigned[1]) / float64(texts[1])
			if !testref.Close(s.BaseRate, hb, 1e-12, 1e-12) {
				t.Fatalf("trial %d filter %d: held-out base rate %g, want %g", trial, g, s.BaseRate, hb)
			}
			if n > 0 && !testref.Close(s.P, BinomialUpper(in, n, hb), 1e-15, 1e-12) {
				t.Fatalf("trial %d filter %d: p %g, want %g", trial, g, s.P, BinomialUpper(in, n, hb))
			}
		}
		var ps []float64
		for _, f := range prof.Filters {
			ps = append(ps, f.Selectivity.P)
		}
		adj := Holm(ps)
		for g, f := range prof.Filters {
			want := !math.IsNaN(adj[g]) && adj[g] <= 0.05
			if f.Selectivity.Selective != want || (want && f.Selectivity.PHolm != adj[g]) {
				t.Fatalf("trial %d filter %d: selective %v (Holm p %g), want %v (%g)", trial, g, f.Selectivity.Selective, f.Selectivity.PHolm, want, adj[g])
			}
		}
	}
	if thresholds < 100 {
		t.Fatalf("only %d thresholds: the check checked little", thresholds)
	}
}

// A filter whose strong windows carry no information about the predicted
// class is not selective, one that decides it is. Filter 0 reads the first
// five words of each text (drawn from one half of the vocabulary) and the
// head ignores it; filter 1 reads the last five (the other half) and
// decides the class through a bias set at its median activation, so the
// data are balanced and filter 0's activation is independent of the
// predicted class. The purity threshold at share 0.5 of Jacovi et al.
// then sits near filter 0's lowest activation, carrying no information;
// the selectivity threshold asks for 0.75 and its held-out test rejects
// in at most α = 5% of corpora under independence. Over 20 corpora, 6 or
// more rejections have probability below 0.3% (binomial, 20 trials at
// 0.05); filter 1 must be selective in at least 18.
func TestSelectivityBaseRate(t *testing.T) {
	rng := rand.New(rand.NewPCG(62, 62))
	m := &cnn.Model{
		Config: cnn.Config{VocabSize: 42, Dim: 2, Widths: []int{1}, Filters: 2, Classes: 2},
		Labels: []string{"a", "b"},
		Emb:    make([]float32, 42*2),
		Convs:  []cnn.Conv{{Width: 1, W: []float32{1, 0, 0, 1}, B: []float32{0, 0}}},
		OutW:   []float32{0, 1, 0, 0}, // class a: filter 1; class b: nothing
		OutB:   []float32{0, 0},
	}
	for id := 2; id < 42; id++ {
		m.Emb[id*2+(id/22)] = float32(rng.Float64()) // words 2–21 on dim 0, 22–41 on dim 1
	}
	var h1 []float64
	for range 2000 {
		h1 = append(h1, rng.Float64())
	}
	slices.Sort(h1)
	m.OutB[0] = -float32(h1[1000]) // roughly balanced classes
	uninformative, informative := 0, 0
	for range 20 {
		ids := make([][]int32, 2000)
		for i := range ids {
			for j := 0; j < 10; j++ {
				ids[i] = append(ids[i], int32(2+20*(j/5)+rng.IntN(20)))
			}
		}
		prof, err := Profile(context.Background(), m, ids, nil, ProfileOptions{Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		if prof.Filters[0].Selectivity.Selective {
			uninformative++
		}
		if prof.Filters[1].Selectivity.Selective {
			informative++
		}
		t.Logf("filter 0: purity threshold (share 0.5) %.3f with %d of %d fired windows above; selectivity threshold %.3f, held out %d/%d, p %.3g",
			prof.Filters[0].Threshold, prof.Filters[0].Above, prof.Filters[0].Fired, prof.Filters[0].Selectivity.Threshold,
			prof.Filters[0].Selectivity.InClass, prof.Filters[0].Selectivity.Windows, prof.Filters[0].Selectivity.P)
	}
	if uninformative >= 6 || informative < 18 {
		t.Fatalf("selective in %d of 20 corpora for the uninformative filter (chance: at most 5%%), %d for the informative one", uninformative, informative)
	}
}

package explain

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os/exec"
	"testing"

	"telltale/internal/testref"
)

// Weighted average linkage against SciPy 1.10 run live
// (scipy.cluster.hierarchy.linkage(method="average") on the points each
// repeated as many times as its weight, then fcluster(criterion="distance")
// at cut times the weighted mean norm): a point of weight w must act as w
// identical windows.
func TestUPGMAWeightedSciPy(t *testing.T) {
	testref.RequirePython(t, "scipy")
	rng := rand.New(rand.NewPCG(70, 70))
	type tc struct {
		X   [][]float64
		W   []int
		Cut float64
	}
	var cases []tc
	for range 30 {
		n, d := 2+rng.IntN(25), 1+rng.IntN(5)
		c := tc{Cut: []float64{0.2, 0.5, 1}[rng.IntN(3)]}
		for range n {
			v := make([]float64, d)
			for k := range v {
				v[k] = float64(rng.IntN(3)) + rng.NormFloat64()*0.3
			}
			c.X = append(c.X, v)
			c.W = append(c.W, 1+rng.IntN(4))
		}
		cases = append(cases, c)
	}
	in, _ := json.Marshal(cases)
	cmd := exec.Command(testref.Python, "-c", `
import sys, json
import numpy as np
from scipy.cluster.hierarchy import linkage, fcluster
out = []
for c in json.load(sys.stdin):
    x, w = np.array(c["X"]), np.array(c["W"])
    rep = np.repeat(x, w, axis=0)
    limit = c["Cut"] * float(np.sum(w * np.linalg.norm(x, axis=1)) / np.sum(w))
    lab = fcluster(linkage(rep, method="average"), t=limit, criterion="distance")
    first = np.concatenate([[0], np.cumsum(w)[:-1]])
    out.append([int(lab[i]) for i in first])
print(json.dumps(out))
`)
	cmd.Stdin = bytes.NewReader(in)
	b, err := cmd.Output()
	if err != nil {
		t.Fatalf("scipy: %v", err)
	}
	var want [][]int
	if err := json.Unmarshal(b, &want); err != nil {
		t.Fatal(err)
	}
	for i, c := range cases {
		w := make([]float64, len(c.W))
		for k, v := range c.W {
			w[k] = float64(v)
		}
		if got := upgmaCut(c.X, w, c.Cut); !samePartition(got, want[i]) {
			t.Errorf("case %d: labels %v, SciPy %v", i, got, want[i])
		}
	}
}

// When every window above the threshold is sampled (strata smaller than
// the sample), the families hold exactly those windows: their weights add
// up to the count above the threshold, each n-gram with its count, every
// share interval is the share itself, and two far-apart groups of n-grams
// are families of stability 1.
func TestFamiliesExactWhenAllSampled(t *testing.T) {
	rng := rand.New(rand.NewPCG(71, 71))
	checked := 0
	for trial := 0; trial < 20; trial++ {
		m, _ := tableCase(rng, trial)
		ids, gold := randomCorpus(rng, m, 50+rng.IntN(150), 10)
		prof, err := Profile(context.Background(), m, ids, gold, ProfileOptions{FamilySample: 1000, Workers: 1 + trial%2})
		if err != nil {
			t.Fatal(err)
		}
		for _, pr := range prof.Filters {
			s := pr.Selectivity
			if math.IsInf(s.Threshold, 1) {
				if len(pr.Families) > 0 {
					t.Fatalf("filter %d: families without a threshold", pr.Filter)
				}
				continue
			}
			var weight float64
			sampled := 0
			for _, f := range pr.Families {
				weight += f.Weight
				sampled += f.Sampled
				if f.ShareLow != f.Share || f.ShareHigh != f.Share {
					t.Fatalf("filter %d family %s: share %g in [%g, %g], want a point when all is sampled", pr.Filter, f.Pattern, f.Share, f.ShareLow, f.ShareHigh)
				}
				if f.Stability != nil && (*f.Stability < 0 || *f.Stability > 1) {
					t.Fatalf("filter %d family %s: stability %g", pr.Filter, f.Pattern, *f.Stability)
				}
			}
			if sampled != s.Above || !near(weight, float64(s.Above), 1e-9, 1e-12) || pr.FamilySample != s.Above {
				t.Fatalf("trial %d filter %d: families hold %d sampled windows of weight %g, %d above the threshold (sample %d)", trial, pr.Filter, sampled, weight, s.Above, pr.FamilySample)
			}
			checked++
		}
	}
	if checked < 50 {
		t.Fatalf("only %d filters with families checked", checked)
	}
	// Two groups far apart: each is one family, kept together in every
	// resample.
	items := []familyItem{
		{key: "a", tokens: []string{"a", "x"}, slots: []float64{5, 0}, weight: 3, sampled: 3},
		{key: "b", tokens: []string{"b", "x"}, slots: []float64{5.1, 0}, weight: 2, sampled: 2},
		{key: "c", tokens: []string{"x", "c"}, slots: []float64{0, 5}, weight: 4, sampled: 4},
		{key: "d", tokens: []string{"x", "d"}, slots: []float64{0, 5.2}, weight: 1, sampled: 1},
	}
	vecs := [][]float64{items[0].slots, items[1].slots, items[2].slots, items[3].slots}
	w := []float64{3, 2, 4, 1}
	labels := upgmaCut(vecs, w, 0.3)
	fams := describeFamilies(items, labels)
	rs := rand.New(rand.NewPCG(1, 1))
	familyStability(fams, labels, vecs, w, 0.3, func(dst []float64) {
		for i := range dst {
			dst[i] = w[i] * float64(1+rs.IntN(2))
		}
	}, new(upgmaScratch))
	if len(fams) != 2 || fams[0].Stability == nil || *fams[0].Stability != 1 || *fams[1].Stability != 1 {
		t.Fatalf("families %+v, want two of stability 1", fams)
	}
}

// The family weights estimate the number of windows above the threshold
// without bias when strata hold more windows than their sample (2 a
// stratum here): over 60 seeds of the sample, the mean estimated total is
// within 4.5 standard errors of the exact count for every filter (a
// normal deviation that large has probability 7e-6; a few dozen filters
// are checked).
func TestFamilyWeightsUnbiased(t *testing.T) {
	rng := rand.New(rand.NewPCG(72, 72))
	m := randomModel(rng, randomConfig(rng))
	ids, gold := randomCorpus(rng, m, 600, 12)
	nf := m.Config.NumFilters()
	sums, sq := make([]float64, nf), make([]float64, nf)
	var above []int
	const seeds = 60
	for seed := range seeds {
		prof, err := Profile(context.Background(), m, ids, gold, ProfileOptions{FamilySample: 2, Seed: uint64(seed)})
		if err != nil {
			t.Fatal(err)
		}
		above = above[:0]
		for g, pr := range prof.Filters {
			var w float64
			for _, f := range pr.Families {
				w += f.Weight
			}
			sums[g] += w
			sq[g] += w * w
			above = append(above, pr.Selectivity.Above)
		}
	}
	checked := 0
	for g := range nf {
		if above[g] == 0 {
			continue
		}
		mean := sums[g] / seeds
		sd := math.Sqrt(math.Max(sq[g]/seeds-mean*mean, 0))
		se := sd / math.Sqrt(seeds)
		if math.Abs(mean-float64(above[g])) > 4.5*se+1e-9 {
			t.Errorf("filter %d: mean estimate %g (sd %g), exact %d", g, mean, sd, above[g])
		}
		checked++
	}
	if checked == 0 {
		t.Fatal("no filter with a threshold")
	}
}

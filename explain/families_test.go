package explain

import (
	"bytes"
	"context"
	"encoding/binary"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os/exec"
	"testing"

	"telltale/cnn"
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
// the sample), the families hold exactly the choosing half's windows:
// their weights add up to that half's count above the threshold, each
// n-gram with its count; the measuring half's windows above the threshold
// are all placed in a family and the shares add up to 1 (or are undefined
// when that half has no window above the threshold). That half stands for
// other texts, so no share interval is a point; each holds its share, and
// that of a family with fewer than familyThinCount of the measured windows
// (or of one whose others are that few), every weight being 1, is the
// Clopper–Pearson interval of its windows among them
// (cnn.ClopperPearsonInterval, checked against SciPy there), the counts'
// the shares' times the windows above the threshold. Two far-apart groups
// of n-grams are families of stability 1.
func TestFamiliesExactWhenAllSampled(t *testing.T) {
	rng := rand.New(rand.NewPCG(71, 71))
	checked, measured := 0, 0
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
			var weight, shares float64
			sampled, placed := 0, 0
			for _, f := range pr.Families {
				weight += f.Weight
				sampled += f.Sampled
				placed += f.Measured
				shares += f.Share
				if s.Windows == 0 {
					if !math.IsNaN(f.Share) || !math.IsNaN(f.ShareLow) || !math.IsNaN(f.ShareHigh) || f.Count != 0 {
						t.Fatalf("filter %d family %s: share %g in [%g, %g], count %d, want undefined without measured windows", pr.Filter, f.Pattern, f.Share, f.ShareLow, f.ShareHigh, f.Count)
					}
				} else {
					if !(f.ShareLow <= f.Share && f.Share <= f.ShareHigh && f.ShareLow < f.ShareHigh) {
						t.Fatalf("filter %d family %s: share %g in [%g, %g], want an interval holding it, no point", pr.Filter, f.Pattern, f.Share, f.ShareLow, f.ShareHigh)
					}
					if f.Measured < familyThinCount || s.Windows-f.Measured < familyThinCount {
						cp := cnn.ClopperPearsonInterval(f.Measured, s.Windows, 0.95)
						if !near(f.ShareLow, cp.Low, 1e-9, 1e-9) || !near(f.ShareHigh, cp.High, 1e-9, 1e-9) {
							t.Fatalf("filter %d family %s: %d of %d measured windows, share in [%g, %g], Clopper–Pearson [%g, %g]", pr.Filter, f.Pattern, f.Measured, s.Windows, f.ShareLow, f.ShareHigh, cp.Low, cp.High)
						}
					}
					a := float64(s.Above)
					if f.Count != int(math.Round(f.Share*a)) || f.CountLow != int(math.Round(f.ShareLow*a)) || f.CountHigh != int(math.Round(f.ShareHigh*a)) {
						t.Fatalf("filter %d family %s: count %d (%d–%d) for share %g (%g–%g) of %d", pr.Filter, f.Pattern, f.Count, f.CountLow, f.CountHigh, f.Share, f.ShareLow, f.ShareHigh, s.Above)
					}
				}
				if f.Stability != nil && (*f.Stability < 0 || *f.Stability > 1) {
					t.Fatalf("filter %d family %s: stability %g", pr.Filter, f.Pattern, *f.Stability)
				}
			}
			chosen := s.Above - s.Windows
			if len(pr.Families) > 0 && (sampled != chosen || !near(weight, float64(chosen), 1e-9, 1e-12) || pr.FamilySample != chosen) {
				t.Fatalf("trial %d filter %d: families hold %d sampled windows of weight %g, %d of the choosing half above the threshold (sample %d)", trial, pr.Filter, sampled, weight, chosen, pr.FamilySample)
			}
			if len(pr.Families) > 0 && (placed != s.Windows || pr.FamilyMeasured != s.Windows) {
				t.Fatalf("trial %d filter %d: %d measured windows placed in families (sample %d), %d of the measuring half above the threshold", trial, pr.Filter, placed, pr.FamilyMeasured, s.Windows)
			}
			if len(pr.Families) > 0 && s.Windows > 0 {
				if !near(shares, 1, 1e-9, 1e-12) {
					t.Fatalf("trial %d filter %d: shares add up to %g", trial, pr.Filter, shares)
				}
				measured++
			}
			checked++
		}
	}
	if checked < 50 || measured < 30 {
		t.Fatalf("only %d filters with families checked, %d with measured shares", checked, measured)
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
	familyStability(fams, items, labels, vecs, w, 0.3, func(dst []float64) {
		for i := range dst {
			dst[i] = w[i] * float64(1+rs.IntN(2))
		}
	}, new(upgmaScratch))
	if len(fams) != 2 || fams[0].Stability == nil || *fams[0].Stability != 1 || *fams[1].Stability != 1 {
		t.Fatalf("families %+v, want two of stability 1", fams)
	}
}

// The family weights estimate the number of the choosing half's windows
// above the threshold without bias when strata hold more windows than
// their sample (2 a stratum here): over 60 seeds of the sample, the mean estimated total is
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
			above = append(above, pr.Selectivity.Above-pr.Selectivity.Windows)
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

// Two clusters that differ only at a wildcard slot read the same, and a
// reader told "* * ps" twice, each with part of the share, would take one
// thing the filter means for two: they are one family. Constructed by
// hand (no outside source; the figures are worked out here): one-hot
// embeddings make each slot score a weight of the filter, "ps" scores 1 at
// the last slot, "in" −0.4 and "of" +0.2 at the middle one, "the" 0 and
// "same" 0.02 at the first. The windows with "in" and with "of" are 0.6
// apart, beyond the cut (0.5 × their mean norm, about 0.52), so average
// linkage puts them in two clusters; in every group of these windows "ps"
// carries at least DominantShare of the positive mass (at worst 1 of
// 1.22), so both patterns are "* * ps". All four windows are sampled (weight 1
// each) in the choosing half and again in the measuring half: the one
// family weighs 4, holds the whole measured share (8 windows above the
// threshold over both halves: 8 texts) and, as the four windows stay one
// family in every resample, has stability 1.
func TestFamiliesOfOnePatternJoined(t *testing.T) {
	vocab := []string{"<pad>", "<unk>", "the", "same", "in", "of", "ps"}
	d := len(vocab)
	m := &cnn.Model{Config: cnn.Config{VocabSize: d, Dim: d, Widths: []int{3}, Filters: 1, Classes: 2},
		Vocab: vocab, Labels: []string{"a", "b"}, Emb: make([]float32, d*d),
		OutW: []float32{1, -1}, OutB: make([]float32, 2)}
	for id := 2; id < d; id++ {
		m.Emb[id*d+id] = 1
	}
	conv := cnn.Conv{Width: 3, W: make([]float32, 3*d), B: make([]float32, 1)}
	score := map[[2]int]float32{{0, 3}: 0.02, {1, 4}: -0.4, {1, 5}: 0.2, {2, 6}: 1}
	for k, v := range score {
		conv.W[k[0]*d+k[1]] = v // filter 0, slot k[0], dimension k[1]
	}
	m.Convs = []cnn.Conv{conv}
	st, err := NewSlotTable(m, TableOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var fs famSample
	for _, w := range [][3]int32{{2, 4, 6}, {3, 4, 6}, {2, 5, 6}, {3, 5, 6}} {
		key := make([]byte, 0, 12)
		for _, id := range w {
			key = binary.LittleEndian.AppendUint32(key, uint32(id))
		}
		fs.items[0] = append(fs.items[0], famItem{act: 1, key: string(key)})
		fs.items[famStrata] = append(fs.items[famStrata], famItem{act: 1, key: string(key)})
	}
	fs.n[0], fs.n[famStrata] = len(fs.items[0]), len(fs.items[famStrata])
	// The premise: average linkage alone makes two clusters.
	var items []familyItem
	var vecs [][]float64
	for _, it := range fs.items[0] {
		fi := newFamilyItem(st, 0, it.key)
		items, vecs = append(items, fi), append(vecs, fi.slots)
	}
	if labels := upgmaCut(vecs, []float64{1, 1, 1, 1}, 0.5); !samePartition(labels, []int{0, 0, 1, 1}) {
		t.Fatalf("clusters %v of slot scores %v, want the windows with \"in\" apart from those with \"of\"", labels, vecs)
	}
	fams := buildFamilies(st, 0, &fs, 0, 0.5, 1, 8)
	if len(fams) != 1 {
		var ps []string
		for _, f := range fams {
			ps = append(ps, f.Pattern)
		}
		t.Fatalf("%d families %q, want one", len(fams), ps)
	}
	f := fams[0]
	if f.Pattern != "* * ps" || f.Weight != 4 || f.Ngrams != 4 || f.Share != 1 || f.Measured != 4 || f.Count != 8 || f.Stability == nil || *f.Stability != 1 {
		t.Errorf("family %+v, want \"* * ps\" of weight 4, 4 n-grams, share 1 of 4 measured windows (8 texts of 8) and stability 1", f)
	}
}

// On a model of the demo corpus, no filter shows two families with the
// same pattern (without joining the clusters of one pattern, 18 patterns
// repeat on this model, 21 on the tour's).
func TestDemoFamilyPatternsDiffer(t *testing.T) {
	if testing.Short() {
		t.Skip("trains a model on the demo corpus")
	}
	m, enc, _, data := trainDemo(t)
	prof, err := Profile(context.Background(), m, data.IDs, data.Labels, ProfileOptions{Counts: enc.Vocab.Counts})
	if err != nil {
		t.Fatal(err)
	}
	families := 0
	for _, pr := range prof.Filters {
		seen := map[string]bool{}
		for _, f := range pr.Families {
			if seen[f.Pattern] {
				t.Errorf("filter %d: two families read %q", pr.Filter, f.Pattern)
			}
			seen[f.Pattern] = true
			families++
		}
	}
	t.Logf("%d families over %d filters", families, len(prof.Filters))
	if families < len(prof.Filters) {
		t.Fatalf("only %d families over %d filters: the check has nothing to look at", families, len(prof.Filters))
	}
}

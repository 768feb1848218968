package explain

import (
	"context"
	"encoding/binary"
	"encoding/json"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"telltale/cnn"
	"telltale/internal/testref"
)

// The family sample's halves are the selectivity's (half): every window
// sampled into a cell of half h comes from a text of half h, no text's
// window is sampled twice (so none lies on both sides), and when the cells
// hold fewer windows than their sample every fired text's window is
// sampled: the halves cover the corpus. Each text's five ids are its own,
// so a window's key names its text.
func TestFamilyHalvesDisjointAndCover(t *testing.T) {
	const n = 400
	cfg := cnn.Config{VocabSize: 2 + 5*n, Dim: 4, Widths: []int{3, 5}, Filters: 2, Classes: 2}
	textOf := func(key string) int { return (int(binary.LittleEndian.Uint32([]byte(key[:4]))) - 2) / 5 }
	for _, capacity := range []int{1000, 3} {
		opt := ProfileOptions{FamilySample: capacity, Seed: 7}
		opt.defaults()
		ub := []float32{1, 1, 1, 1}
		accs := newFilterAccs(cfg, &opt, ub)
		rng := rand.New(rand.NewPCG(80, uint64(capacity)))
		fired := make([][]bool, cfg.NumFilters())
		for g := range fired {
			fired[g] = make([]bool, n)
		}
		for text := range n {
			ids := make([]int32, 5)
			for i := range ids {
				ids[i] = int32(2 + 5*text + i)
			}
			for g := range accs.filters {
				a := float32(rng.Float64()*1.2 - 0.2) // some texts do not fire
				fired[g][text] = a > 0
				accs.filters[g].add(a, 0, ids, 0, g, text, 0, half(text), false, cfg.Classes)
			}
		}
		halves := [2]int{}
		for text := range n {
			halves[half(text)]++
		}
		if halves[0] < n/3 || halves[1] < n/3 {
			t.Fatalf("halves of %d texts: %v", n, halves)
		}
		for g := range accs.filters {
			fa := &accs.filters[g]
			hist := make([]int, 4*fineBins)
			for i := range hist {
				hist[i] = int(fa.total[i]) + int(fa.hist[i])
			}
			s := mergeSamples([]*famSample{fa.fam}, hist, capacity)
			seen := map[int]int{} // text → cell
			for c := range famCells {
				if len(s.items[c]) > capacity || len(s.items[c]) > s.n[c] {
					t.Fatalf("capacity %d filter %d cell %d: %d sampled of %d", capacity, g, c, len(s.items[c]), s.n[c])
				}
				for _, it := range s.items[c] {
					text := textOf(it.key)
					if h := c / famStrata; half(text) != h {
						t.Fatalf("capacity %d filter %d: text %d of half %d sampled in a cell of half %d", capacity, g, text, half(text), h)
					}
					if c0, ok := seen[text]; ok {
						t.Fatalf("capacity %d filter %d: text %d sampled in cells %d and %d", capacity, g, text, c0, c)
					}
					seen[text] = c
				}
			}
			if capacity < n {
				continue
			}
			for text := range n {
				if _, ok := seen[text]; ok != fired[g][text] {
					t.Fatalf("filter %d text %d: fired %v, sampled %v", g, text, fired[g][text], ok)
				}
			}
		}
	}
}

// oneHotFamilies is a filter of width 2 over one-hot embeddings, so that
// each slot score is a weight of the filter: "a" scores 5 at slot 0, "b" 5
// at slot 1, "x" and "y" 0.1 at slots 0 and 1. Windows "a y" and "x b" are
// far apart (about 7 against a cut of 0.5 × 5): two families.
func oneHotFamilies(t *testing.T) (*SlotTable, func(...string) string) {
	vocab := []string{"<pad>", "<unk>", "a", "b", "x", "y"}
	d := len(vocab)
	m := &cnn.Model{Config: cnn.Config{VocabSize: d, Dim: d, Widths: []int{2}, Filters: 1, Classes: 2},
		Vocab: vocab, Labels: []string{"p", "q"}, Emb: make([]float32, d*d),
		OutW: []float32{1, -1}, OutB: make([]float32, 2)}
	for id := 2; id < d; id++ {
		m.Emb[id*d+id] = 1
	}
	conv := cnn.Conv{Width: 2, W: make([]float32, 2*d), B: make([]float32, 1)}
	conv.W[0*d+2], conv.W[1*d+3], conv.W[0*d+4], conv.W[1*d+5] = 5, 5, 0.1, 0.1
	m.Convs = []cnn.Conv{conv}
	st, err := NewSlotTable(m, TableOptions{})
	if err != nil {
		t.Fatal(err)
	}
	key := func(words ...string) string {
		b := make([]byte, 0, 4*len(words))
		for _, w := range words {
			b = binary.LittleEndian.AppendUint32(b, uint32(slices.Index(vocab, w)))
		}
		return string(b)
	}
	return st, key
}

// The share is measured on the measuring half alone. Constructed by hand
// (no outside source; the figures are worked out here): the choosing half
// holds three windows "a y" and one "x b", so family "a *" weighs 3 and
// "* b" 1 there (75% and 25%); the measuring half holds "x b" twice and
// "y b", an n-gram the choosing half never saw, which the nearest centroid
// places in "* b". Measured, "a *" has share 0 and "* b" share 1: what the
// choosing half says of them plays no part. Three windows are fewer than
// familyThinCount, so both intervals are the exact ones in the effective
// size, 3 whether the measuring half was sampled whole (weights 1) or 3 of
// its 6 windows were (equal weights 2): the Clopper–Pearson bounds for 0
// of 3 and 3 of 3 (Clopper & Pearson 1934), [0, 1 − 0.025^(1/3)] and
// [0.025^(1/3), 1]. A census of the measuring half still stands for other
// texts, so its interval is no point; the counts' intervals are the
// shares' times the 10 windows above the threshold.
func TestFamilyShareFromMeasuringHalf(t *testing.T) {
	st, key := oneHotFamilies(t)
	var fs famSample
	for _, w := range [][]string{{"a", "y"}, {"a", "y"}, {"a", "y"}, {"x", "b"}} {
		fs.items[0] = append(fs.items[0], famItem{act: 6, key: key(w...)})
	}
	for _, w := range [][]string{{"x", "b"}, {"x", "b"}, {"y", "b"}} {
		fs.items[famStrata] = append(fs.items[famStrata], famItem{act: 6, key: key(w...)})
	}
	for _, whole := range []bool{true, false} {
		fs.n[0], fs.n[famStrata] = 4, 3
		if !whole {
			fs.n[famStrata] = 6
		}
		fams := buildFamilies(st, 0, &fs, 1, 0.5, 3, 10)
		if len(fams) != 2 || fams[0].Pattern != "a *" || fams[1].Pattern != "* b" {
			t.Fatalf("families %+v, want \"a *\" and \"* b\"", fams)
		}
		a, b := fams[0], fams[1]
		if a.Weight != 3 || a.Sampled != 3 || b.Weight != 1 || b.Sampled != 1 {
			t.Fatalf("choosing half: weights %g, %g of %d, %d sampled windows, want 3 and 1", a.Weight, b.Weight, a.Sampled, b.Sampled)
		}
		cp := math.Pow(0.025, 1.0/3)
		if a.Measured != 0 || a.Share != 0 || a.ShareLow != 0 || a.Count != 0 || a.CountLow != 0 {
			t.Errorf("whole %v: \"a *\" measured %d, share %g (%g–%g), count %d (%d–%d); want 0 measured windows, share 0", whole, a.Measured, a.Share, a.ShareLow, a.ShareHigh, a.Count, a.CountLow, a.CountHigh)
		}
		if !near(a.ShareHigh, 1-cp, 1e-12, 1e-12) || a.CountHigh != 7 {
			t.Errorf("whole %v: \"a *\" share high %g, count high %d; want %g, 7", whole, a.ShareHigh, a.CountHigh, 1-cp)
		}
		if b.Measured != 3 || b.Share != 1 || !near(b.ShareLow, cp, 1e-12, 1e-12) || b.ShareHigh != 1 || b.Count != 10 || b.CountLow != 3 || b.CountHigh != 10 {
			t.Errorf("whole %v: \"* b\" measured %d, share %g (%g–%g), count %d (%d–%d); want 3 measured windows, share 1 (%g–1), 10 texts (3–10)", whole, b.Measured, b.Share, b.ShareLow, b.ShareHigh, b.Count, b.CountLow, b.CountHigh, cp)
		}
	}
	// Without a measured window above the threshold the share is
	// undefined, and JSON writes it as null.
	fs.items[famStrata] = []famItem{{act: 0.5, key: key("x", "b")}}
	fs.n[famStrata] = 1
	fams := buildFamilies(st, 0, &fs, 1, 0.5, 3, 10)
	for _, f := range fams {
		if !math.IsNaN(f.Share) || !math.IsNaN(f.ShareLow) || !math.IsNaN(f.ShareHigh) || f.Count != 0 || f.Measured != 0 {
			t.Fatalf("family %s: share %g (%g–%g), count %d, measured %d; want undefined", f.Pattern, f.Share, f.ShareLow, f.ShareHigh, f.Count, f.Measured)
		}
		back := testref.JSONFields(t, f)
		for _, k := range []string{"share", "share_low", "share_high"} {
			if v, ok := back[k]; !ok || v != nil {
				t.Fatalf("family %s: JSON %s = %v, want null", f.Pattern, k, v)
			}
		}
	}
}

// The stability interval is the Wilson score interval (Wilson 1927) of the
// per-resample figures' mean: for a mean k/r it is cnn.WilsonInterval's
// (checked there against SciPy), it holds its estimate for any mean in
// [0, 1], and it is no point when every resample agrees.
func TestStabilityInterval(t *testing.T) {
	for r := 1; r <= 60; r++ {
		for k := 0; k <= r; k++ {
			lo, hi := stabilityInterval(float64(k)/float64(r), r)
			w := cnn.WilsonInterval(k, r, 0.95)
			if !near(lo, w.Low, 1e-12, 1e-12) || !near(hi, w.High, 1e-12, 1e-12) {
				t.Fatalf("%d of %d: [%g, %g], Wilson [%g, %g]", k, r, lo, hi, w.Low, w.High)
			}
		}
	}
	rng := rand.New(rand.NewPCG(81, 81))
	for range 10000 {
		mean, r := rng.Float64(), 1+rng.IntN(500)
		if rng.IntN(10) == 0 {
			mean = float64(rng.IntN(2))
		}
		lo, hi := stabilityInterval(mean, r)
		if !(0 <= lo && lo <= mean && mean <= hi && hi <= 1) {
			t.Fatalf("mean %g of %d: [%g, %g]", mean, r, lo, hi)
		}
	}
	if lo, _ := stabilityInterval(1, familyStabilityResamples); lo >= 1 {
		t.Fatalf("every resample at 1: lower bound %g", lo)
	}
}

// The stability interval covers the mean of the figures it summarises at
// least 95% of the time when they vary less than 0/1 figures of the same
// mean (its variance bound, Bhatia & Davis 2000, then overstates theirs):
// 4,000 simulated runs of familyStabilityResamples figures, each 1 with
// probability p and otherwise uniform on [0.3, 0.9], for means from 0.6 to
// 0.99; a coverage of 95% would fall below 94% (fewer than 3,760 of
// 4,000 runs) with probability 0.21% in each of the four checks (exact
// binomial), under 0.85% in any of them.
func TestStabilityIntervalCoverage(t *testing.T) {
	rng := rand.New(rand.NewPCG(82, 82))
	const runs = 4000
	for _, p := range []float64{0, 0.5, 0.9, 0.98} {
		mu := p + (1-p)*0.6
		covered := 0
		for range runs {
			var sum float64
			for range familyStabilityResamples {
				if rng.Float64() < p {
					sum++
				} else {
					sum += 0.3 + 0.6*rng.Float64()
				}
			}
			lo, hi := stabilityInterval(sum/familyStabilityResamples, familyStabilityResamples)
			if lo <= mu && mu <= hi {
				covered++
			}
		}
		c := float64(covered) / runs
		t.Logf("p %g (mean %g): coverage %.3f", p, mu, c)
		if c < 0.94 {
			t.Errorf("p %g (mean %g): coverage %.3f", p, mu, c)
		}
	}
}

// Families, their shares and their stability are the same for a seed
// whatever the number of workers, and every stability interval holds its
// estimate.
func TestFamiliesDeterministic(t *testing.T) {
	rng := rand.New(rand.NewPCG(83, 83))
	m := randomModel(rng, randomConfig(rng))
	ids, gold := randomCorpus(rng, m, 800, 12)
	var first []byte
	stabilities := 0
	for _, workers := range []int{1, 3, 1} {
		prof, err := Profile(context.Background(), m, ids, gold, ProfileOptions{FamilySample: 4, Seed: 9, Workers: workers})
		if err != nil {
			t.Fatal(err)
		}
		var fams [][]Family
		for _, pr := range prof.Filters {
			fams = append(fams, pr.Families)
			for _, f := range pr.Families {
				if f.Stability == nil {
					continue
				}
				stabilities++
				if s := *f.Stability; !(*f.StabilityLow <= s && s <= *f.StabilityHigh) {
					t.Fatalf("filter %d family %s: stability %g outside (%g–%g)", pr.Filter, f.Pattern, s, *f.StabilityLow, *f.StabilityHigh)
				}
			}
		}
		b, err := json.Marshal(fams)
		if err != nil {
			t.Fatal(err)
		}
		if first == nil {
			first = b
		} else if string(b) != string(first) {
			t.Fatalf("%d workers: families differ from the first run's", workers)
		}
	}
	if stabilities == 0 {
		t.Fatal("no family with a stability")
	}
}

// The share's interval covers the share of the windows the measuring half
// stands for at least 95% of the time where a family holds few measured
// windows, and the percentile interval alone does not: the thin rule of
// cnn's F1 intervals (cnn/metrics_exact.go), applied to the families.
// Simulated here (no outside source): each run draws the measuring half's
// sampled windows, every one in family 0 with the stratum's probability,
// else in family 1, and measureShares finds the interval of family 0's
// share, whose true value is the strata's probabilities weighted by their
// window counts. Two designs: a census of 200 windows at 2% (about 4 in
// the family), and two strata of 8,000 and 2,000 windows sampled 100 each
// at 1% and 5% (about 6 sampled in the family, weights 80 and 20, Kish's
// effective size 147). Over 4,000 runs a coverage of 95% would fall below
// 94% with probability 0.21% (exact binomial); the exact interval is
// conservative, so the new rule's coverage should lie above. The old rule
// (the exact bound only for a family with no measured window, thin 1, and
// the percentile interval alone elsewhere; here with a census resampled as
// well, where it once gave a point) must
// fall below 94% in both, so that this test can fail.
func TestFamilyShareCoverageThin(t *testing.T) {
	const runs = 4000
	designs := []struct {
		name string
		n, m []int
		p    []float64
	}{
		{"census of 200 at 2%", []int{200}, []int{200}, []float64{0.02}},
		{"strata 8000/2000 sampled 100/100 at 1%/5%", []int{8000, 2000}, []int{100, 100}, []float64{0.01, 0.05}},
	}
	for _, d := range designs {
		var truth, all float64
		for j := range d.n {
			truth += float64(d.n[j]) * d.p[j]
			all += float64(d.n[j])
		}
		truth /= all
		for _, rule := range []struct {
			name string
			thin int
		}{{"old (thin 1)", 1}, {"new (thin 10)", familyThinCount}} {
			rng := rand.New(rand.NewPCG(84, uint64(rule.thin)))
			covered, defined := 0, 0
			for range runs {
				cells := make([][]int, len(d.n))
				for j := range d.n {
					for range d.m[j] {
						k := 1
						if rng.Float64() < d.p[j] {
							k = 0
						}
						cells[j] = append(cells[j], k)
					}
				}
				fams := make([]Family, 2)
				measureShares(fams, cells, d.n, d.m, rule.thin, rule.thin != 1, rng)
				f := fams[0]
				if !(f.ShareLow <= f.Share && f.Share <= f.ShareHigh) {
					t.Fatalf("%s, %s: share %g outside (%g–%g)", d.name, rule.name, f.Share, f.ShareLow, f.ShareHigh)
				}
				defined++
				if f.ShareLow <= truth && truth <= f.ShareHigh {
					covered++
				}
			}
			c := float64(covered) / float64(defined)
			t.Logf("%s (true share %.4f), %s rule: coverage %.3f", d.name, truth, rule.name, c)
			if rule.thin == familyThinCount && c < 0.94 {
				t.Errorf("%s, %s rule: coverage %.3f, want at least 0.94", d.name, rule.name, c)
			}
			if rule.thin == 1 && c >= 0.94 {
				t.Errorf("%s, %s rule: coverage %.3f; the percentile interval was expected below 0.94 here, so this test could not fail", d.name, rule.name, c)
			}
		}
	}
}

// Where the measuring half's strata are pure (each stratum's sampled
// windows all in the family or all outside it), resampling within the
// strata draws the same share every time, and the percentile interval
// alone is a point (as "9.9% (9.9–9.9%)" once was), although which texts
// fell in that half is random. The interval is at least the exact
// Clopper–Pearson interval in Kish's effective size (exactShare): here two
// strata of 1,000 windows sampled 50 each, one all in family 0 and one
// all outside it, a share of 0.5 of an effective 100 windows, whose 95%
// Clopper–Pearson interval is 0.3983–0.6017 (R's binom.test(50, 100):
// 0.3983211–0.6016789). The percentile interval alone must
// be a point here, so that this test can fail.
func TestFamilySharePureStrata(t *testing.T) {
	n, m := []int{1000, 1000}, []int{50, 50}
	cells := make([][]int, 2)
	for j := range cells {
		for range m[j] {
			cells[j] = append(cells[j], j)
		}
	}
	for _, floor := range []bool{false, true} {
		fams := make([]Family, 2)
		measureShares(fams, cells, n, m, familyThinCount, floor, rand.New(rand.NewPCG(5, 6)))
		f := fams[0]
		if f.Share != 0.5 {
			t.Fatalf("floor %v: share %g, want 0.5", floor, f.Share)
		}
		if !floor {
			if f.ShareLow != f.ShareHigh {
				t.Fatalf("percentile interval alone (%g–%g) is no point; this test could not fail", f.ShareLow, f.ShareHigh)
			}
			continue
		}
		if !testref.Close(f.ShareLow, 0.3983, 1e-3, 0) || !testref.Close(f.ShareHigh, 0.6017, 1e-3, 0) {
			t.Errorf("interval %g–%g, want the exact 0.3983–0.6017", f.ShareLow, f.ShareHigh)
		}
	}
}

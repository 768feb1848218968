package linear

import (
	"context"
	"fmt"
	"math"
	"slices"
)

// Config is the whole recipe of the baseline. Zero fields take the defaults
// of DefaultConfig.
type Config struct {
	Features FeatureConfig `json:"features"`
	// Cs is the grid of inverse regularisation strengths tried; the one with
	// the best dev score is kept. Without a dev split the middle value is
	// used. Default 0.1, 1, 10, 100, 1000.
	Cs []float64 `json:"cs"`
	// ClassWeight is "" (every text weighs 1) or "balanced" (n/(k·n_c)).
	ClassWeight string       `json:"class_weight,omitempty"`
	Solver      SolverConfig `json:"solver"`
}

// DefaultConfig is unigrams and bigrams with sublinear term frequency and a
// decade grid of C.
func DefaultConfig() Config {
	return Config{Features: FeatureConfig{MinN: 1, MaxN: 2, MinDF: 1, Sublinear: true}, Cs: []float64{0.1, 1, 10, 100, 1000}}
}

// WithDefaults returns c with its zero fields set, or an error naming the
// first invalid setting.
func (c Config) WithDefaults() (Config, error) {
	var err error
	if c.Features, err = c.Features.withDefaults(); err != nil {
		return c, err
	}
	if len(c.Cs) == 0 {
		c.Cs = DefaultConfig().Cs
	}
	c.Cs = slices.Clone(c.Cs)
	slices.Sort(c.Cs)
	for _, v := range c.Cs {
		if !(v > 0) || math.IsInf(v, 0) {
			return c, fmt.Errorf("linear: regularisation C = %g: every C must be positive and finite", v)
		}
	}
	switch c.ClassWeight {
	case "", "balanced":
	default:
		return c, fmt.Errorf("linear: class weight %q: use balanced or leave it empty", c.ClassWeight)
	}
	c.Solver = c.Solver.withDefaults()
	return c, nil
}

// Split is a tokenized, labeled split: Docs[i] are the tokens of text i and
// Labels[i] its class index.
type Split struct {
	Docs   [][]string
	Labels []int
}

// DevScore is the dev score of one C of the grid.
type DevScore struct {
	C     float64 `json:"c"`
	Score float64 `json:"score"`
}

// Model is a fitted baseline: the vectorizer, the classifier and the record
// of the choice of C.
type Model struct {
	Config     Config      `json:"config"`
	Labels     []string    `json:"labels"`
	Vectorizer *Vectorizer `json:"vectorizer"`
	Classifier *Classifier `json:"classifier"`
	Dev        []DevScore  `json:"dev,omitempty"` // the grid's dev scores; empty without a dev split
}

// RowsFit is a multinomial logistic regression on rows of any features,
// its C chosen on a dev split: the fit behind Fit, for callers with
// features of their own.
type RowsFit struct {
	Features, Classes int
	ClassWeight       []float64 // per class; nil weighs every text 1
	// Cs is the grid of inverse regularisation strengths (each positive
	// and finite); without dev rows only the middle one is fitted.
	Cs     []float64
	Solver SolverConfig
	// Score rates a C by its dev predictions (higher is better).
	Score    func(gold, pred []int) float64
	Progress func(Progress) // before each C; may be nil
}

// Fit fits the classifier on the rows X with labels y (each below
// Classes; every row index below Features) for every C of the grid,
// warm-started from the previous C, and returns the one whose dev
// predictions get the highest Score (ties: the smaller C) with the
// grid's dev scores. ctx cancels the fit (the error is then ctx's).
func (f RowsFit) Fit(ctx context.Context, X []Row, y []int, devX []Row, devY []int) (*Classifier, []DevScore, error) {
	if len(f.Cs) == 0 {
		return nil, nil, fmt.Errorf("linear: no C to fit: give a grid of at least one")
	}
	cs := slices.Clone(f.Cs)
	slices.Sort(cs)
	d := newDesign(X, f.Features)
	if len(devX) == 0 {
		cs = cs[len(cs)/2 : len(cs)/2+1]
	}
	var x0 []float64
	var best *Classifier
	var scores []DevScore
	bestScore := math.Inf(-1)
	for i, C := range cs {
		if f.Progress != nil {
			f.Progress(Progress{C: C, Index: i, Total: len(cs)})
		}
		clf, x, err := fitC(ctx, d, y, f.Classes, f.ClassWeight, C, f.Solver, x0)
		if err != nil {
			return nil, nil, err
		}
		x0 = x
		if len(devX) == 0 {
			return clf, nil, nil
		}
		pred := make([]int, len(devX))
		p := make([]float64, f.Classes)
		for j, r := range devX {
			clf.Probs(r, p)
			pred[j] = argmax(p)
		}
		s := f.Score(devY, pred)
		scores = append(scores, DevScore{C: C, Score: s})
		if s > bestScore {
			bestScore, best = s, clf
		}
	}
	return best, scores, nil
}

// Progress reports the C being fitted (Index of Total, 0-based).
type Progress struct {
	C            float64
	Index, Total int
}

// Fit fits the vectorizer on train, then the classifier for every C of the
// grid (warm-started from the previous C), and keeps the C whose predictions
// on dev get the highest score(gold, pred) (ties: the smaller C). With an
// empty dev split only the middle C of the grid is fitted. Labels names the
// classes; every label index must be below len(labels). ctx cancels the fit
// (the error is then ctx's); progress, if not nil, is called before each C.
func Fit(ctx context.Context, train, dev Split, labels []string, cfg Config, score func(gold, pred []int) float64, progress func(Progress)) (*Model, error) {
	cfg, err := cfg.WithDefaults()
	if err != nil {
		return nil, err
	}
	k := len(labels)
	if k < 2 {
		return nil, fmt.Errorf("linear: %d classes: need at least 2", k)
	}
	if err := checkSplit(train, k, "training"); err != nil {
		return nil, err
	}
	if err := checkSplit(dev, k, "dev"); err != nil {
		return nil, err
	}
	if len(train.Docs) == 0 {
		return nil, fmt.Errorf("linear: the training split is empty")
	}
	vec, X, err := fitVectorizer(train.Docs, cfg.Features)
	if err != nil {
		return nil, err
	}
	var cw []float64
	if cfg.ClassWeight == "balanced" {
		cw = BalancedWeights(train.Labels, k)
	}
	m := &Model{Config: cfg, Labels: slices.Clone(labels), Vectorizer: vec}
	fit := RowsFit{Features: len(vec.Features), Classes: k, ClassWeight: cw, Cs: cfg.Cs, Solver: cfg.Solver, Score: score, Progress: progress}
	m.Classifier, m.Dev, err = fit.Fit(ctx, X, train.Labels, vec.TransformAll(dev.Docs), dev.Labels)
	if err != nil {
		return nil, err
	}
	return m, nil
}

func checkSplit(s Split, k int, name string) error {
	if len(s.Docs) != len(s.Labels) {
		return fmt.Errorf("linear: %s split: %d texts but %d labels", name, len(s.Docs), len(s.Labels))
	}
	for i, y := range s.Labels {
		if y < 0 || y >= k {
			return fmt.Errorf("linear: %s split: text %d has class %d, there are %d classes", name, i, y, k)
		}
	}
	return nil
}

// argmax is the index of the first largest value.
func argmax(p []float64) int {
	best := 0
	for i, v := range p {
		if v > p[best] {
			best = i
		}
	}
	return best
}

// Probabilities returns P(class | text) for each text's tokens.
func (m *Model) Probabilities(docs [][]string) [][]float64 {
	out := make([][]float64, len(docs))
	for i, d := range docs {
		out[i] = make([]float64, m.Classifier.Classes)
		m.Classifier.Probs(m.Vectorizer.Transform(d), out[i])
	}
	return out
}

// Predict returns the class of highest probability (the first on ties) for
// each text's tokens.
func (m *Model) Predict(docs [][]string) []int {
	probs := m.Probabilities(docs)
	pred := make([]int, len(probs))
	for i, p := range probs {
		pred[i] = argmax(p)
	}
	return pred
}

// NumWeights is the number of float64 values Weights returns.
func (m *Model) NumWeights() int {
	return len(m.Vectorizer.IDF) + len(m.Classifier.Coef) + len(m.Classifier.Intercept)
}

// Weights returns the numbers that the JSON form of m leaves out: the IDF
// of each feature, then Coef, then Intercept.
func (m *Model) Weights() []float64 {
	out := make([]float64, 0, m.NumWeights())
	out = append(out, m.Vectorizer.IDF...)
	out = append(out, m.Classifier.Coef...)
	return append(out, m.Classifier.Intercept...)
}

// SetWeights restores the numbers of Weights into a model decoded from its
// JSON form, checking that the sizes agree.
func (m *Model) SetWeights(w []float64) error {
	if m.Vectorizer == nil || m.Classifier == nil {
		return fmt.Errorf("linear: the model has no vectorizer or classifier")
	}
	p, k := len(m.Vectorizer.Features), m.Classifier.Classes
	if m.Classifier.Features != p || k != len(m.Labels) || k < 2 {
		return fmt.Errorf("linear: %d features and %d labels, but the classifier is for %d features and %d classes", p, len(m.Labels), m.Classifier.Features, k)
	}
	if want := p + k*p + k; len(w) != want {
		return fmt.Errorf("linear: %d weights for a model that needs %d", len(w), want)
	}
	if _, err := m.Vectorizer.Config.withDefaults(); err != nil {
		return err
	}
	m.Vectorizer.IDF = slices.Clone(w[:p])
	m.Classifier.Coef = slices.Clone(w[p : p+k*p])
	m.Classifier.Intercept = slices.Clone(w[p+k*p:])
	m.Vectorizer.buildIndex()
	return nil
}

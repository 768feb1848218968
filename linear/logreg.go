package linear

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/optimize"
)

// Classifier is a fitted multinomial logistic regression on TF-IDF rows:
// P(c | x) = softmax(W·x + b)[c].
type Classifier struct {
	Classes   int       `json:"classes"`
	Features  int       `json:"features"`
	C         float64   `json:"c"`         // inverse regularisation strength it was fitted with
	Coef      []float64 `json:"-"`         // Classes×Features, row-major [class][feature]
	Intercept []float64 `json:"-"`         // Classes
	Converged bool      `json:"converged"` // L-BFGS reached the gradient threshold
	Iter      int       `json:"iterations"`
}

// SolverConfig bounds the L-BFGS run. Zero fields take the defaults noted.
type SolverConfig struct {
	// GradTol stops when the largest gradient component of the mean
	// objective is below it; default 1e-8.
	GradTol float64 `json:"grad_tol"`
	// MaxIter caps the L-BFGS iterations; default 5000.
	MaxIter int `json:"max_iter"`
}

func (s SolverConfig) withDefaults() SolverConfig {
	if s.GradTol == 0 {
		s.GradTol = 1e-8
	}
	if s.MaxIter == 0 {
		s.MaxIter = 5000
	}
	return s
}

// BalancedWeights returns scikit-learn's "balanced" class weights
// n/(k·n_c) for the labels y of k classes; a class without examples gets 0.
func BalancedWeights(y []int, k int) []float64 {
	n := make([]int, k)
	for _, c := range y {
		n[c]++
	}
	w := make([]float64, k)
	for c := range w {
		if n[c] > 0 {
			w[c] = float64(len(y)) / (float64(k) * float64(n[c]))
		}
	}
	return w
}

// objective is the penalised mean cross-entropy of rows X with labels y and
// per-class weights cw (nil: all 1). Parameters are laid out as Coef
// (k×p) followed by Intercept (k).
type objective struct {
	X     []Row
	y     []int
	k, p  int
	cw    []float64
	alpha float64 // penalty factor 1/(C·S), S the weight sum

	lastX    []float64
	f        float64
	g, z, pr []float64
	evals    int
}

func newObjective(X []Row, y []int, k, p int, cw []float64, C float64) *objective {
	o := &objective{X: X, y: y, k: k, p: p, cw: cw}
	var s float64
	for _, c := range y {
		s += o.weight(c)
	}
	o.alpha = 1 / (C * s)
	o.g = make([]float64, k*p+k)
	o.z = make([]float64, k)
	o.pr = make([]float64, k)
	return o
}

func (o *objective) weight(c int) float64 {
	if o.cw == nil {
		return 1
	}
	return o.cw[c]
}

// eval computes the objective and its gradient at x, once per distinct x.
func (o *objective) eval(x []float64) {
	if o.lastX != nil && slices.Equal(x, o.lastX) {
		return
	}
	o.evals++
	o.lastX = append(o.lastX[:0], x...)
	k, p := o.k, o.p
	W, b := x[:k*p], x[k*p:]
	gW, gb := o.g[:k*p], o.g[k*p:]
	clear(o.g)
	var sum, wsum float64
	for i, r := range o.X {
		logits(W, b, p, r, o.z)
		lse := logSumExp(o.z)
		y := o.y[i]
		w := o.weight(y)
		wsum += w
		sum += w * (lse - o.z[y])
		for c := 0; c < k; c++ {
			d := math.Exp(o.z[c]-lse) * w
			if c == y {
				d -= w
			}
			if d == 0 {
				continue
			}
			gb[c] += d
			row := gW[c*p : (c+1)*p]
			for t, j := range r.Index {
				row[j] += d * r.Value[t]
			}
		}
	}
	inv := 1 / wsum
	var pen float64
	for j, v := range W {
		pen += v * v
		gW[j] = gW[j]*inv + o.alpha*v
	}
	for c := range gb {
		gb[c] *= inv
	}
	o.f = sum*inv + 0.5*o.alpha*pen
}

// logits writes W·r + b into z.
func logits(W, b []float64, p int, r Row, z []float64) {
	for c := range z {
		s := b[c]
		row := W[c*p : (c+1)*p]
		for t, j := range r.Index {
			s += row[j] * r.Value[t]
		}
		z[c] = s
	}
}

func logSumExp(z []float64) float64 {
	mx := z[0]
	for _, v := range z[1:] {
		mx = math.Max(mx, v)
	}
	var s float64
	for _, v := range z {
		s += math.Exp(v - mx)
	}
	return mx + math.Log(s)
}

// errStopped is returned when the context ends a fit.
var errStopped = errors.New("linear: fitting stopped")

// fitC minimises the objective for one C from the start point x0 (nil:
// zeros) and returns the classifier.
func fitC(ctx context.Context, X []Row, y []int, k, p int, cw []float64, C float64, sc SolverConfig, x0 []float64) (*Classifier, error) {
	if !(C > 0) || math.IsInf(C, 0) {
		return nil, fmt.Errorf("linear: regularisation C = %g: must be positive and finite", C)
	}
	sc = sc.withDefaults()
	o := newObjective(X, y, k, p, cw, C)
	if x0 == nil {
		x0 = make([]float64, k*p+k)
	}
	prob := optimize.Problem{
		Func: func(x []float64) float64 { o.eval(x); return o.f },
		Grad: func(g, x []float64) { o.eval(x); copy(g, o.g) },
		Status: func() (optimize.Status, error) {
			if ctx.Err() != nil {
				return optimize.Failure, errStopped
			}
			return optimize.NotTerminated, nil
		},
	}
	settings := &optimize.Settings{GradientThreshold: sc.GradTol, MajorIterations: sc.MaxIter,
		Converger: &optimize.FunctionConverge{Absolute: 1e-15, Relative: 1e-15, Iterations: 50}}
	res, err := optimize.Minimize(prob, x0, settings, &optimize.LBFGS{GradStopThreshold: math.NaN()})
	if ctx.Err() != nil {
		return nil, ctx.Err()
	}
	if res == nil {
		return nil, fmt.Errorf("linear: L-BFGS: %w", err)
	}
	// A line search that can no longer improve stops L-BFGS with an error
	// at the float64 floor; the location reached is kept.
	x := res.Location.X
	return &Classifier{Classes: k, Features: p, C: C, Coef: slices.Clone(x[:k*p]), Intercept: slices.Clone(x[k*p:]),
		Converged: res.Status == optimize.GradientThreshold, Iter: res.Stats.MajorIterations}, nil
}

// Probs writes P(c | r) for every class into out (Classes values).
func (m *Classifier) Probs(r Row, out []float64) {
	logits(m.Coef, m.Intercept, m.Features, r, out)
	lse := logSumExp(out)
	for c := range out {
		out[c] = math.Exp(out[c] - lse)
	}
}

// params is the classifier's parameter vector (Coef, then Intercept).
func (m *Classifier) params() []float64 {
	return append(slices.Clone(m.Coef), m.Intercept...)
}

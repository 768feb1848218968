package linear

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"

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
	// Threads is the number of goroutines evaluating the objective; 0
	// means GOMAXPROCS. Results differ between thread counts only in the
	// last bits of the sums.
	Threads int `json:"threads,omitempty"`
}

func (s SolverConfig) withDefaults() SolverConfig {
	if s.GradTol == 0 {
		s.GradTol = 1e-8
	}
	if s.MaxIter == 0 {
		s.MaxIter = 5000
	}
	if s.Threads <= 0 {
		s.Threads = runtime.GOMAXPROCS(0)
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
// (k×p) followed by Intercept (k). The rows are split into one part per
// thread, each summing into its own gradient; the parts are added in order,
// so the result depends only on the data and the thread count.
type objective struct {
	X     []Row
	y     []int
	k, p  int
	cw    []float64
	alpha float64 // penalty factor 1/(C·S), S the weight sum

	lastX []float64
	f     float64
	g     []float64
	parts []part
	evals int
}

// part is one thread's share of an evaluation.
type part struct {
	lo, hi    int
	g, z      []float64
	sum, wsum float64
}

func newObjective(X []Row, y []int, k, p int, cw []float64, C float64, threads int) *objective {
	o := &objective{X: X, y: y, k: k, p: p, cw: cw}
	var s float64
	for _, c := range y {
		s += o.weight(c)
	}
	o.alpha = 1 / (C * s)
	o.g = make([]float64, k*p+k)
	// A part of fewer than 256 rows is not worth its own gradient buffer.
	threads = max(1, min(threads, len(X)/256))
	for t := range threads {
		o.parts = append(o.parts, part{lo: t * len(X) / threads, hi: (t + 1) * len(X) / threads,
			g: make([]float64, k*p+k), z: make([]float64, k)})
	}
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
	var wg sync.WaitGroup
	for t := range o.parts {
		wg.Add(1)
		go func(pt *part) {
			defer wg.Done()
			o.evalRows(x, pt)
		}(&o.parts[t])
	}
	wg.Wait()
	k, p := o.k, o.p
	W := x[:k*p]
	gW, gb := o.g[:k*p], o.g[k*p:]
	copy(o.g, o.parts[0].g)
	sum, wsum := o.parts[0].sum, o.parts[0].wsum
	for _, pt := range o.parts[1:] {
		for j, v := range pt.g {
			o.g[j] += v
		}
		sum, wsum = sum+pt.sum, wsum+pt.wsum
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

// evalRows sums the weighted losses, weights and loss gradients of the
// part's rows at x into pt.
func (o *objective) evalRows(x []float64, pt *part) {
	k, p := o.k, o.p
	W, b := x[:k*p], x[k*p:]
	gW, gb := pt.g[:k*p], pt.g[k*p:]
	clear(pt.g)
	pt.sum, pt.wsum = 0, 0
	for i := pt.lo; i < pt.hi; i++ {
		r := o.X[i]
		logits(W, b, p, r, pt.z)
		lse := logSumExp(pt.z)
		y := o.y[i]
		w := o.weight(y)
		pt.wsum += w
		pt.sum += w * (lse - pt.z[y])
		for c := 0; c < k; c++ {
			d := math.Exp(pt.z[c]-lse) * w
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
	o := newObjective(X, y, k, p, cw, C, sc.Threads)
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

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
	// means GOMAXPROCS. Results do not depend on it.
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

// objective is the penalised mean cross-entropy of the design's rows with
// labels y and per-class weights cw (nil: all 1), over the parameters of
// the fit space: q columns of weights per fit-space feature (feature-major,
// feature f's at [f·q, f·q+q)), then q intercepts.
//
// With three or more classes q = k and column c is class c's weights. With
// two, q = 1: class 1 has the weights u and intercept a, class 0 has −u
// and −a. Every iterate of the k-class problem started from zero keeps the
// classes' weights and intercepts summing to zero (the data terms of the
// gradient sum to zero over the classes and the penalty's gradient is
// proportional to the weights), and the minimiser has the sum zero, so
// the two-class problem over (u, a) has the same minimiser at half the
// size; its objective is the k-class one at (−u, u, −a, a) and its
// gradient is that one's class-1 part minus its class-0 part.
//
// Evaluation is deterministic: every sum runs in an order fixed by the
// data alone, so results do not depend on the thread count.
type objective struct {
	d      *design
	y      []int
	k, q   int
	cw     []float64
	alpha  float64 // penalty factor 1/(C·S), S the weight sum
	inv    float64 // 1/S
	pf     float64 // the penalty's multiplicity: 2 for the two-class form
	thread int

	lastX []float64
	f     float64
	g     []float64
	r     []float64 // n×q: the weighted loss gradient of each text's logits
	loss  []float64 // n: each text's weighted loss
	pen   []float64 // the penalty's partial sums, by block of features
	evals int
}

// gradBlock is the number of features in one block of the gradient pass.
const gradBlock = 2048

func newObjective(d *design, y []int, k int, cw []float64, C float64, threads int) *objective {
	o := &objective{d: d, y: y, k: k, q: k, cw: cw, pf: 1, thread: max(1, threads)}
	if k == 2 {
		o.q, o.pf = 1, 2
	}
	var s float64
	for _, c := range y {
		s += o.weight(c)
	}
	o.inv, o.alpha = 1/s, 1/(C*s)
	o.g = make([]float64, o.dim())
	o.r = make([]float64, d.n*o.q)
	o.loss = make([]float64, d.n)
	o.pen = make([]float64, (d.p+gradBlock-1)/gradBlock)
	return o
}

// dim is the number of parameters in the fit space.
func (o *objective) dim() int { return o.q*o.d.p + o.q }

func (o *objective) weight(c int) float64 {
	if o.cw == nil {
		return 1
	}
	return o.cw[c]
}

// eval computes the objective and its gradient at x, once per distinct x:
// first the logits and loss of every text (split by texts), then the
// gradient of every weight (split by blocks of features).
func (o *objective) eval(x []float64) {
	if o.lastX != nil && slices.Equal(x, o.lastX) {
		return
	}
	o.evals++
	o.lastX = append(o.lastX[:0], x...)
	n, q := o.d.n, o.q
	inParallel(o.thread, n, 256, func(lo, hi int) { o.evalRows(x, lo, hi) })
	blocks := len(o.pen)
	inParallel(o.thread, blocks, 1, func(lo, hi int) {
		for b := lo; b < hi; b++ {
			o.evalBlock(x, b*gradBlock, min(o.d.p, (b+1)*gradBlock), b)
		}
	})
	var sum, pen float64
	for _, v := range o.loss {
		sum += v
	}
	for _, v := range o.pen {
		pen += v
	}
	gb := o.g[q*o.d.p:]
	clear(gb)
	for i := range n {
		for c := range q {
			gb[c] += o.r[i*q+c]
		}
	}
	for c := range gb {
		gb[c] *= o.inv
	}
	o.f = sum*o.inv + 0.5*o.alpha*o.pf*pen
}

// evalRows writes the weighted loss and logit gradients of texts [lo, hi)
// at x.
func (o *objective) evalRows(x []float64, lo, hi int) {
	d, k, q := o.d, o.k, o.q
	b := x[q*d.p:]
	z := make([]float64, k)
	for i := lo; i < hi; i++ {
		cols, vals := d.rowCol[d.rowPtr[i]:d.rowPtr[i+1]], d.rowVal[d.rowPtr[i]:d.rowPtr[i+1]]
		if q == 1 {
			t := b[0]
			for j, f := range cols {
				t += x[f] * vals[j]
			}
			z[0], z[1] = -t, t
		} else {
			copy(z, b)
			for j, f := range cols {
				v, w := vals[j], x[int(f)*k:int(f)*k+k]
				for c := range z {
					z[c] += w[c] * v
				}
			}
		}
		lse := logSumExp(z)
		y := o.y[i]
		w := o.weight(y)
		o.loss[i] = w * (lse - z[y])
		r := o.r[i*q : i*q+q]
		for c := range z {
			dc := math.Exp(z[c]-lse) * w
			if c == y {
				dc -= w
			}
			z[c] = dc
		}
		if q == 1 {
			r[0] = z[1] - z[0] // class 1's part minus class 0's
		} else {
			copy(r, z)
		}
	}
}

// evalBlock writes the gradient of fit-space features [lo, hi) at x from
// the texts' logit gradients, and the block's share b of the penalty.
func (o *objective) evalBlock(x []float64, lo, hi, b int) {
	d, q := o.d, o.q
	var pen float64
	if q == 1 {
		for f := lo; f < hi; f++ {
			var a float64
			rows, vals := d.colRow[d.colPtr[f]:d.colPtr[f+1]], d.colVal[d.colPtr[f]:d.colPtr[f+1]]
			for t, i := range rows {
				a += o.r[i] * vals[t]
			}
			xv := x[f]
			pen += xv * xv
			o.g[f] = a*o.inv + o.pf*o.alpha*xv
		}
		o.pen[b] = pen
		return
	}
	acc := make([]float64, q)
	for f := lo; f < hi; f++ {
		clear(acc)
		for t := d.colPtr[f]; t < d.colPtr[f+1]; t++ {
			r, v := o.r[int(d.colRow[t])*q:int(d.colRow[t])*q+q], d.colVal[t]
			for c := range acc {
				acc[c] += r[c] * v
			}
		}
		for c, a := range acc {
			xv := x[f*q+c]
			pen += xv * xv
			o.g[f*q+c] = a*o.inv + o.pf*o.alpha*xv
		}
	}
	o.pen[b] = pen
}

// inParallel calls fn on consecutive ranges of [0, n) on at most threads
// goroutines, none given fewer than minPart items.
func inParallel(threads, n, minPart int, fn func(lo, hi int)) {
	parts := max(1, min(threads, n/minPart))
	if parts == 1 {
		fn(0, n)
		return
	}
	var wg sync.WaitGroup
	for t := range parts {
		wg.Add(1)
		go func(lo, hi int) {
			defer wg.Done()
			fn(lo, hi)
		}(t*n/parts, (t+1)*n/parts)
	}
	wg.Wait()
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

// fitC minimises the objective over the design d for one C from the
// fit-space start point x0 (nil: zeros) and returns the classifier and the
// fit-space point reached (a start point for the next C).
func fitC(ctx context.Context, d *design, y []int, k int, cw []float64, C float64, sc SolverConfig, x0 []float64) (*Classifier, []float64, error) {
	if !(C > 0) || math.IsInf(C, 0) {
		return nil, nil, fmt.Errorf("linear: regularisation C = %g: must be positive and finite", C)
	}
	sc = sc.withDefaults()
	o := newObjective(d, y, k, cw, C, sc.Threads)
	if x0 == nil {
		x0 = make([]float64, o.dim())
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
	// A k-class gradient component is the fit-space one's over √m (m
	// merged features, see design), halved in the two-class form (see
	// objective): so this threshold bounds the k-class gradient by GradTol.
	tol := sc.GradTol * o.pf
	settings := &optimize.Settings{GradientThreshold: tol, MajorIterations: sc.MaxIter,
		Converger: &optimize.FunctionConverge{Absolute: 1e-15, Relative: 1e-15, Iterations: 50}}
	res, err := optimize.Minimize(prob, x0, settings, &optimize.LBFGS{GradStopThreshold: math.NaN()})
	if ctx.Err() != nil {
		return nil, nil, ctx.Err()
	}
	if res == nil {
		return nil, nil, fmt.Errorf("linear: L-BFGS: %w", err)
	}
	// A line search that can no longer improve stops L-BFGS with an error
	// at the float64 floor; the location reached is kept.
	clf := o.classifier(res.Location.X)
	clf.C, clf.Converged, clf.Iter = C, res.Status == optimize.GradientThreshold, res.Stats.MajorIterations
	return clf, res.Location.X, nil
}

// classifier is the fit-space point x as class-major weights over the
// Vectorizer's features.
func (o *objective) classifier(x []float64) *Classifier {
	k, q, p := o.k, o.q, len(o.d.col)
	m := &Classifier{Classes: k, Features: p, Coef: make([]float64, k*p), Intercept: make([]float64, k)}
	for j, col := range o.d.col {
		for c := range q {
			m.Coef[c*p+j] = x[int(col)*q+c] * o.d.scale[col]
		}
	}
	copy(m.Intercept, x[q*o.d.p:])
	if q == 1 { // class 1 is (u, a), class 0 (−u, −a)
		for j := range p {
			m.Coef[p+j] = m.Coef[j]
			m.Coef[j] = -m.Coef[j]
		}
		m.Intercept[0], m.Intercept[1] = -x[o.d.p], x[o.d.p]
	}
	return m
}

// Probs writes P(c | r) for every class into out (Classes values).
func (m *Classifier) Probs(r Row, out []float64) {
	logits(m.Coef, m.Intercept, m.Features, r, out)
	lse := logSumExp(out)
	for c := range out {
		out[c] = math.Exp(out[c] - lse)
	}
}

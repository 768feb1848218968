package explain

import (
	"math"

	"telltale/cnn"
)

// A filter's activation, its slot scores, its bias, its thresholds and
// every other number on the scale of its pooled unit are not identified:
// multiplying the filter's convolution weights and bias by k > 0 and
// dividing its output-weight column by k multiplies them by k and changes
// no prediction (ReLU and max pooling are positively homogeneous). Its
// output-weight column is not identified either: adding a constant to it
// changes no probability, and the rescaling divides it by k. Only their
// products are. Such numbers are therefore shown in log-odds units: times
// the filter's vote scale (VoteScale), in fields and JSON keys named
// "…LogOdds" and "…_log_odds"; the raw numbers are kept for computing and
// never shown.

// VoteScale is filter g's vote scale, the range of its output-weight
// column: max_c OutW[c][g] − min_c OutW[c][g] (g < NumFilters). It is the
// most one unit of the filter's activation moves the log-odds between two
// classes (with two classes, |OutW[1][g] − OutW[0][g]|, the log-odds one
// unit moves between them). Adding a constant to the column leaves it
// unchanged, and rescaling the filter by k divides it by k, so an
// activation-scale number times VoteScale is identified. It is 0 for a
// dead filter (every class's weight equal), whose activation moves no
// probability.
func VoteScale(m *cnn.Model, g int) float64 {
	nf := m.Config.NumFilters()
	lo, hi := math.Inf(1), math.Inf(-1)
	for c := 0; c < m.Config.Classes; c++ {
		w := float64(m.OutW[c*nf+g])
		lo, hi = min(lo, w), max(hi, w)
	}
	return hi - lo
}

// inLogOdds is the activation-scale number x of a filter with vote scale
// r ≥ 0 in log-odds units: x·r; 0 when r is 0 (a dead filter), and ±Inf
// (no threshold) kept as it is.
func inLogOdds(x, r float64) float64 {
	if math.IsInf(x, 0) {
		return x
	}
	if r == 0 {
		return 0
	}
	return x * r
}

// allInLogOdds is inLogOdds of every value of xs, in a new slice (nil for
// nil).
func allInLogOdds(xs []float64, r float64) []float64 {
	if xs == nil {
		return nil
	}
	out := make([]float64, len(xs))
	for i, x := range xs {
		out[i] = inLogOdds(x, r)
	}
	return out
}

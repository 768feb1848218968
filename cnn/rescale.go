package cnn

import "math"

// WithFiltersRescaled returns a copy of m in which each filter g of ks is
// multiplied by ks[g]: its convolution weights and bias times ks[g], its
// column of output weights divided by it. ReLU and max pooling are
// positively homogeneous (relu(k·a) = k·relu(a), max_t k·a_t = k·max_t a_t),
// so the pooled unit is ks[g] times the original and its product with the
// column is unchanged: no prediction moves (up to float32 rounding), and
// nothing in the data pins a filter's scale down. A number that changes
// under it is not identified; the tests of what explanations, reports and
// the window show use it to prove theirs are.
// Preconditions: every key is a filter index of m and every scale is
// positive and finite.
func (m *Model) WithFiltersRescaled(ks map[int]float32) *Model {
	s := m.Clone()
	nf := m.Config.NumFilters()
	for g, k := range ks {
		if g < 0 || g >= nf || !(k > 0) || k > math.MaxFloat32 {
			panic("cnn: WithFiltersRescaled: a filter index out of range or a scale not positive and finite")
		}
		b, f := m.FilterConv(g)
		cv := &s.Convs[b]
		per := len(cv.W) / m.Config.Filters
		for i := f * per; i < (f+1)*per; i++ {
			cv.W[i] *= k
		}
		cv.B[f] *= k
		for c := 0; c < m.Config.Classes; c++ {
			s.OutW[c*nf+g] /= k
		}
	}
	s.Invalidate()
	return s
}

// WithVotesShifted returns a copy of m in which every class's output
// weight of each filter g of ds is raised by ds[g]: every logit gains
// ds[g] times the filter's pooled unit, the same for every class, so the
// softmax and every prediction stay as they are (up to float32 rounding)
// while each class's raw weight on the filter moves. Only differences
// between classes' weights are identified; a number that changes under it
// is not. Preconditions: every key is a filter index of m and every shift
// finite.
func (m *Model) WithVotesShifted(ds map[int]float32) *Model {
	s := m.Clone()
	nf := m.Config.NumFilters()
	for g, d := range ds {
		if g < 0 || g >= nf || math.IsNaN(float64(d)) || math.IsInf(float64(d), 0) {
			panic("cnn: WithVotesShifted: a filter index out of range or a shift not finite")
		}
		for c := 0; c < m.Config.Classes; c++ {
			s.OutW[c*nf+g] += d
		}
	}
	s.Invalidate()
	return s
}

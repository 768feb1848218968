package explain

import "telltale/cnn"

// Against values of Shares and IGShares.
const (
	// AgainstMean marks a centred logit: a class's logit minus the mean of
	// all classes' logits.
	AgainstMean = -1
)

// Shares splits one identified quantity of a text exactly into the output
// bias, one part per fired filter's convolution bias and one share per
// token:
//
//	Value = OutputBias + Σ_k FilterBias[k] + Σ_i Tokens[i]
//
// up to the float32 rounding of the model. The quantity is a contrast of
// logits whose class weights v sum to zero: the log-odds of Class against
// the class Against (v = e_Class − e_Against), or, with Against =
// AgainstMean, the centred logit of Class (v = e_Class − 1/C). Adding the
// same number to every class's output weight on one filter, or to every
// class's output bias, changes no probability and none of these numbers:
// that is what "identified" means here, and why the shares of a single
// class's logit are not given.
//
// The method is gradient × input at the word vectors with every filter's
// winning window held fixed, against the zero word vector (PAD) as
// reference; with ReLU, max pooling and a linear head that product is an
// exact decomposition: with h_g = B_g + Σ_s slot score of the winning
// window for every fired filter g,
//
//	Σ_c v_c·logit[c] = Σ_c v_c·OutB[c] + Σ_{g fired} (Σ_c v_c·OutW[c][g])·(B_g + Σ_s slot scores).
//
// A model with the wide path (cnn.Config.Wide) adds (1/N)·Σ_t
// Σ_c v_c·Wide[x_t][c] over the text's N non-PAD tokens, or
// Σ_c v_c·Wide[UNK][c] when N is 0. Adding a vector a to every word's row
// of the wide table but PAD's and subtracting a from the output biases
// changes no logit of any text, so a row alone is not identified, only
// its difference from the unknown word's row: token i's wide part is
// Words[i] = Σ_c v_c·(Wide[x_i][c] − Wide[UNK][c])/N (0 for PAD), and the
// constant Σ_c v_c·Wide[UNK][c] goes with the output bias, for every N.
// With bigram weights (cnn.Config.WideBigrams) N counts the text's M found
// pairs of adjacent ids too, the same shift moves every bigram row, and
// the part Σ_c v_c·(WideBigram[p][c] − Wide[UNK][c])/N of each found pair
// p goes half to each of its two tokens' Words, so the shares still sum to
// Value exactly.
type Shares struct {
	Class   int `json:"class"`
	Against int `json:"against"` // a class, or AgainstMean (−1)
	// Value is the quantity itself: logit[Class] − logit[Against] (the
	// log of p(Class)/p(Against)), or logit[Class] − mean logit.
	Value float64 `json:"value"`
	// OutputBias is the output bias, Σ_c v_c·OutB[c], plus the wide path's
	// unknown-word weight, Σ_c v_c·Wide[UNK][c], for a model with the wide
	// path (see above).
	OutputBias float64 `json:"output_bias"`
	// FilterBias[k] = (Σ_c v_c·OutW[c][g])·B_g for the k-th fired filter g
	// of Explanation.Filters: the part of Value its convolution bias carries.
	FilterBias []float64 `json:"filter_bias"`
	// Filters[k] = (Σ_c v_c·OutW[c][g])·h_g, the fired filter's whole part
	// of Value: its FilterBias plus the shares it gives the tokens of its
	// winning window.
	Filters []float64 `json:"filters"`
	// Tokens[i] is token i's share: the shares its slot scores give
	// through the fired filters, plus Words[i].
	Tokens []float64 `json:"tokens"`
	// Words[i] is token i's part through the wide path, Σ_c
	// v_c·(Wide[x_i][c] − Wide[UNK][c])/N (already in Tokens[i]); nil for a
	// model without the wide path.
	Words []float64 `json:"words,omitempty"`
}

// Parts returns OutputBias + Σ FilterBias + Σ Tokens, which equals Value up
// to the model's float32 rounding.
func (s *Shares) Parts() float64 {
	sum := s.OutputBias
	for _, v := range s.FilterBias {
		sum += v
	}
	for _, v := range s.Tokens {
		sum += v
	}
	return sum
}

// contrast is a vector of class weights summing to zero.
type contrast struct {
	class, against int
	v              []float64
}

func logOddsContrast(C, class, against int) contrast {
	v := make([]float64, C)
	v[class], v[against] = 1, -1
	return contrast{class: class, against: against, v: v}
}

func centredContrast(C, class int) contrast {
	v := make([]float64, C)
	for c := range v {
		v[c] = -1 / float64(C)
	}
	v[class] += 1
	return contrast{class: class, against: AgainstMean, v: v}
}

// targets are the identified quantities Explain splits: the log-odds of the
// predicted class against the runner-up first, then one centred logit per
// class.
func targets(C, class, runnerUp int) []contrast {
	out := []contrast{logOddsContrast(C, class, runnerUp)}
	for c := 0; c < C; c++ {
		out = append(out, centredContrast(C, c))
	}
	return out
}

// dot is Σ_c v_c·x[c].
func (k contrast) dot(x []float64) float64 {
	var s float64
	for c, v := range k.v {
		s += v * x[c]
	}
	return s
}

// column is Σ_c v_c·OutW[c][g], the filter's identified vote.
func (k contrast) column(m *cnn.Model, g int) float64 {
	nf := m.Config.NumFilters()
	var s float64
	for c, v := range k.v {
		s += v * float64(m.OutW[c*nf+g])
	}
	return s
}

func (k contrast) outputBias(m *cnn.Model) float64 {
	var s float64
	for c, v := range k.v {
		s += v * float64(m.OutB[c])
	}
	return s
}

// runnerUp is the class with the largest logit other than class (the first
// one on a tie).
func runnerUp(z []float64, class int) int {
	best := -1
	for c, v := range z {
		if c != class && (best < 0 || v > z[best]) {
			best = c
		}
	}
	return best
}

// identifiedShares fills e.LogOdds and e.Centred from the fired filters'
// slot scores (e.Filters must be set) and the wide path's rows of the
// text's words; ids are the text's ids.
func identifiedShares(m *cnn.Model, e *Explanation, ids []int32) {
	L := len(e.Tokens)
	ts := targets(m.Config.Classes, e.Class, e.RunnerUp)
	out := make([]Shares, len(ts))
	nk := len(e.Filters)
	per := L + 2*nk
	if e.wide.sum != nil {
		per += L
	}
	flat := make([]float64, len(ts)*per)
	for j, k := range ts {
		s := &out[j]
		s.Class, s.Against = k.class, k.against
		s.Value = k.dot(e.logits)
		s.OutputBias = k.outputBias(m) + k.unknownPart(e.wide)
		s.Tokens, flat = flat[:L:L], flat[L:]
		if e.wide.sum != nil {
			s.Words = k.wordShares(m, ids, e.wide, flat[:L:L])
			flat = flat[L:]
			copy(s.Tokens, s.Words)
		}
		s.FilterBias, flat = flat[:nk:nk], flat[nk:]
		s.Filters, flat = flat[:nk:nk], flat[nk:]
		for fi := range e.Filters {
			ff := &e.Filters[fi]
			col := k.column(m, ff.Filter)
			s.FilterBias[fi] = col * ff.BiasTerm
			s.Filters[fi] = col * ff.Activation
			for sl, v := range ff.Slots {
				if i := ff.Start + sl; i < L {
					s.Tokens[i] += col * v
				}
			}
		}
	}
	e.LogOdds = out[0]
	e.Centred = out[1:]
}

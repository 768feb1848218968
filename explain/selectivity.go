package explain

import (
	"cmp"
	"math"
	"slices"

	"gonum.org/v1/gonum/mathext"

	"telltale/cnn"
)

// Selectivity says whether a filter's strong activations tell its class
// apart better than chance, and from which activation on.
//
// The texts are split in two halves by a hash of their position in the
// corpus. On the choosing half the Threshold is the lowest winning-window
// activation a such that, among the fired winning windows with activation
// ≥ a, the share from texts assigned the filter's class reaches
//
//	Target = π + Share·(1 − π)
//
// π being the share of the choosing half's texts assigned that class (its
// base rate): the purity threshold of Jacovi, Sar Shalom & Goldberg (2018)
// with the purity measured from the base rate up (Share 0.5 asks for half
// the way from chance to pure), so that in balanced binary data a filter
// whose fired texts are half its class does not get its lowest activation
// as threshold. On the other half, which took no part in choosing it
// (though the model's filters were trained on both halves when the corpus
// is the training split), the windows at or above the threshold are counted and their purity
// tested against that half's base rate with the one-sided exact binomial
// test; a filter is Selective when the test, corrected by Holm's method over
// all filters with a threshold (Holm 1979, "A Simple Sequentially
// Rejective Multiple Test Procedure", Scand. J. Statist.), rejects at level
// Alpha. A filter with no threshold, or whose test does not reject, is not
// selective.
type Selectivity struct {
	Share  float64 `json:"share"`
	Target float64 `json:"target"` // the purity required on the choosing half
	// Threshold is +Inf when no activation reaches Target. It is a raw
	// activation, never shown; ThresholdLogOdds is it in log-odds units
	// (times the filter's VoteScale; JSON null without a threshold).
	// ThresholdExact is false when it was taken at a bin edge of the
	// activation histogram (beyond the exactly kept largest activations).
	Threshold        float64 `json:"-"`
	ThresholdLogOdds float64 `json:"threshold_log_odds"`
	ThresholdExact   bool    `json:"threshold_exact"`
	// Above is the number of winning windows at or above Threshold over
	// all texts; Families describe them.
	Above int `json:"above"`

	// Measured on the other half (see above):
	BaseRate float64 `json:"base_rate"` // share of its texts assigned the class
	Windows  int     `json:"windows"`   // winning windows ≥ Threshold
	InClass  int     `json:"in_class"`  // of those, from texts assigned the class
	Purity   float64 `json:"purity"`    // InClass / Windows (NaN → null without windows)
	// PurityLow and PurityHigh bound Purity with 95% confidence
	// (Clopper & Pearson 1934, "The use of confidence or fiducial limits
	// illustrated in the case of the binomial", Biometrika).
	PurityLow  float64 `json:"purity_low"`
	PurityHigh float64 `json:"purity_high"`
	// P = P(X ≥ InClass) for X ~ Binomial(Windows, BaseRate); PHolm is it
	// adjusted by Holm's method over the filters with a threshold.
	P         float64 `json:"p"`
	PHolm     float64 `json:"p_holm"`
	Alpha     float64 `json:"alpha"`
	Selective bool    `json:"selective"`
}

// MarshalJSON writes an infinite threshold_log_odds and NaN figures (no held-out
// texts or windows, no test) as null.
func (s Selectivity) MarshalJSON() ([]byte, error) {
	type plain Selectivity
	q := struct {
		plain
		Threshold  *float64 `json:"threshold_log_odds"`
		BaseRate   *float64 `json:"base_rate"`
		Purity     *float64 `json:"purity"`
		PurityLow  *float64 `json:"purity_low"`
		PurityHigh *float64 `json:"purity_high"`
		P          *float64 `json:"p"`
		PHolm      *float64 `json:"p_holm"`
	}{plain: plain(s)}
	q.Threshold, q.BaseRate = finite(s.ThresholdLogOdds), finite(s.BaseRate)
	q.Purity, q.PurityLow, q.PurityHigh = finite(s.Purity), finite(s.PurityLow), finite(s.PurityHigh)
	q.P, q.PHolm = finite(s.P), finite(s.PHolm)
	return jsonMarshal(q)
}

func finite(v float64) *float64 {
	if math.IsInf(v, 0) || math.IsNaN(v) {
		return nil
	}
	return &v
}

// BinomialUpper is P(X ≥ k) for X ~ Binomial(n, p), the one-sided exact
// binomial test's p-value, computed as the regularised incomplete beta
// function I_p(k, n−k+1) so that small values keep their precision.
// It needs 0 ≤ k ≤ n and p in [0, 1].
func BinomialUpper(k, n int, p float64) float64 {
	switch {
	case k <= 0:
		return 1
	case p <= 0:
		return 0
	case p >= 1:
		return 1
	}
	return mathext.RegIncBeta(float64(k), float64(n-k+1), p)
}

// ClopperPearson is the exact two-sided confidence interval at level (e.g.
// 0.95) for a binomial proportion with k successes in n > 0 trials
// (cnn.ClopperPearsonInterval).
func ClopperPearson(k, n int, level float64) (lo, hi float64) {
	iv := cnn.ClopperPearsonInterval(k, n, level)
	return iv.Low, iv.High
}

// Holm returns the p-values adjusted by Holm's step-down method: sorted
// ascending, the i-th (from 1) becomes max over j ≤ i of min(1,
// (m−j+1)·p_(j)). NaN values are left out of m and stay NaN.
func Holm(ps []float64) []float64 {
	idx := make([]int, 0, len(ps))
	for i, p := range ps {
		if !math.IsNaN(p) {
			idx = append(idx, i)
		}
	}
	slices.SortStableFunc(idx, func(a, b int) int { return cmp.Compare(ps[a], ps[b]) })
	out := make([]float64, len(ps))
	for i := range out {
		out[i] = math.NaN()
	}
	m := len(idx)
	run := 0.0
	for j, i := range idx {
		run = max(run, min(1, float64(m-j)*ps[i]))
		out[i] = run
	}
	return out
}

// half is the half of the corpus text falls in: 0 chooses thresholds, 1
// checks them.
func half(text int) int { return int(mix64(uint64(text)^0x5e1ec7) & 1) }

// heldOutTest fills the held-out figures of s from the held-out half's
// windows at or above the threshold.
func (s *Selectivity) heldOutTest(windows, inClass, texts, assigned int, alpha float64) {
	s.Alpha = alpha
	s.Windows, s.InClass = windows, inClass
	s.BaseRate = math.NaN()
	if texts > 0 {
		s.BaseRate = float64(assigned) / float64(texts)
	}
	s.Purity, s.PurityLow, s.PurityHigh, s.P = math.NaN(), math.NaN(), math.NaN(), math.NaN()
	if math.IsInf(s.Threshold, 1) {
		return
	}
	s.P = 1
	if windows > 0 {
		s.Purity = float64(inClass) / float64(windows)
		s.PurityLow, s.PurityHigh = ClopperPearson(inClass, windows, 0.95)
		if !math.IsNaN(s.BaseRate) {
			s.P = BinomialUpper(inClass, windows, s.BaseRate)
		}
	}
}

// holmSelective adjusts the filters' p-values together and sets Selective.
func holmSelective(fs []FilterProfile) {
	ps := make([]float64, len(fs))
	for i := range fs {
		ps[i] = fs[i].Selectivity.P
	}
	adj := Holm(ps)
	for i := range fs {
		s := &fs[i].Selectivity
		s.PHolm = adj[i]
		s.Selective = !math.IsNaN(adj[i]) && adj[i] <= s.Alpha
	}
}

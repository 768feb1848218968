package audit

import (
	"math/rand/v2"
	"slices"
)

// Interval is an estimate with its two-sided confidence interval.
type Interval struct {
	Estimate float64 `json:"estimate"`
	Low      float64 `json:"low"`
	High     float64 `json:"high"`
}

// BootstrapMean is the mean of x with its percentile bootstrap interval
// (Efron & Tibshirani 1993, "An Introduction to the Bootstrap", ch. 13):
// B resamples of len(x) values drawn with replacement, seeded by seed, and
// the (1−conf)/2 and (1+conf)/2 quantiles of their means. The values are
// one per text, so the interval is over texts. With fewer than two values
// the interval is the estimate itself. Preconditions: B ≥ 1, 0 < conf < 1.
func BootstrapMean(x []float64, B int, conf float64, seed uint64) Interval {
	n := len(x)
	var sum float64
	for _, v := range x {
		sum += v
	}
	if n == 0 {
		return Interval{}
	}
	est := sum / float64(n)
	if n < 2 {
		return Interval{Estimate: est, Low: est, High: est}
	}
	r := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
	means := make([]float64, B)
	for b := range means {
		var s float64
		for range n {
			s += x[r.IntN(n)]
		}
		means[b] = s / float64(n)
	}
	slices.Sort(means)
	return Interval{Estimate: est, Low: quantileSorted(means, (1-conf)/2), High: quantileSorted(means, (1+conf)/2)}
}

// quantileSorted is the q-quantile of sorted xs with linear interpolation
// between order statistics (Hyndman & Fan 1996, definition 7, numpy's
// default).
func quantileSorted(xs []float64, q float64) float64 {
	if len(xs) == 1 {
		return xs[0]
	}
	h := q * float64(len(xs)-1)
	i := int(h)
	if i >= len(xs)-1 {
		return xs[len(xs)-1]
	}
	return xs[i] + (h-float64(i))*(xs[i+1]-xs[i])
}

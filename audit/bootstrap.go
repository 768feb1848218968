package audit

import (
	"math/rand/v2"
	"slices"

	"telltale/cnn"
)

// Interval is an estimate with its two-sided confidence interval.
type Interval struct {
	Estimate float64 `json:"estimate"`
	Low      float64 `json:"low"`
	High     float64 `json:"high"`
	// Method names how Low and High were found: cnn's Method… constants,
	// or MethodBetting.
	Method string `json:"method,omitempty"`
}

// MethodBetting names the betting interval (BettingMeanInterval) in
// Interval.Method.
const MethodBetting = "betting"

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
		return Interval{Estimate: est, Low: est, High: est} // one value: nothing to resample
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
	return Interval{Estimate: est, Low: quantileSorted(means, (1-conf)/2), High: quantileSorted(means, (1+conf)/2), Method: cnn.MethodBootstrap}
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

// ExactMeanIn is the mean of values known to lie in [lo, hi], one per
// text, with an exact interval at level conf over texts, valid for any
// distribution there and at any number of texts:
//   - every value the same v: the texts are n draws none of which fell
//     elsewhere; the share q of texts whose value is not v lies below u,
//     the Clopper–Pearson upper bound for 0 of n (ClopperPearson), and the
//     mean below v + q·(hi − v) and above v − q·(v − lo): the interval is
//     [v − u·(v − lo), v + u·(hi − v)]. For shares that are all 0 it is
//     [0, u], for 12 texts about [0, 0.26] at 95%;
//   - otherwise the betting interval (BettingMeanInterval).
//
// The audit gives it to the flip rates, whose values (steps of one draw)
// are mostly 0 with few texts off it, where a bootstrap sees only those
// few and is too narrow. Preconditions: len(x) ≥ 1, lo < hi, lo ≤ every
// x ≤ hi, 0 < conf < 1.
func ExactMeanIn(x []float64, lo, hi, conf float64, seed uint64) Interval {
	return exactMeanIn(x, modeCount(x), lo, hi, conf, seed)
}

// exactMeanIn is ExactMeanIn with mode, x's modeCount, counted already.
func exactMeanIn(x []float64, mode int, lo, hi, conf float64, seed uint64) Interval {
	if mode == len(x) {
		v := x[0]
		_, u := ClopperPearson(0, len(x), conf)
		return Interval{Estimate: v, Low: v - u*(v-lo), High: v + u*(hi-v), Method: cnn.MethodClopperPearson}
	}
	return BettingMeanInterval(x, lo, hi, conf, seed)
}

// MeanIntervalIn is the mean of values known to lie in [lo, hi] that
// rarely repeat (probability drops), one per text, with an interval at
// level conf over texts: ExactMeanIn's where fewer than ThinOffMode values
// differ from the most common one (for values that never repeat: 10
// texts or fewer), where a bootstrap of so few is too narrow; the
// percentile bootstrap (BootstrapMean) otherwise. Preconditions: as
// BootstrapMean, lo < hi, lo ≤ every x ≤ hi.
func MeanIntervalIn(x []float64, lo, hi float64, B int, conf float64, seed uint64) Interval {
	if len(x) == 0 {
		return BootstrapMean(x, B, conf, seed)
	}
	if mode := modeCount(x); len(x)-mode < ThinOffMode {
		return exactMeanIn(x, mode, lo, hi, conf, seed)
	}
	return BootstrapMean(x, B, conf, seed)
}

// modeCount is how many values of x equal its most common value.
func modeCount(x []float64) int {
	counts := make(map[float64]int, 8)
	best := 0
	for _, v := range x {
		counts[v]++
		best = max(best, counts[v])
	}
	return best
}

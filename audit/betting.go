package audit

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
)

// ThinOffMode is the fewest values that must differ from a sample's most
// common value for MeanIntervalIn to use the percentile bootstrap: with
// fewer, a resample sees only those few and its interval is too narrow
// (TestMeanIntervalInCoverage logs it for nets of flips: 0.87–0.90 with 3
// to 5 texts off 0 in 150), so the exact interval is used instead. For
// values that rarely repeat, as probability drops, it means a sample of
// 10 or fewer. The same count as the F1 intervals' thin rule in package
// cnn.
const ThinOffMode = 10

// bettingGrid is the number of steps of the grid of candidate means that
// BettingMeanInterval tests over [lo, hi].
const bettingGrid = 2000

// bettingOrders is the number of seeded orders of the values whose
// capitals BettingMeanInterval averages.
const bettingOrders = 10

// BettingMeanInterval is a confidence interval at level conf for the mean
// of values known to lie in [lo, hi], exact for any distribution there
// (no normal approximation, no resampling): the betting interval of
// Waudby-Smith & Ramdas (2024), "Estimating means of bounded random
// variables by betting", JRSS B 86(1), section 4, with the hedged capital
// process (θ = 1/2) and the predictable plug-in bets tuned to a fixed
// sample size (their PrPl-EB choice with t·log(t+1) replaced by n, and
// their c = 3/4); the formulas are recalled from the paper, not copied
// from its code. Its coverage is at least conf, and in practice well above
// it (TestMeanIntervalInCoverage); on shares of 0 and 1 it is about 1.45
// times as wide as Clopper–Pearson's exact interval. A candidate mean m
// is rejected when the capital of
// betting against it on either side, each side staked half, ends at 1/α
// (α = 1 − conf) or more. The bets are made over the values in a seeded
// random order, since a file's order may follow the values (texts sorted
// by label), and the capital is averaged over bettingOrders such orders:
// each order's capital has expectation at most 1 at the true mean, so by
// Markov's inequality so does their mean, and the true mean is rejected
// with probability at most α. The interval is the hull of the grid's means
// not rejected, widened to the rejected neighbours so that the grid cannot
// narrow it. Preconditions: len(x) ≥ 1, lo < hi, lo ≤ every x ≤ hi,
// 0 < conf < 1.
func BettingMeanInterval(x []float64, lo, hi, conf float64, seed uint64) Interval {
	if len(x) == 0 || !(lo < hi) || !(conf > 0 && conf < 1) {
		panic(fmt.Sprintf("audit: BettingMeanInterval of %d values in [%g, %g] at level %g: need a value, lo < hi and a level in (0, 1)", len(x), lo, hi, conf))
	}
	n := len(x)
	var sum float64
	for _, v := range x {
		sum += v
	}
	est := sum / float64(n)
	orders, bets := bettingOrdersOf(x, lo, hi, conf, seed)
	logLimit := math.Log(2 / (1 - conf)) // half the stake on a side: 1/α in all
	// Each factor 1 + λ(y − m) falls as m grows (capped or not), so the
	// upward side's capital falls and the downward side's rises with m:
	// the means not rejected form one run of the grid, found by bisection.
	upOK := func(g int) bool { return capital(orders, bets, float64(g)/bettingGrid, +1) < logLimit }
	downOK := func(g int) bool { return capital(orders, bets, float64(g)/bettingGrid, -1) < logLimit }
	first := sort.Search(bettingGrid+1, upOK)
	last := sort.Search(bettingGrid+1, func(g int) bool { return !downOK(g) }) - 1
	if first > last { // the means not rejected fall between two grid points: the widest then
		return Interval{Estimate: est, Low: lo, High: hi, Method: MethodBetting}
	}
	at := func(g int) float64 { return lo + (hi-lo)*float64(max(0, min(bettingGrid, g)))/bettingGrid }
	return Interval{Estimate: est, Low: min(est, at(first-1)), High: max(est, at(last+1)), Method: MethodBetting}
}

// bettingOrdersOf are BettingMeanInterval's bettingOrders seeded orders
// of x, mapped onto [0, 1], and the bets' sizes in each (plugInBets).
func bettingOrdersOf(x []float64, lo, hi, conf float64, seed uint64) (orders, bets [][]float64) {
	r := rand.New(rand.NewPCG(seed, 0x5be0cd19137e2179))
	orders, bets = make([][]float64, bettingOrders), make([][]float64, bettingOrders)
	for k := range orders {
		y := make([]float64, len(x))
		for i, j := range r.Perm(len(x)) {
			y[i] = (x[j] - lo) / (hi - lo)
		}
		orders[k], bets[k] = y, plugInBets(y, 1-conf)
	}
	return orders, bets
}

// plugInBets are the bets' sizes before the caps of each candidate mean:
// λ_i = sqrt(2·log(2/α) / (n·σ̂²_{i−1})), σ̂²_{i−1} the running variance
// estimate of the values before i (from 0): (1/4 + Σ_{j<i} (y_j − μ̂_j)²)/(i + 1) with
// μ̂_j = (1/2 + Σ_{k≤j} y_k)/(j + 1) (Waudby-Smith & Ramdas 2024, the
// PrPl-EB bets).
func plugInBets(y []float64, alpha float64) []float64 {
	n := float64(len(y))
	bets := make([]float64, len(y))
	ss := 0.25 // the numerator of σ̂²_0
	var sumY float64
	for i, v := range y {
		variance := ss / float64(i+1)
		bets[i] = math.Sqrt(2 * math.Log(2/alpha) / (n * variance))
		sumY += v
		mean := (0.5 + sumY) / float64(i+2) // μ̂_i, with y_i
		ss += (v - mean) * (v - mean)
	}
	return bets
}

// capital is the log of the mean over the orders of one side's final
// capital against mean m (values in [0, 1]): side +1 bets that the values
// lie above m, −1 below. A side's capital is the product of 1 + side·λ(y −
// m), λ capped at c/m (at c/(1−m) for side −1) so that no factor falls
// below 1 − c; it is summed in logs.
func capital(orders, bets [][]float64, m float64, side int) float64 {
	const c = 0.75
	capped := math.Inf(1)
	switch {
	case side > 0 && m > 0:
		capped = c / m
	case side < 0 && m < 1:
		capped = c / (1 - m)
	}
	logs := make([]float64, len(orders))
	for k, y := range orders {
		var sum float64
		for i, v := range y {
			sum += math.Log1p(float64(side) * min(bets[k][i], capped) * (v - m))
		}
		logs[k] = sum
	}
	return logMeanExp(logs)
}

// logMeanExp is log(mean(exp(a))) without overflow.
func logMeanExp(a []float64) float64 {
	top := math.Inf(-1)
	for _, v := range a {
		top = max(top, v)
	}
	var s float64
	for _, v := range a {
		s += math.Exp(v - top)
	}
	return top + math.Log(s/float64(len(a)))
}

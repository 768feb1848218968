package audit

import (
	"cmp"
	"math"
	"slices"

	"gonum.org/v1/gonum/mathext"
	"gonum.org/v1/gonum/stat/distuv"

	"telltale/cnn"
)

// BinomialUpper is the one-sided exact binomial p-value P(X ≥ k) for
// X ~ Binomial(n, p): the chance of k or more successes in n trials. It is
// computed as the regularized incomplete beta function I_p(k, n−k+1), which
// keeps its relative accuracy far into the tail (1 − CDF would not).
// Preconditions: 0 ≤ p ≤ 1, n ≥ 0; k ≤ 0 gives 1 and k > n gives 0.
func BinomialUpper(k, n int, p float64) float64 {
	switch {
	case k <= 0:
		return 1
	case k > n:
		return 0
	case p <= 0:
		return 0
	case p >= 1:
		return 1
	}
	return mathext.RegIncBeta(float64(k), float64(n-k+1), p)
}

// logChoose is log C(n, k) for 0 ≤ k ≤ n.
func logChoose(n, k int) float64 {
	a, _ := math.Lgamma(float64(n) + 1)
	b, _ := math.Lgamma(float64(k) + 1)
	c, _ := math.Lgamma(float64(n-k) + 1)
	return a - b - c
}

// hyperLogPMF is log P(X = k) for X hypergeometric: k successes in n draws
// without replacement from a population of N holding K successes.
func hyperLogPMF(k, N, K, n int) float64 {
	return logChoose(K, k) + logChoose(N-K, n-k) - logChoose(N, n)
}

// FisherGreater is the one-sided p-value of Fisher's exact test (Fisher
// 1922) for the 2×2 table
//
//	      class   other
//	word    a       b
//	other   c       d
//
// against the alternative that the row "word" holds more of the class than
// independence predicts: P(X ≥ a) for X hypergeometric with population
// N = a+b+c+d, K = a+c successes and n = a+b draws. The terms are summed
// from a upward and the sum stops once past the mode the terms fall below
// 1e-17 of it. Preconditions: every cell ≥ 0.
func FisherGreater(a, b, c, d int) float64 {
	N, K, n := a+b+c+d, a+c, a+b
	hi := min(n, K)
	lo := max(0, n-(N-K))
	if a <= lo {
		return 1
	}
	if a > hi {
		return 0
	}
	mode := int(math.Floor(float64(n+1) * float64(K+1) / float64(N+2)))
	var sum float64
	for k := a; k <= hi; k++ {
		t := math.Exp(hyperLogPMF(k, N, K, n))
		sum += t
		if k > mode && t < 1e-17*sum {
			break
		}
	}
	return min(1, sum)
}

// FisherTwoSided is the two-sided p-value of Fisher's exact test for the
// 2×2 table [[a, b], [c, d]]: the sum of the probabilities of every table
// with the same margins that is no more likely than the observed one
// (the convention of R's fisher.test and SciPy's fisher_exact, with the
// same relative tolerance 1e-7 for ties). Preconditions: every cell ≥ 0.
func FisherTwoSided(a, b, c, d int) float64 {
	N, K, n := a+b+c+d, a+c, a+b
	lo, hi := max(0, n-(N-K)), min(n, K)
	obs := hyperLogPMF(a, N, K, n)
	var sum float64
	for k := lo; k <= hi; k++ {
		if lp := hyperLogPMF(k, N, K, n); lp <= obs+1e-7 {
			sum += math.Exp(lp)
		}
	}
	return min(1, sum)
}

// BenjaminiHochberg returns the adjusted p-values of the step-up procedure
// of Benjamini & Hochberg (1995, "Controlling the false discovery rate",
// JRSS B 57:289–300): sorted ascending, q_(i) = min_{j ≥ i} m·p_(j)/j,
// capped at 1, returned in the order of p. Rejecting every hypothesis with
// q ≤ α controls the false discovery rate at α for independent or
// positively dependent tests. Preconditions: every p in [0, 1].
func BenjaminiHochberg(p []float64) []float64 {
	m := len(p)
	order := make([]int, m)
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(x, y int) int { return cmp.Compare(p[x], p[y]) })
	q := make([]float64, m)
	running := 1.0
	for r := m - 1; r >= 0; r-- {
		i := order[r]
		running = min(running, p[i]*float64(m)/float64(r+1))
		q[i] = running
	}
	return q
}

// Bonferroni returns min(1, m·p) for each of the m p-values (Dunn 1961).
func Bonferroni(p []float64) []float64 {
	q := make([]float64, len(p))
	for i, v := range p {
		q[i] = min(1, v*float64(len(p)))
	}
	return q
}

// SignTest is the one-sided exact sign test of paired outcomes: with pos
// pairs where the first member is larger and neg where the second is (ties
// left out), the p-value of pos or more under Binomial(pos+neg, ½). With
// 0/1 outcomes it is the exact McNemar test (McNemar 1947, "Note on the
// sampling error of the difference between correlated proportions or
// percentages", Psychometrika 12:153–157). It is 1 when pos+neg = 0.
func SignTest(pos, neg int) float64 {
	if pos+neg == 0 {
		return 1
	}
	return BinomialUpper(pos, pos+neg, 0.5)
}

// Wilson is the Wilson score interval (Wilson 1927, "Probable inference,
// the law of succession, and statistical inference", JASA 22:209–212) for a
// proportion of k successes in n trials at the two-sided level conf
// (e.g. 0.95). It returns [0, 1] when n = 0.
func Wilson(k, n int, conf float64) (lo, hi float64) {
	if n <= 0 {
		return 0, 1
	}
	z := distuv.UnitNormal.Quantile(1 - (1-conf)/2)
	p := float64(k) / float64(n)
	nn := float64(n)
	den := 1 + z*z/nn
	mid := (p + z*z/(2*nn)) / den
	half := z / den * math.Sqrt(p*(1-p)/nn+z*z/(4*nn*nn))
	return max(0, mid-half), min(1, mid+half)
}

// ClopperPearson is the exact binomial interval (Clopper & Pearson 1934,
// "The use of confidence or fiducial limits illustrated in the case of the
// binomial", Biometrika 26:404–413) for k successes in n trials at the
// two-sided level conf: the (1−conf)/2 quantile of Beta(k, n−k+1) and the
// (1+conf)/2 quantile of Beta(k+1, n−k), with 0 for k = 0 and 1 for k = n.
// Unlike a bootstrap it does not shrink to a point for 0 or n successes
// (0 of 36 gives [0, 0.097]). It returns [0, 1] when n = 0.
// Preconditions: 0 ≤ k ≤ n, 0 < conf < 1.
func ClopperPearson(k, n int, conf float64) (lo, hi float64) {
	if n <= 0 {
		return 0, 1
	}
	iv := cnn.ClopperPearsonInterval(k, n, conf)
	return iv.Low, iv.High
}

package cnn

import (
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"

	"telltale/corpus"
)

// Word vectors from the training split's own co-occurrence statistics: the
// positive pointwise mutual information (PPMI) of words within a window,
// reduced by a truncated SVD. The settings follow Levy, Goldberg & Dagan
// (2015, "Improving Distributional Similarity with Lessons Learned from Word
// Embeddings", TACL): context-distribution smoothing α = 0.75 and the
// singular values weighted by the power p = 0.5. The SVD is the randomized
// one of Halko, Martinsson & Tropp (2011, "Finding Structure with
// Randomness", SIAM Review, Algorithm 4.4: power iterations with
// re-orthonormalisation).
const (
	ppmiWindow = 5    // words counted on each side of a word
	ppmiAlpha  = 0.75 // context-distribution smoothing
	ppmiPower  = 0.5  // weight of the singular values: U·Σ^p
	// ppmiMaxWords is how many of the most frequent training words get a
	// vector; rarer ones keep their random start (their few contexts say
	// little, and the cost grows with the square of the rows).
	ppmiMaxWords = 30000
	// ppmiMaxTokens bounds the tokens counted (texts in order), so the
	// counting stays linear on very large splits.
	ppmiMaxTokens = 20_000_000
	svdOversample = 10 // extra random directions of the randomized SVD
	svdIterations = 2  // power iterations
)

// csr is a sparse matrix in compressed rows.
type csr struct {
	n      int
	rowPtr []int
	col    []int32
	val    []float64
}

// mulDense writes a·x into y (x and y n×l, row-major) on threads goroutines.
func (a *csr) mulDense(x, y []float64, l, threads int) {
	parallel(a.n, threads, func(r int) {
		dst := y[r*l : (r+1)*l]
		clear(dst)
		out := blas64.Vector{N: l, Inc: 1, Data: dst}
		for k := a.rowPtr[r]; k < a.rowPtr[r+1]; k++ {
			c := int(a.col[k])
			blas64.Axpy(a.val[k], blas64.Vector{N: l, Inc: 1, Data: x[c*l : (c+1)*l]}, out)
		}
	})
}

// cooccurWords picks the rows of the co-occurrence matrix: the up to
// ppmiMaxWords most frequent words of ids (PAD and UNK never), by count and
// then id. It returns the chosen ids and each id's row (−1: none).
func cooccurWords(ids [][]int32, vocab int) (words []int32, row []int32) {
	count := make([]int, vocab)
	for _, t := range ids {
		for _, id := range t {
			count[id]++
		}
	}
	for id := int(corpus.UNK) + 1; id < vocab; id++ {
		if count[id] > 0 {
			words = append(words, int32(id))
		}
	}
	slices.SortStableFunc(words, func(a, b int32) int { return count[b] - count[a] })
	words = words[:min(len(words), ppmiMaxWords)]
	slices.Sort(words)
	row = make([]int32, vocab)
	for i := range row {
		row[i] = -1
	}
	for r, id := range words {
		row[id] = int32(r)
	}
	return words, row
}

// pairCounts counts how often two rows occur within ppmiWindow tokens of
// each other, once per pair of positions, keyed by the smaller row in the
// high half. The keys come back sorted.
func pairCounts(ids [][]int32, row []int32) (keys []uint64, counts []float64) {
	const chunk = 1 << 22
	buf := make([]uint64, 0, chunk)
	flush := func() {
		slices.Sort(buf)
		var k2 []uint64
		var c2 []float64
		i, j := 0, 0
		for i < len(keys) || j < len(buf) {
			switch {
			case j == len(buf) || (i < len(keys) && keys[i] < buf[j]):
				k2, c2 = append(k2, keys[i]), append(c2, counts[i])
				i++
			case i < len(keys) && keys[i] == buf[j]:
				k2, c2 = append(k2, keys[i]), append(c2, counts[i])
				i++
			default:
				if n := len(k2); n > 0 && k2[n-1] == buf[j] {
					c2[n-1]++
				} else {
					k2, c2 = append(k2, buf[j]), append(c2, 1)
				}
				j++
			}
		}
		keys, counts, buf = k2, c2, buf[:0]
	}
	tokens := 0
	for _, t := range ids {
		if tokens += len(t); tokens > ppmiMaxTokens {
			break
		}
		for i, a := range t {
			ra := row[a]
			if ra < 0 {
				continue
			}
			for j := i + 1; j < min(len(t), i+1+ppmiWindow); j++ {
				rb := row[t[j]]
				if rb < 0 {
					continue
				}
				lo, hi := min(ra, rb), max(ra, rb)
				buf = append(buf, uint64(lo)<<32|uint64(hi))
				if len(buf) == chunk {
					flush()
				}
			}
		}
	}
	flush()
	return keys, counts
}

// ppmiMatrices builds the PPMI matrix M (rows words, columns contexts) of n
// rows from the symmetric pair counts, and its transpose.
func ppmiMatrices(n int, keys []uint64, counts []float64) (m, mt *csr) {
	rowSum := make([]float64, n)
	for i, k := range keys {
		a, b := int(k>>32), int(uint32(k))
		rowSum[a] += counts[i]
		rowSum[b] += counts[i] // a == b: the pair counts on both sides
	}
	// The counts are symmetric, so the context sums are the row sums.
	ctx := make([]float64, n)
	var z float64
	for c, s := range rowSum {
		ctx[c] = math.Pow(s, ppmiAlpha)
		z += ctx[c]
	}
	// A word next to itself counts on both sides of the pair.
	pairN := func(i int, a, b int) float64 {
		if a == b {
			return 2 * counts[i]
		}
		return counts[i]
	}
	pmi := func(i, w, c int) float64 { return math.Log(pairN(i, w, c) * z / (rowSum[w] * ctx[c])) }
	// M and Mᵀ come from the same list of pairs.
	build := func(transpose bool) *csr {
		cnt := make([]int, n+1)
		for i, k := range keys {
			a, b := int(k>>32), int(uint32(k))
			if pmi(i, a, b) > 0 {
				cnt[pick(transpose, b, a)+1]++
			}
			if a != b && pmi(i, b, a) > 0 {
				cnt[pick(transpose, a, b)+1]++
			}
		}
		for r := 0; r < n; r++ {
			cnt[r+1] += cnt[r]
		}
		s := &csr{n: n, rowPtr: slices.Clone(cnt), col: make([]int32, cnt[n]), val: make([]float64, cnt[n])}
		put := func(r, c int, v float64) {
			s.col[cnt[r]], s.val[cnt[r]] = int32(c), v
			cnt[r]++
		}
		for i, k := range keys {
			a, b := int(k>>32), int(uint32(k))
			if v := pmi(i, a, b); v > 0 {
				put(pick(transpose, b, a), pick(transpose, a, b), v)
			}
			if v := pmi(i, b, a); a != b && v > 0 {
				put(pick(transpose, a, b), pick(transpose, b, a), v)
			}
		}
		return s
	}
	return build(false), build(true)
}

// pick returns x when t is set, else y.
func pick(t bool, x, y int) int {
	if t {
		return x
	}
	return y
}

// orthonormalize replaces the columns of the n×l row-major matrix a by an
// orthonormal basis of their span, n ≥ l, by Cholesky QR (Q = Y·R⁻¹ with
// RᵀR = YᵀY: only matrix products), or by Householder QR where YᵀY is
// ill-conditioned. Cholesky QR loses orthogonality in proportion to
// cond(YᵀY) times the rounding unit (Yamamoto, Nakatsukasa, Yanagisawa &
// Fukaya 2015, "Roundoff error analysis of the CholeskyQR2 algorithm",
// ETNA), at most 1e8·2⁻⁵³ ≈ 1e-8 below the threshold used, far below what
// a starting point of training needs.
func orthonormalize(a []float64, n, l int) {
	y := mat.NewDense(n, l, a)
	var ch mat.Cholesky
	var rinv mat.TriDense
	if !ch.Factorize(gram(y)) || ch.Cond() > 1e8 || rinvOf(&ch, &rinv) != nil {
		householderQR(a, n, l)
		return
	}
	var rd, q mat.Dense
	rd.CloneFrom(&rinv) // a general product is blocked and parallel, a triangular one not
	q.Mul(y, &rd)
	copy(a, q.RawMatrix().Data)
}

// gram returns yᵀy.
func gram(y *mat.Dense) *mat.SymDense {
	var g mat.Dense
	g.Mul(y.T(), y) // faster than a symmetric rank-k update in gonum
	_, l := y.Dims()
	s := mat.NewSymDense(l, nil)
	for i := range l {
		for j := i; j < l; j++ {
			s.SetSym(i, j, (g.At(i, j)+g.At(j, i))/2)
		}
	}
	return s
}

// rinvOf sets rinv to R⁻¹ of the Cholesky factor RᵀR.
func rinvOf(ch *mat.Cholesky, rinv *mat.TriDense) error {
	var r mat.TriDense
	ch.UTo(&r)
	return rinv.InverseTri(&r)
}

// householderQR is orthonormalize by Householder QR (LAPACK's dgeqrf and
// dorgqr).
func householderQR(a []float64, n, l int) {
	g := blas64.General{Rows: n, Cols: l, Stride: l, Data: a}
	tau := make([]float64, l)
	work := make([]float64, 1)
	lapack64.Geqrf(g, tau, work, -1)
	work = make([]float64, int(work[0]))
	lapack64.Geqrf(g, tau, work, len(work))
	lapack64.Orgqr(g, tau, work[:1], -1)
	work = make([]float64, max(len(work), int(work[0])))
	lapack64.Orgqr(g, tau, work, len(work))
}

// truncatedSVD returns the n×dim matrix U·Σ^ppmiPower of the top dim
// singular triplets of the n×n matrix m (mt its transpose), row-major, by
// randomized SVD. It needs n ≥ dim.
func truncatedSVD(m, mt *csr, dim int, seed uint64, threads int) []float64 {
	n := m.n
	l := min(n, dim+svdOversample)
	rng := rand.New(rand.NewPCG(seed, seed^0x2545f4914f6cdd1d))
	x := make([]float64, n*l)
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	y := make([]float64, n*l)
	m.mulDense(x, y, l, threads)
	for range svdIterations {
		orthonormalize(y, n, l)
		mt.mulDense(y, x, l, threads)
		orthonormalize(x, n, l)
		m.mulDense(x, y, l, threads)
	}
	orthonormalize(y, n, l) // Q: an orthonormal basis of M's range
	mt.mulDense(y, x, l, threads)
	// B = Qᵀ·M = (Mᵀ·Q)ᵀ; B·Bᵀ = Ub·Σ²·Ubᵀ gives M ≈ (Q·Ub)·Σ·Vᵀ.
	var eig mat.EigenSym
	if !eig.Factorize(gram(mat.NewDense(n, l, x)), true) {
		panic("cnn: the eigen-decomposition of a symmetric matrix failed")
	}
	vals := eig.Values(nil) // ascending
	var ub mat.Dense
	eig.VectorsTo(&ub)
	q := mat.NewDense(n, l, y)
	var u mat.Dense
	u.Mul(q, &ub)
	out := make([]float64, n*dim)
	for j := 0; j < dim; j++ {
		src := l - 1 - j // largest first
		w := math.Pow(math.Sqrt(max(vals[src], 0)), ppmiPower)
		for r := 0; r < n; r++ {
			out[r*dim+j] = u.At(r, src) * w
		}
	}
	return out
}

// InitCooccurrence sets the embedding rows of the most frequent words of the
// training texts ids (encoded with m's vocabulary) to their PPMI-SVD vectors
// (see ppmiWindow), scaled so that the values of the rows set have the
// standard deviation of the random start (uniform in ±0.25: 0.25/√3). PAD,
// UNK, the rarer words and words without a neighbour keep their rows. It
// returns how many rows it set: none when fewer words than Dim occur. The
// same ids and seed give the same table up to rounding (the thread count
// orders the sums).
func (m *Model) InitCooccurrence(ids [][]int32, seed uint64, threads int) int {
	d := m.Config.Dim
	words, row := cooccurWords(ids, m.Config.VocabSize)
	if len(words) < d {
		return 0
	}
	keys, counts := pairCounts(ids, row)
	pm, pmt := ppmiMatrices(len(words), keys, counts)
	vecs := truncatedSVD(pm, pmt, d, seed, threads)
	var ss float64
	var rows []int // rows with a context; the others keep their random start
	for r := range words {
		v := vecs[r*d : (r+1)*d]
		if slices.ContainsFunc(v, func(x float64) bool { return x != 0 }) {
			rows = append(rows, r)
			for _, x := range v {
				ss += x * x
			}
		}
	}
	if len(rows) == 0 {
		return 0
	}
	scale := 0.25 / math.Sqrt(3) / math.Sqrt(ss/float64(len(rows)*d))
	for _, r := range rows {
		dst := m.Emb[int(words[r])*d : int(words[r]+1)*d]
		for j := range dst {
			dst[j] = float32(vecs[r*d+j] * scale)
		}
	}
	m.Invalidate()
	return len(rows)
}

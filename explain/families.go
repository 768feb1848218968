package explain

import (
	"cmp"
	"math"
	"math/rand/v2"
	"slices"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"
)

// Family is a group of a filter's winning windows above its selectivity
// threshold whose slot-score vectors are close: one of the things the
// filter means. The texts are split in the two halves of Selectivity (a
// fixed hash of each text's position in the corpus, so that no text's
// window lies on both sides): families are chosen on the half that chose
// the threshold and measured on the other. On the choosing half they are
// built from its stratified sample of the windows above the threshold (see
// FilterProfile.FamilySample), each distinct n-gram weighted by the number
// of windows it stands for; the clusters whose patterns are equal are one
// family, so that no two families of a filter share a pattern. Each window
// of the other half's sample above the threshold is then placed in the
// family whose centroid is nearest (the rule that places a text's window,
// see Profiles.familyOf), and the share is measured there, on windows that
// took no part in choosing the families or the threshold.
type Family struct {
	Ngrams int `json:"ngrams"` // distinct n-grams of the choosing half's sample in the family
	// Count is Share times the windows above the threshold over both
	// halves (Selectivity.Above), rounded: the estimated number of texts
	// whose winning window is in the family; CountLow and CountHigh are
	// ShareLow and ShareHigh times the same, rounded (all 0 when Share is
	// undefined).
	Count     int          `json:"count"`
	CountLow  int          `json:"count_low"`
	CountHigh int          `json:"count_high"`
	Pattern   string       `json:"pattern"` // e.g. "good|great * service"; "*" marks a wildcard slot
	Slots     []FamilySlot `json:"slots"`
	// Centroid is the weighted mean slot-score vector, raw, never shown;
	// CentroidLogOdds is it in log-odds units (times the filter's
	// VoteScale).
	Centroid        []float64 `json:"-"`
	CentroidLogOdds []float64 `json:"centroid_log_odds"`
	// Members holds the tokens of up to five members, largest weight first.
	Members [][]string `json:"members"`

	// Sampled is the number of the choosing half's sampled windows in the
	// family.
	Sampled int `json:"sampled"`
	// Weight is the estimated number of the choosing half's windows in the
	// family: the sum of its sampled windows' weights (Horvitz–Thompson;
	// exact when every window of that half above the threshold was
	// sampled). It orders the families, largest first.
	Weight float64 `json:"weight"`
	// Measured is the number of the other (measuring) half's sampled
	// windows placed in the family.
	Measured int `json:"measured"`
	// Share is measured on the other half alone: the estimated number of
	// its windows above the threshold placed in the family over the
	// estimated number of all its windows above the threshold
	// (Horvitz–Thompson weights). That half is a random half of the texts
	// standing for them all, so even when every one of its windows above
	// the threshold was sampled its share carries sampling error. Its 95%
	// interval is the percentile interval from resampling each of that
	// half's strata's sample with replacement, the strata sampled whole
	// pooled as one (the families held fixed: they were chosen on the
	// other half), widened where needed to hold the exact interval below
	// (resampling holds each stratum's size fixed, so strata pure in the
	// family carry no variance and the percentile interval alone can be a
	// point), and where the family holds
	// fewer than familyThinCount of the measured windows, or the other
	// families fewer than that, where the percentile interval is too
	// narrow (resampling never draws what it never saw), it is the
	// exact (Clopper–Pearson) interval alone for Share times the sample's
	// effective size (Kish 1965, Survey Sampling) successes of that size,
	// as Korn & Graubard 1998 ("Confidence intervals for proportions with
	// small expected number of positive counts estimated from survey
	// data", Survey Methodology) do for survey proportions (exactShare). A
	// family none of whose measured windows was placed in has Share 0 and
	// ShareHigh 1 − 0.025^(1/n_eff). Share, ShareLow and ShareHigh are NaN
	// (JSON null) when no sampled window of the measuring half lies above
	// the threshold.
	Share     float64 `json:"share"`
	ShareLow  float64 `json:"share_low"`
	ShareHigh float64 `json:"share_high"`
	// Stability is how often two of the family's n-grams fall in the same
	// family again when the choosing half's sample is resampled with
	// replacement and clustered anew (clusters of one pattern joined, as
	// here): in each resample, the share of the family's pairs of n-grams
	// both present whose two n-grams share a family there, each pair
	// weighted by the product of their weights; Stability is the mean of
	// that figure over the resamples holding a pair (a pairwise form of
	// the bootstrap cluster stability of Hennig 2007, "Cluster-wise
	// assessment of cluster stability", Computational Statistics & Data
	// Analysis, which averages a Jaccard coefficient over resamples). It
	// is measured on the half that chose the families, not on the
	// measuring half. Nil for a family of one n-gram.
	//
	// StabilityLow and StabilityHigh bound it with 95% confidence over
	// the Monte Carlo error of its familyStabilityResamples (50)
	// resamples alone, not the sampling error of the texts: the Wilson
	// score interval (Wilson 1927) with the per-resample figures' mean for
	// the proportion, which for figures in [0, 1] uses the largest
	// variance they can have at that mean, μ(1 − μ) (Bhatia & Davis 2000,
	// "A better bound on the variance", Amer. Math. Monthly), so that the
	// interval does not shrink to a point when every resample agrees.
	Stability     *float64 `json:"stability"`
	StabilityLow  *float64 `json:"stability_low"`
	StabilityHigh *float64 `json:"stability_high"`
}

// MarshalJSON writes an undefined share (NaN) and its interval as null.
func (f Family) MarshalJSON() ([]byte, error) {
	type plain Family
	return jsonMarshal(struct {
		plain
		Share     *float64 `json:"share"`
		ShareLow  *float64 `json:"share_low"`
		ShareHigh *float64 `json:"share_high"`
	}{plain(f), finite(f.Share), finite(f.ShareLow), finite(f.ShareHigh)})
}

// FamilySlot describes one slot of a family. A slot is dominant when it is
// among the fewest slots whose positive mean scores add up to at least
// DominantShare of the positive total; the other slots are wildcards. Mean
// is the slot's mean score, raw, never shown; MeanLogOdds is it in
// log-odds units (times the filter's VoteScale).
type FamilySlot struct {
	Slot        int      `json:"slot"`
	Wildcard    bool     `json:"wildcard"`
	Mean        float64  `json:"-"`
	MeanLogOdds float64  `json:"mean_log_odds"`
	Words       []string `json:"words,omitempty"` // most frequent words at a dominant slot
}

// DominantShare is the share of a family's positive slot mass its dominant
// slots carry.
const DominantShare = 0.8

// Resamples of the family statistics.
const (
	familyStabilityResamples = 50
	familyShareResamples     = 200
)

// familyItem is a distinct sampled n-gram above the threshold.
type familyItem struct {
	key     string
	tokens  []string
	slots   []float64
	weight  float64
	sampled int
	// words numbers the tokens: equal tokens, equal numbers (internWords).
	words []int32
}

// internWords numbers the items' tokens (familyItem.words) unless they are
// numbered already, and returns a tally for as many numbers.
func internWords(items []familyItem) *wordTally {
	var nw int32
	if len(items) > 0 && items[0].words != nil {
		for _, it := range items {
			for _, x := range it.words {
				nw = max(nw, x+1)
			}
		}
		return &wordTally{weight: make([]float64, nw), seen: make([]bool, nw)}
	}
	index := map[string]int32{}
	for i := range items {
		items[i].words = make([]int32, len(items[i].tokens))
		for s, t := range items[i].tokens {
			x, ok := index[t]
			if !ok {
				x = int32(len(index))
				index[t] = x
			}
			items[i].words[s] = x
		}
	}
	return &wordTally{weight: make([]float64, len(index)), seen: make([]bool, len(index))}
}

// wordTally adds up weights by word number (topWordsAt); between uses its
// weights are all 0 and no word is seen.
type wordTally struct {
	weight []float64
	seen   []bool
	order  []int32
}

// buildFamilies clusters the choosing half's sampled windows of filter g
// at or above theta (see famSample), joins the clusters that read the
// same (mergeSamePattern), describes each family and measures its share on
// the other half's sampled windows at or above theta; above is the number
// of windows at or above theta over both halves.
func buildFamilies(st *SlotTable, g int, fs *famSample, theta float32, cut float64, seed uint64, above int) []Family {
	ws, m := fs.above(theta, 0)
	if len(ws) == 0 {
		return nil
	}
	var items []familyItem
	index := map[string]int{}
	for _, w := range ws {
		i, ok := index[w.key]
		if !ok {
			i = len(items)
			index[w.key] = i
			items = append(items, newFamilyItem(st, g, w.key))
		}
		items[i].weight += w.weight
		items[i].sampled++
	}
	weights := make([]float64, len(items))
	vecs := make([][]float64, len(items))
	for i, it := range items {
		weights[i], vecs[i] = it.weight, it.slots
	}
	var scratch upgmaScratch
	scratch.keepDistances(vecs)
	labels := mergeSamePattern(items, weights, scratch.cut(vecs, weights, cut))
	// Per cell of the choosing half, the item of every sampled window (−1
	// below the threshold), for resampling.
	strata := make([][]int, famStrata)
	for j := range famStrata {
		for _, it := range fs.items[j] {
			k := -1
			if it.act >= theta {
				k = index[it.key]
			}
			strata[j] = append(strata[j], k)
		}
	}
	rng := rand.New(rand.NewPCG(seed, uint64(g)))
	fams := describeFamilies(items, labels)
	familyStability(fams, items, labels, vecs, weights, cut, func(dst []float64) { resampleCells(dst, strata, fs.n[:famStrata], m[:famStrata], false, rng) }, &scratch)
	slices.SortStableFunc(fams, func(x, y Family) int { return cmp.Compare(y.Weight, x.Weight) })
	measureFamilies(st, g, fs, theta, fams, above, rand.New(rand.NewPCG(seed, uint64(g)^0x6d656173757265)))
	return fams
}

// resampleCells adds to dst (cleared first), for every sampled window of
// the cells whose items (−1 below the threshold) ks holds, its cell's
// weight n/m to its item's entry, each cell's sample drawn again with
// replacement. With pool set, the cells sampled whole are drawn again as
// one, with replacement as well: their windows stand for the windows of
// other texts like them, so they carry sampling error all the same, and
// as strata they would hide it (a cell of one window always draws it
// again); the texts being drawn at random, how many of their windows fall
// in each such cell is itself random, so they are resampled as the simple
// random sample they are (Efron 1979, "Bootstrap methods: another look
// at the jackknife", Annals of Statistics).
func resampleCells(dst []float64, cells [][]int, n, m []int, pool bool, rng *rand.Rand) {
	clear(dst)
	var whole []int
	for j, ks := range cells {
		if len(ks) == 0 {
			continue
		}
		if pool && m[j] == n[j] {
			whole = append(whole, ks...)
			continue
		}
		w := float64(n[j]) / float64(m[j])
		for range ks {
			if k := ks[rng.IntN(len(ks))]; k >= 0 {
				dst[k] += w
			}
		}
	}
	for range whole {
		if k := whole[rng.IntN(len(whole))]; k >= 0 {
			dst[k]++
		}
	}
}

// measureFamilies places each of the measuring half's sampled windows at
// or above theta in the nearest family (nearestFamily) and sets the
// families' Measured, Share with its interval and Count with its interval
// (see Family).
func measureFamilies(st *SlotTable, g int, fs *famSample, theta float32, fams []Family, above int, rng *rand.Rand) {
	ws, m := fs.above(theta, 1)
	nan := math.NaN()
	for l := range fams {
		fams[l].Share, fams[l].ShareLow, fams[l].ShareHigh = nan, nan, nan
	}
	if len(ws) == 0 {
		return
	}
	famOf := map[string]int{}
	for _, w := range ws {
		if _, ok := famOf[w.key]; !ok {
			famOf[w.key] = nearestFamily(fams, newFamilyItem(st, g, w.key).slots)
		}
	}
	// Per cell of the measuring half, the family of every sampled window
	// (−1 below the threshold).
	cells := make([][]int, famStrata)
	for j := range famStrata {
		for _, it := range fs.items[famStrata+j] {
			k := -1
			if it.act >= theta {
				k = famOf[it.key]
			}
			cells[j] = append(cells[j], k)
		}
	}
	measureShares(fams, cells, fs.n[famStrata:], m[famStrata:], familyThinCount, true, rng)
	for l := range fams {
		f := &fams[l]
		if math.IsNaN(f.Share) {
			f.Count, f.CountLow, f.CountHigh = 0, 0, 0 // int(NaN) is no number
			continue
		}
		a := float64(above)
		f.Count = int(math.Round(f.Share * a))
		f.CountLow, f.CountHigh = int(math.Round(f.ShareLow*a)), int(math.Round(f.ShareHigh*a))
	}
}

// familyThinCount is the number of a family's measured windows, or of the
// measured windows outside it, below which its share takes the exact
// interval (see Family), the thinCount of cnn's F1 intervals
// (cnn/metrics_exact.go), where the percentile bootstrap is too narrow in
// the same way: with about 4 of 200 measured windows in a family it covers
// the share in about 91% of samples (TestFamilyShareCoverageThin).
const familyThinCount = 10

// measureShares sets the families' Measured, Share, ShareLow and ShareHigh
// from cells, per stratum of the measuring half the family of each of its
// sampled windows (−1 below the threshold), n and m the strata's window
// counts and sample sizes: the share is the Horvitz–Thompson estimate, its
// interval the 95% percentile interval of familyShareResamples resamples
// of every stratum's sample with replacement (the strata sampled whole
// pooled, see resampleCells) joined with (the hull of) the exact interval
// in Kish's effective size (exactShare), or, where the family holds
// fewer than thin measured windows or the others hold fewer than thin, the
// exact interval alone. Without floor (for the tests' older rules) the
// percentile interval is not joined with the exact one. At least one
// window lies above the threshold.
func measureShares(fams []Family, cells [][]int, n, m []int, thin int, floor bool, rng *rand.Rand) {
	weights := make([]float64, len(fams))
	var total, sq float64
	measured := 0
	for j, ks := range cells {
		for _, k := range ks {
			if k < 0 {
				continue
			}
			w := float64(n[j]) / float64(m[j])
			weights[k] += w
			fams[k].Measured++
			measured++
			total += w
			sq += w * w
		}
	}
	shares := make([][]float64, len(fams))
	rw := make([]float64, len(fams))
	for range familyShareResamples {
		resampleCells(rw, cells, n, m, true, rng)
		var t float64
		for _, w := range rw {
			t += w
		}
		if t == 0 {
			continue
		}
		for l, w := range rw {
			shares[l] = append(shares[l], w/t)
		}
	}
	nEff := total * total / sq
	for l := range fams {
		f := &fams[l]
		f.Share = weights[l] / total
		f.ShareLow, f.ShareHigh = exactShare(f.Share, nEff)
		if f.Measured >= thin && measured-f.Measured >= thin {
			if !floor {
				f.ShareLow, f.ShareHigh = f.Share, f.Share
			}
			// The resampling holds each stratum's size fixed, so strata
			// pure in the family (all or none of their windows in it)
			// carry no variance there, although which texts fell in the
			// measuring half is random: the interval is at least the
			// exact one, the hull of the two.
			lo, hi := percentileInterval(shares[l], 0.95)
			f.ShareLow, f.ShareHigh = min(f.ShareLow, lo), max(f.ShareHigh, hi)
		}
	}
}

// exactShare is the 95% Clopper–Pearson interval (Clopper & Pearson 1934)
// of a share p estimated from weighted windows of effective size nEff
// (Kish 1965, Survey Sampling: (Σw)²/Σw²), taken as p·nEff successes of
// nEff as Korn & Graubard 1998 ("Confidence intervals for proportions with
// small expected number of positive counts estimated from survey data",
// Survey Methodology) do for survey proportions (without their
// degrees-of-freedom adjustment: the strata are many and the design's
// degrees of freedom are not tracked). For p = 0 its upper bound is
// 1 − 0.025^(1/nEff), for p = 1 its lower bound 0.025^(1/nEff); it is no
// point while nEff is finite.
func exactShare(p, nEff float64) (lo, hi float64) {
	const a = 0.025
	x := p * nEff
	lo, hi = 0, 1
	if x > 0 {
		lo = distuv.Beta{Alpha: x, Beta: nEff - x + 1}.Quantile(a)
	}
	if x < nEff {
		hi = distuv.Beta{Alpha: x + 1, Beta: nEff - x}.Quantile(1 - a)
	}
	return min(lo, p), max(hi, p)
}

func newFamilyItem(st *SlotTable, g int, key string) familyItem {
	w := len(key) / 4
	it := familyItem{key: key, tokens: make([]string, w), slots: make([]float64, w)}
	for s := 0; s < w; s++ {
		k := key[4*s:]
		id := int32(uint32(k[0]) | uint32(k[1])<<8 | uint32(k[2])<<16 | uint32(k[3])<<24)
		it.tokens[s] = wordOf(st.m, id)
		it.slots[s] = float64(st.SlotScore(g, s, id))
	}
	return it
}

// upgmaCut clusters the weighted points x by average linkage (UPGMA: Sokal
// & Michener 1958, "A statistical method for evaluating systematic
// relationships", Univ. Kansas Sci. Bull.) on Euclidean distance, a
// cluster's weight being the sum of its points' weights (so a point of
// weight w acts as w identical windows), and cuts the tree where the
// average distance between merged clusters exceeds cut times the weighted
// mean norm of the points. The tree is built with the nearest-neighbour
// chain (Murtagh 1983, "A survey of recent advances in hierarchical
// clustering algorithms", The Computer Journal), which average linkage
// allows because it is reducible; distances are updated with the
// Lance–Williams formula. It returns each point's cluster label (0, 1, … in
// order of first point). Points with weight 0 get label −1.
func upgmaCut(x [][]float64, w []float64, cut float64) []int {
	return new(upgmaScratch).cut(x, w, cut)
}

// upgmaScratch holds upgmaCut's buffers, reused over the resamples of one
// filter.
type upgmaScratch struct {
	d, size       []float64
	live          []int32
	parent, chain []int
	merges        []merge
	// all, when set by keepDistances, holds the distances between every
	// two of the n points (n×n), which resamples reuse: only the weights
	// change.
	all []float64
	n   int
}

// keepDistances computes the distances between every two points of x once,
// for the cuts that follow on the same points.
func (u *upgmaScratch) keepDistances(x [][]float64) {
	n := len(x)
	u.all, u.n = grow(u.all, n*n), n
	for a := 0; a < n; a++ {
		u.all[a*n+a] = 0
		for b := a + 1; b < n; b++ {
			v := dist(x[a], x[b])
			u.all[a*n+b], u.all[b*n+a] = v, v
		}
	}
}

// distances fills d (k×k) with the distances between the points idx of x.
func (u *upgmaScratch) distances(d []float64, x [][]float64, idx []int) {
	k := len(idx)
	if u.all != nil && u.n == len(x) {
		n := u.n
		for a, i := range idx {
			row, src := d[a*k:(a+1)*k], u.all[i*n:(i+1)*n]
			for b, j := range idx {
				row[b] = src[j]
			}
			row[a] = 0
		}
		return
	}
	for a := 0; a < k; a++ {
		for b := a + 1; b < k; b++ {
			v := dist(x[idx[a]], x[idx[b]])
			d[a*k+b], d[b*k+a] = v, v
		}
	}
}

func (u *upgmaScratch) cut(x [][]float64, w []float64, cut float64) []int {
	n := len(x)
	labels := make([]int, n)
	var idx []int // the points taking part
	var meanNorm, total float64
	for i := range x {
		labels[i] = -1
		if w[i] > 0 {
			idx = append(idx, i)
			meanNorm += w[i] * norm(x[i])
			total += w[i]
		}
	}
	if len(idx) == 0 {
		return labels
	}
	limit := cut * meanNorm / total
	k := len(idx)
	u.d = grow(u.d, k*k)
	d := u.d
	u.distances(d, x, idx)
	u.parent = grow(u.parent, k)
	parent := u.parent
	for i := range parent {
		parent[i] = i
	}
	for _, mg := range u.nnChain(d, k, w, idx) {
		if mg.d <= limit {
			union(parent, mg.a, mg.b)
		}
	}
	next := map[int]int{}
	for a := 0; a < k; a++ {
		r := find(parent, a)
		if _, ok := next[r]; !ok {
			next[r] = len(next)
		}
		labels[idx[a]] = next[r]
	}
	return labels
}

type merge struct {
	a, b int
	d    float64
}

// nnChain returns the merges of the average-linkage tree over k clusters
// with distance matrix d (k×k, overwritten) and weights w[idx[i]].
//
// The diagonal holds +Inf, which never wins a nearest-neighbour search
// (the comparison is strict). The searches and the updates walk the list of
// the clusters still alive, in increasing order (so that ties go to the
// first, as in a scan of the whole row), and a merged-away cluster's row
// and column are left as they are.
func (u *upgmaScratch) nnChain(d []float64, k int, w []float64, idx []int) []merge {
	u.size, u.live = grow(u.size, k), grow(u.live, k)
	size, live := u.size, u.live
	for i := range size {
		size[i], live[i] = w[idx[i]], int32(i)
		d[i*k+i] = math.Inf(1)
	}
	merges, chain := u.merges[:0], u.chain[:0]
	for len(live) > 1 {
		if len(chain) == 0 {
			chain = append(chain, int(live[0]))
		}
		a := chain[len(chain)-1]
		prev := -1
		if len(chain) > 1 {
			prev = chain[len(chain)-2]
		}
		// Nearest alive neighbour of a; the previous link wins ties, so
		// the chain cannot cycle.
		b, bd := prev, math.Inf(1)
		if prev >= 0 {
			bd = d[a*k+prev]
		}
		row := d[a*k : (a+1)*k]
		for _, j := range live {
			if v := row[j]; v < bd {
				b, bd = int(j), v
			}
		}
		if b != prev {
			chain = append(chain, b)
			continue
		}
		chain = chain[:len(chain)-2]
		merges = append(merges, merge{a: a, b: b, d: bd})
		na, nb := size[a], size[b]
		rb := d[b*k : (b+1)*k]
		at := -1
		for x, j32 := range live {
			j := int(j32)
			if j == b {
				at = x
			}
			if j != a && j != b {
				v := (na*row[j] + nb*rb[j]) / (na + nb)
				row[j], d[j*k+a] = v, v
			}
		}
		size[a] += nb
		live = slices.Delete(live, at, at+1)
	}
	u.merges, u.chain = merges, chain
	return merges
}

// grow returns s resliced to n elements, reallocated when too short.
func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

func find(parent []int, a int) int {
	for parent[a] != a {
		parent[a] = parent[parent[a]]
		a = parent[a]
	}
	return a
}

func union(parent []int, a, b int) {
	ra, rb := find(parent, a), find(parent, b)
	if ra < rb {
		parent[rb] = ra
	} else {
		parent[ra] = rb
	}
}

func norm(v []float64) float64 {
	var s float64
	for _, x := range v {
		s += x * x
	}
	return math.Sqrt(s)
}

func dist(a, b []float64) float64 {
	var s float64
	for i, v := range a {
		x := v - b[i]
		s += x * x
	}
	return math.Sqrt(s)
}

// describeFamilies makes one Family per label.
func describeFamilies(items []familyItem, labels []int) []Family {
	w := make([]float64, len(items))
	for i, it := range items {
		w[i] = it.weight
	}
	groups := groupsOf(labels)
	out := make([]Family, len(groups))
	tally := internWords(items)
	for l, ms := range groups {
		out[l] = describeFamily(items, w, ms, tally)
	}
	return out
}

// groupsOf is the members of each label (labels 0, 1, …; −1 is no label).
func groupsOf(labels []int) [][]int {
	nf := 0
	for _, l := range labels {
		nf = max(nf, l+1)
	}
	groups := make([][]int, nf)
	for i, l := range labels {
		if l >= 0 {
			groups[l] = append(groups[l], i)
		}
	}
	return groups
}

// familyLook is how a group of n-grams reads: its weighted centroid, its
// dominant slots (see FamilySlot), the most frequent words at each and
// the pattern they make.
type familyLook struct {
	weight   float64
	centroid []float64
	dominant []bool
	words    [][]string // at the dominant slots, nil elsewhere
	pattern  string
}

// lookOf is how the members ms of items read with item weights w; it sorts
// ms by weight, largest first (stable). Preconditions: ms is not empty, its
// weights add up to more than 0, and tally is internWords's for items.
func lookOf(items []familyItem, w []float64, ms []int, tally *wordTally) familyLook {
	slices.SortStableFunc(ms, func(a, b int) int { return cmp.Compare(w[b], w[a]) })
	n := len(items[ms[0]].slots)
	lk := familyLook{centroid: make([]float64, n), dominant: make([]bool, n), words: make([][]string, n)}
	for _, i := range ms {
		lk.weight += w[i]
	}
	for _, i := range ms {
		for s, v := range items[i].slots {
			lk.centroid[s] += v * w[i] / lk.weight
		}
	}
	order := make([]int, n)
	var pos float64
	for s := range order {
		order[s] = s
		pos += max(lk.centroid[s], 0)
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(lk.centroid[b], lk.centroid[a]) })
	var acc float64
	for _, s := range order {
		if lk.centroid[s] <= 0 || (pos > 0 && acc >= DominantShare*pos) {
			break
		}
		lk.dominant[s] = true
		acc += lk.centroid[s]
	}
	parts := make([]string, n)
	for s := range n {
		parts[s] = "*"
		if lk.dominant[s] {
			lk.words[s] = tally.topWordsAt(items, w, ms, s, 3)
			parts[s] = strings.Join(lk.words[s], "|")
		}
	}
	lk.pattern = strings.Join(parts, " ")
	return lk
}

// mergeSamePattern joins the clusters of labels (labels 0, 1, …; −1 for
// an item left out) that read the same: whose patterns (lookOf, with item
// weights w) are equal. A pattern is all a reader is shown of a family,
// and two clusters apart only at their wildcard slots (slots that carry
// little of their score) would be the same family listed twice, with its
// share split between them; joined, the family reads as it is again, and
// the check is repeated until every pattern differs. It returns the new
// labels, 0, 1, … in order of first item; it leaves labels as it is.
func mergeSamePattern(items []familyItem, w []float64, labels []int) []int {
	out := slices.Clone(labels)
	tally := internWords(items)
	for {
		groups := groupsOf(out)
		first := map[string]int{}
		to := make([]int, len(groups))
		joined := false
		for l, ms := range groups {
			p := lookOf(items, w, slices.Clone(ms), tally).pattern
			if f, ok := first[p]; ok {
				to[l], joined = f, true
				continue
			}
			first[p], to[l] = l, l
		}
		if !joined {
			return out
		}
		next := map[int]int{}
		for i, l := range out {
			if l < 0 {
				continue
			}
			r := to[l]
			if _, ok := next[r]; !ok {
				next[r] = len(next)
			}
			out[i] = next[r]
		}
	}
}

func describeFamily(items []familyItem, w []float64, ms []int, tally *wordTally) Family {
	lk := lookOf(items, w, ms, tally)
	f := Family{Ngrams: len(ms), Centroid: lk.centroid, Slots: make([]FamilySlot, len(lk.centroid)),
		Weight: lk.weight, Pattern: lk.pattern}
	for _, i := range ms {
		f.Sampled += items[i].sampled
	}
	for s := range f.Slots {
		f.Slots[s] = FamilySlot{Slot: s, Wildcard: !lk.dominant[s], Mean: lk.centroid[s], Words: lk.words[s]}
	}
	for _, i := range ms[:min(5, len(ms))] {
		f.Members = append(f.Members, items[i].tokens)
	}
	return f
}

// topWordsAt returns the k words of largest weight (item weights w) at
// slot s among the members; ties keep the order of first appearance.
func (t *wordTally) topWordsAt(items []familyItem, w []float64, ms []int, s, k int) []string {
	order := t.order[:0]
	for _, i := range ms {
		x := items[i].words[s]
		if !t.seen[x] {
			t.seen[x] = true
			order = append(order, x)
		}
		t.weight[x] += w[i]
	}
	// The k largest, an earlier word winning a tie (as a stable sort).
	top := make([]int, 0, k+1) // indexes into order
	for o, x := range order {
		at := len(top)
		for at > 0 && t.weight[order[top[at-1]]] < t.weight[x] {
			at--
		}
		if at < k {
			top = slices.Insert(top, at, o)
			top = top[:min(len(top), k)]
		}
	}
	out := make([]string, len(top))
	for j, o := range top {
		x := order[o]
		for _, i := range ms {
			if items[i].words[s] == x {
				out[j] = items[i].tokens[s]
				break
			}
		}
	}
	for _, x := range order {
		t.weight[x], t.seen[x] = 0, false
	}
	t.order = order
	return out
}

// familyStability clusters resampled weights anew (vecs are the items'
// slot scores), joins the clusters that read the same as buildFamilies
// does (mergeSamePattern), and finds, in each resample, the share of a
// family's pairs of n-grams both present there that share a family there,
// each pair weighted by the product of their weights; a family's Stability
// is the mean of those shares over the resamples holding one of its pairs,
// with its Monte Carlo interval (stabilityInterval).
func familyStability(fams []Family, items []familyItem, labels []int, vecs [][]float64, weights []float64, cut float64, resample func([]float64), scratch *upgmaScratch) {
	n := len(labels)
	rw := make([]float64, n)
	// Only pairs within a family count: walk each family's members, in
	// increasing order (so that the sums below add in the order of i, j).
	members := make([][]int, len(fams))
	for i, l := range labels {
		if l >= 0 {
			members[l] = append(members[l], i)
		}
	}
	sum := make([]float64, len(fams))
	held := make([]int, len(fams))
	for range familyStabilityResamples {
		resample(rw)
		rl := mergeSamePattern(items, rw, scratch.cut(vecs, rw, cut))
		for l, ms := range members {
			var num, den float64
			for x, i := range ms {
				if rl[i] < 0 {
					continue
				}
				for _, j := range ms[x+1:] {
					if rl[j] < 0 {
						continue
					}
					pw := weights[i] * weights[j]
					den += pw
					if rl[i] == rl[j] {
						num += pw
					}
				}
			}
			if den > 0 {
				sum[l] += num / den
				held[l]++
			}
		}
	}
	for l := range fams {
		if held[l] > 0 {
			s := sum[l] / float64(held[l])
			lo, hi := stabilityInterval(s, held[l])
			fams[l].Stability, fams[l].StabilityLow, fams[l].StabilityHigh = &s, &lo, &hi
		}
	}
}

// stabilityInterval is the 95% Wilson score interval (Wilson 1927) around
// mean, the mean of r figures in [0, 1], with the variance bound μ(1 − μ)
// of such figures (Bhatia & Davis 2000): the μ with (mean − μ)² ≤
// z²·μ(1 − μ)/r. It holds mean.
func stabilityInterval(mean float64, r int) (lo, hi float64) {
	const z = 1.959963984540054 // the standard normal's 97.5% quantile
	nn := float64(r)
	den := 1 + z*z/nn
	mid := (mean + z*z/(2*nn)) / den
	half := z / den * math.Sqrt(max(mean*(1-mean), 0)/nn+z*z/(4*nn*nn))
	return max(0, min(mid-half, mean)), min(1, max(mid+half, mean))
}

// percentileInterval returns the (1−level)/2 and (1+level)/2 empirical
// quantiles of xs (nearest rank), or NaN, NaN without values.
func percentileInterval(xs []float64, level float64) (lo, hi float64) {
	if len(xs) == 0 {
		return math.NaN(), math.NaN()
	}
	s := slices.Clone(xs)
	slices.Sort(s)
	at := func(q float64) float64 {
		i := int(math.Ceil(q*float64(len(s)))) - 1
		return s[min(max(i, 0), len(s)-1)]
	}
	return at((1 - level) / 2), at((1 + level) / 2)
}

// familyOf returns the index of the family of filter g whose centroid is
// nearest (Euclidean) to the slot scores (nearestFamily), or −1 when the
// activation is below the filter's selectivity threshold or the filter has
// no families.
func (p *Profiles) familyOf(g int, slots []float64, act float64) int {
	if g >= len(p.Filters) {
		return -1
	}
	pr := &p.Filters[g]
	if act < pr.Selectivity.Threshold || len(pr.Families) == 0 || len(pr.Families[0].Centroid) != len(slots) {
		return -1
	}
	return nearestFamily(pr.Families, slots)
}

// nearestFamily returns the index of the family whose centroid is nearest
// (Euclidean) to the slot scores, the first on a tie; −1 without families.
// It places a text's window (Profiles.familyOf) and the measuring half's
// windows (measureFamilies) alike.
func nearestFamily(fams []Family, slots []float64) int {
	best, bd := -1, 0.0
	for k, fam := range fams {
		var d float64
		for s, v := range slots {
			x := v - fam.Centroid[s]
			d += x * x
		}
		if best < 0 || d < bd {
			best, bd = k, d
		}
	}
	return best
}

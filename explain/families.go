package explain

import (
	"cmp"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
)

// Family is a group of a filter's winning windows above its selectivity
// threshold whose slot-score vectors are close: one of the things the
// filter means. Families are built from the stratified sample of the
// windows above the threshold (see FilterProfile.FamilySample), each
// distinct n-gram weighted by the number of windows it stands for; the
// clusters whose patterns are equal are one family, so that no two
// families of a filter share a pattern.
type Family struct {
	Ngrams int `json:"ngrams"` // distinct n-grams sampled in the family
	// Count is Weight rounded: the estimated number of texts whose winning
	// window is in the family.
	Count   int          `json:"count"`
	Pattern string       `json:"pattern"` // e.g. "good|great * service"; "*" marks a wildcard slot
	Slots   []FamilySlot `json:"slots"`
	// Centroid is the weighted mean slot-score vector, raw, never shown;
	// CentroidLogOdds is it in log-odds units (times the filter's
	// VoteScale).
	Centroid        []float64 `json:"-"`
	CentroidLogOdds []float64 `json:"centroid_log_odds"`
	// Members holds the tokens of up to five members, largest weight first.
	Members [][]string `json:"members"`

	// Sampled is the number of sampled windows in the family.
	Sampled int `json:"sampled"`
	// Weight is the estimated number of windows in the family: the sum of
	// its sampled windows' weights (Horvitz–Thompson; exact when every
	// window above the threshold was sampled).
	Weight float64 `json:"weight"`
	// Share is Weight over the weight of all windows above the threshold,
	// with a 95% percentile interval from resampling each stratum's sample
	// with replacement (the family's n-grams held fixed; a stratum sampled
	// whole is not resampled, so the interval is the share itself when
	// every window above the threshold was sampled).
	Share     float64 `json:"share"`
	ShareLow  float64 `json:"share_low"`
	ShareHigh float64 `json:"share_high"`
	// Stability is how often two of the family's n-grams fall in the same
	// family again when the windows are resampled with replacement and
	// clustered anew (clusters of one pattern joined, as here): the mean over its pairs of n-grams, each pair
	// weighted by the product of their weights, of the share of resamples
	// holding both that put them together (a pairwise form of the
	// bootstrap cluster stability of Hennig 2007, "Cluster-wise assessment
	// of cluster stability", Computational Statistics & Data Analysis,
	// which uses the Jaccard coefficient). Nil for a family of one n-gram.
	Stability *float64 `json:"stability"`
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
	familyStabilityResamples = 20
	familyShareResamples     = 200
)

// familyItem is a distinct sampled n-gram above the threshold.
type familyItem struct {
	key     string
	tokens  []string
	slots   []float64
	weight  float64
	sampled int
}

// buildFamilies clusters the sampled windows of filter g at or above theta
// (see famSample), joins the clusters that read the same
// (mergeSamePattern) and describes each family.
func buildFamilies(st *SlotTable, g int, fs *famSample, theta float32, cut float64, seed uint64) []Family {
	ws, m := fs.above(theta)
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
	// Per stratum, the item of every sampled window (−1 below the
	// threshold), for resampling.
	var strata [famStrata][]int
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
	// resample draws each stratum's sample again with replacement; with
	// census set, a stratum sampled whole is kept as it is (its windows
	// carry no sampling error).
	resample := func(dst []float64, census bool) {
		clear(dst)
		for j, ks := range strata {
			if len(ks) == 0 {
				continue
			}
			w := float64(fs.n[j]) / float64(m[j])
			if census && m[j] == fs.n[j] {
				for _, k := range ks {
					if k >= 0 {
						dst[k] += w
					}
				}
				continue
			}
			for range ks {
				if k := ks[rng.IntN(len(ks))]; k >= 0 {
					dst[k] += w
				}
			}
		}
	}
	fams := describeFamilies(items, labels)
	familyShares(fams, labels, weights, func(dst []float64) { resample(dst, true) })
	familyStability(fams, items, labels, vecs, weights, cut, func(dst []float64) { resample(dst, false) }, &scratch)
	slices.SortStableFunc(fams, func(x, y Family) int { return cmp.Compare(y.Weight, x.Weight) })
	return fams
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
	alive         []bool
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
// The diagonal and the columns of merged-away clusters hold +Inf, so that
// the nearest-neighbour search is a plain scan of a row: +Inf never wins
// (the comparison is strict), as a skipped entry would not.
func (u *upgmaScratch) nnChain(d []float64, k int, w []float64, idx []int) []merge {
	u.size, u.alive = grow(u.size, k), grow(u.alive, k)
	size, alive := u.size, u.alive
	for i := range size {
		size[i], alive[i] = w[idx[i]], true
		d[i*k+i] = math.Inf(1)
	}
	merges, chain := u.merges[:0], u.chain[:0]
	for left := k; left > 1; {
		if len(chain) == 0 {
			chain = append(chain, slices.Index(alive, true))
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
		for j, v := range d[a*k : (a+1)*k] {
			if v < bd {
				b, bd = j, v
			}
		}
		if b != prev {
			chain = append(chain, b)
			continue
		}
		chain = chain[:len(chain)-2]
		merges = append(merges, merge{a: a, b: b, d: bd})
		na, nb := size[a], size[b]
		for j := 0; j < k; j++ {
			if alive[j] && j != a && j != b {
				v := (na*d[a*k+j] + nb*d[b*k+j]) / (na + nb)
				d[a*k+j], d[j*k+a] = v, v
			}
		}
		size[a] += nb
		alive[b] = false
		for j := 0; j < k; j++ {
			d[j*k+b] = math.Inf(1)
		}
		left--
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
	for l, ms := range groups {
		out[l] = describeFamily(items, w, ms)
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
// ms by weight, largest first (stable). Preconditions: ms is not empty and
// its weights add up to more than 0.
func lookOf(items []familyItem, w []float64, ms []int) familyLook {
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
			lk.words[s] = topWordsAt(items, w, ms, s, 3)
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
	for {
		groups := groupsOf(out)
		first := map[string]int{}
		to := make([]int, len(groups))
		joined := false
		for l, ms := range groups {
			p := lookOf(items, w, slices.Clone(ms)).pattern
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

func describeFamily(items []familyItem, w []float64, ms []int) Family {
	lk := lookOf(items, w, ms)
	f := Family{Ngrams: len(ms), Centroid: lk.centroid, Slots: make([]FamilySlot, len(lk.centroid)),
		Weight: lk.weight, Pattern: lk.pattern}
	for _, i := range ms {
		f.Sampled += items[i].sampled
	}
	f.Count = int(math.Round(f.Weight))
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
func topWordsAt(items []familyItem, w []float64, ms []int, s, k int) []string {
	weight := map[string]float64{}
	var order []string
	for _, i := range ms {
		t := items[i].tokens[s]
		if _, ok := weight[t]; !ok {
			order = append(order, t)
		}
		weight[t] += w[i]
	}
	slices.SortStableFunc(order, func(a, b string) int { return cmp.Compare(weight[b], weight[a]) })
	return order[:min(k, len(order))]
}

// familyShares sets each family's Share and its percentile interval.
func familyShares(fams []Family, labels []int, weights []float64, resample func([]float64)) {
	var total float64
	for _, w := range weights {
		total += w
	}
	shares := make([][]float64, len(fams))
	rw := make([]float64, len(weights))
	for range familyShareResamples {
		resample(rw)
		sums := make([]float64, len(fams))
		var t float64
		for i, w := range rw {
			sums[labels[i]] += w
			t += w
		}
		for l := range fams {
			if t > 0 {
				shares[l] = append(shares[l], sums[l]/t)
			}
		}
	}
	for l := range fams {
		fams[l].Share = fams[l].Weight / total
		fams[l].ShareLow, fams[l].ShareHigh = percentileInterval(shares[l], 0.95)
	}
}

// familyStability clusters resampled weights anew (vecs are the items'
// slot scores), joins the clusters that read the same as buildFamilies
// does (mergeSamePattern), and counts, for every pair of n-grams of a
// family both present in a resample, how often they share a family there;
// a family's figure weights its pairs by the product of their weights.
func familyStability(fams []Family, items []familyItem, labels []int, vecs [][]float64, weights []float64, cut float64, resample func([]float64), scratch *upgmaScratch) {
	n := len(labels)
	together := make([]float64, n*n)
	both := make([]float64, n*n)
	rw := make([]float64, n)
	// Only pairs within a family count: walk each family's members, in
	// increasing order (so that the sums below add in the order of i, j).
	members := make([][]int, len(fams))
	for i, l := range labels {
		if l >= 0 {
			members[l] = append(members[l], i)
		}
	}
	for range familyStabilityResamples {
		resample(rw)
		rl := mergeSamePattern(items, rw, scratch.cut(vecs, rw, cut))
		for _, ms := range members {
			for x, i := range ms {
				if rl[i] < 0 {
					continue
				}
				for _, j := range ms[x+1:] {
					if rl[j] < 0 {
						continue
					}
					both[i*n+j]++
					if rl[i] == rl[j] {
						together[i*n+j]++
					}
				}
			}
		}
	}
	num := make([]float64, len(fams))
	den := make([]float64, len(fams))
	for l, ms := range members {
		for x, i := range ms {
			for _, j := range ms[x+1:] {
				if both[i*n+j] == 0 {
					continue
				}
				pw := weights[i] * weights[j]
				num[l] += pw * together[i*n+j] / both[i*n+j]
				den[l] += pw
			}
		}
	}
	for l := range fams {
		if den[l] > 0 {
			s := num[l] / den[l]
			fams[l].Stability = &s
		}
	}
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
// nearest (Euclidean) to the slot scores, or −1 when the activation is below
// the filter's selectivity threshold or the filter has no families.
func (p *Profiles) familyOf(g int, slots []float64, act float64) int {
	if g >= len(p.Filters) {
		return -1
	}
	pr := &p.Filters[g]
	if act < pr.Selectivity.Threshold || len(pr.Families) == 0 || len(pr.Families[0].Centroid) != len(slots) {
		return -1
	}
	best, bd := -1, 0.0
	for k, fam := range pr.Families {
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

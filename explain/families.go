package explain

import (
	"cmp"
	"math"
	"slices"
	"strings"
)

// Family is a group of a filter's above-threshold n-grams whose slot-score
// vectors are close: one of the things the filter means.
type Family struct {
	Ngrams  int          `json:"ngrams"`  // distinct n-grams in the family
	Count   int          `json:"count"`   // texts whose winning window is one of them
	Pattern string       `json:"pattern"` // e.g. "good|great * service"; "*" marks a wildcard slot
	Slots   []FamilySlot `json:"slots"`
	// Centroid is the count-weighted mean slot-score vector.
	Centroid []float64 `json:"centroid"`
	// Members holds the tokens of up to five members, highest activation first.
	Members [][]string `json:"members"`
}

// FamilySlot describes one slot of a family. A slot is dominant when it is
// among the fewest slots whose positive mean scores add up to at least
// DominantShare of the positive total; the other slots are wildcards.
type FamilySlot struct {
	Slot     int      `json:"slot"`
	Wildcard bool     `json:"wildcard"`
	Mean     float64  `json:"mean"`
	Words    []string `json:"words,omitempty"` // most frequent words at a dominant slot
}

// DominantShare is the share of a family's positive slot mass its dominant
// slots carry.
const DominantShare = 0.8

// families clusters n-grams (distinct, ordered by activation) by their
// slot-score vectors with agglomerative clustering under average linkage
// (UPGMA: Sokal & Michener 1958, "A statistical method for evaluating
// systematic relationships", Univ. Kansas Sci. Bull.) on Euclidean distance,
// updated with the Lance–Williams formula. Merging stops when the smallest
// average distance between clusters exceeds cut times the mean norm of the
// vectors. Ties merge the pair with the lowest indices first, so the result
// is deterministic.
func families(ngrams []Ngram, cut float64) []Family {
	n := len(ngrams)
	if n == 0 {
		return nil
	}
	var meanNorm float64
	for _, g := range ngrams {
		var s float64
		for _, v := range g.Slots {
			s += v * v
		}
		meanNorm += math.Sqrt(s)
	}
	meanNorm /= float64(n)
	limit := cut * meanNorm
	d := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := i + 1; j < n; j++ {
			var s float64
			for k, v := range ngrams[i].Slots {
				x := v - ngrams[j].Slots[k]
				s += x * x
			}
			d[i*n+j], d[j*n+i] = math.Sqrt(s), math.Sqrt(s)
		}
	}
	size := make([]int, n)
	members := make([][]int, n)
	alive := make([]bool, n)
	for i := range size {
		size[i], members[i], alive[i] = 1, []int{i}, true
	}
	for {
		ba, bb, bd := -1, -1, math.Inf(1)
		for a := 0; a < n; a++ {
			if !alive[a] {
				continue
			}
			for b := a + 1; b < n; b++ {
				if alive[b] && d[a*n+b] < bd {
					ba, bb, bd = a, b, d[a*n+b]
				}
			}
		}
		if ba < 0 || bd > limit {
			break
		}
		na, nb := float64(size[ba]), float64(size[bb])
		for k := 0; k < n; k++ {
			if alive[k] && k != ba && k != bb {
				v := (na*d[ba*n+k] + nb*d[bb*n+k]) / (na + nb)
				d[ba*n+k], d[k*n+ba] = v, v
			}
		}
		size[ba] += size[bb]
		members[ba] = append(members[ba], members[bb]...)
		alive[bb] = false
	}
	var out []Family
	for a := 0; a < n; a++ {
		if alive[a] {
			ms := members[a]
			slices.Sort(ms)
			out = append(out, describeFamily(ngrams, ms))
		}
	}
	slices.SortStableFunc(out, func(x, y Family) int { return cmp.Compare(y.Count, x.Count) })
	return out
}

func describeFamily(ngrams []Ngram, ms []int) Family {
	w := len(ngrams[ms[0]].Slots)
	f := Family{Ngrams: len(ms), Centroid: make([]float64, w), Slots: make([]FamilySlot, w)}
	for _, i := range ms {
		f.Count += ngrams[i].Count
	}
	for _, i := range ms {
		for s, v := range ngrams[i].Slots {
			f.Centroid[s] += v * float64(ngrams[i].Count) / float64(f.Count)
		}
	}
	order := make([]int, w)
	var pos float64
	for s := range order {
		order[s] = s
		pos += max(f.Centroid[s], 0)
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(f.Centroid[b], f.Centroid[a]) })
	dominant := make([]bool, w)
	var acc float64
	for _, s := range order {
		if f.Centroid[s] <= 0 || (pos > 0 && acc >= DominantShare*pos) {
			break
		}
		dominant[s] = true
		acc += f.Centroid[s]
	}
	parts := make([]string, w)
	for s := 0; s < w; s++ {
		fs := FamilySlot{Slot: s, Wildcard: !dominant[s], Mean: f.Centroid[s]}
		if dominant[s] {
			fs.Words = topWordsAt(ngrams, ms, s, 3)
			parts[s] = strings.Join(fs.Words, "|")
		} else {
			parts[s] = "*"
		}
		f.Slots[s] = fs
	}
	f.Pattern = strings.Join(parts, " ")
	for _, i := range ms[:min(5, len(ms))] {
		f.Members = append(f.Members, ngrams[i].Tokens)
	}
	return f
}

// topWordsAt returns the k words most frequent (by text count) at slot s
// among the members; ties keep the order of first appearance.
func topWordsAt(ngrams []Ngram, ms []int, s, k int) []string {
	count := map[string]int{}
	var order []string
	for _, i := range ms {
		t := ngrams[i].Tokens[s]
		if _, ok := count[t]; !ok {
			order = append(order, t)
		}
		count[t] += ngrams[i].Count
	}
	slices.SortStableFunc(order, func(a, b string) int { return cmp.Compare(count[b], count[a]) })
	return order[:min(k, len(order))]
}

// familyOf returns the index of the family of filter g whose centroid is
// nearest (Euclidean) to the slot scores, or −1 when the activation is below
// the filter's purity threshold or the filter has no families.
func (p *Profiles) familyOf(g int, slots []float64, act float64) int {
	if g >= len(p.Filters) {
		return -1
	}
	pr := &p.Filters[g]
	if act < pr.Threshold || len(pr.Families) == 0 || len(pr.Families[0].Centroid) != len(slots) {
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

package explain

// Profiles describes every filter of a model over a corpus.
type Profiles struct {
	Filters []Profile `json:"filters"`
}

// Profile describes one filter over a corpus.
type Profile struct {
	Filter    int      `json:"filter"`
	Threshold float64  `json:"threshold"`
	Families  []Family `json:"families"`
}

// Family is a group of a filter's above-threshold n-grams with similar
// slot-score vectors.
type Family struct {
	Centroid []float64 `json:"centroid"`
}

// familyOf returns the index of the family of filter g whose centroid is
// nearest (Euclidean) to the slot scores, or −1 when the activation is below
// the filter's purity threshold or the filter has no families.
func (p *Profiles) familyOf(g int, slots []float64, act float64) int {
	if g >= len(p.Filters) {
		return -1
	}
	pr := &p.Filters[g]
	if act < pr.Threshold || len(pr.Families) == 0 {
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

package cnn

import "fmt"

// MaskedCopy returns a copy of m in which the given global filters are
// masked (their pooled units held at zero) in addition to those m already
// masks: model surgery that removes what a filter contributes to every
// logit, OutW[c][g]·h[g], and nothing else. M itself is never changed; the
// caller saves the copy to a new file. A filter index outside
// 0 … NumFilters−1 is an error naming the valid range.
func (m *Model) MaskedCopy(filters []int) (*Model, error) {
	nf := m.Config.NumFilters()
	for _, g := range filters {
		if g < 0 || g >= nf {
			return nil, fmt.Errorf("cnn: filter %d does not exist: the model has filters 0 … %d", g, nf-1)
		}
	}
	c := m.Clone()
	if c.Masked == nil {
		c.Masked = make([]bool, nf)
	}
	for _, g := range filters {
		c.Masked[g] = true
	}
	return c, nil
}

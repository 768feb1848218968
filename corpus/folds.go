package corpus

import "math/rand/v2"

// Folds divides d into k folds for k-fold cross-validation, stratified by
// label: the examples of each label are shuffled with a seeded generator
// (math/rand/v2 PCG, as SplitThree) and dealt to the folds in turn, each
// label starting where the one before stopped, so fold sizes differ by at
// most one and each label's counts by at most one. The same data, k and
// seed give the same folds; each fold keeps the original example order.
// k must be at least 2.
func (d *Dataset) Folds(k int, seed uint64) []*Dataset {
	if k < 2 {
		panic("corpus: Folds: k must be at least 2")
	}
	byLabel, labels := d.indexByLabel()
	rng := rand.New(rand.NewPCG(seed, seed))
	fold := make([]int, len(d.Examples))
	next := 0
	for _, l := range labels {
		idx := byLabel[l]
		rng.Shuffle(len(idx), func(i, j int) { idx[i], idx[j] = idx[j], idx[i] })
		for _, i := range idx {
			fold[i] = next
			next = (next + 1) % k
		}
	}
	out := make([]*Dataset, k)
	for f := range out {
		out[f] = &Dataset{Path: d.Path}
	}
	for i, e := range d.Examples {
		out[fold[i]].Examples = append(out[fold[i]].Examples, e)
	}
	for _, p := range out {
		p.Labels = uniqueLabels(p.Examples)
	}
	return out
}

// Join returns one dataset holding the examples of parts in order, with
// the path of the first; it is how the folds of Folds other than the dev
// and test ones become a training split.
func Join(parts ...*Dataset) *Dataset {
	out := &Dataset{}
	for i, p := range parts {
		if i == 0 {
			out.Path = p.Path
		}
		out.Examples = append(out.Examples, p.Examples...)
	}
	out.Labels = uniqueLabels(out.Examples)
	return out
}

package corpus

import (
	"math"
	"math/rand/v2"
	"sort"
)

// Texts returns the texts in example order.
func (d *Dataset) Texts() []string {
	out := make([]string, len(d.Examples))
	for i, e := range d.Examples {
		out[i] = e.Text
	}
	return out
}

// Counts returns the number of examples per label.
func (d *Dataset) Counts() map[string]int {
	c := make(map[string]int, len(d.Labels))
	for _, e := range d.Examples {
		c[e.Label]++
	}
	return c
}

// LabelIndex returns, for every example, the index of its label in labels
// (usually the training split's Labels). A label missing from labels is an
// ErrLabel error naming the example's file and line — typically a label
// that occurs only in a separate test file.
func (d *Dataset) LabelIndex(labels []string) ([]int, error) {
	idx := make(map[string]int, len(labels))
	for i, l := range labels {
		idx[l] = i
	}
	out := make([]int, len(d.Examples))
	for i, e := range d.Examples {
		j, ok := idx[e.Label]
		if !ok {
			if e.File != "" {
				return nil, errAt(d.Where(e), 0, ErrLabel, "label %q is not among the training labels %q: add training examples for it, or remove or relabel these examples", e.Label, labels)
			}
			return nil, errAt(d.Path, e.Line, ErrLabel, "label %q is not among the training labels %q: add training examples for it, or remove or relabel these examples", e.Label, labels)
		}
		out[i] = j
	}
	return out, nil
}

// Filter returns a new dataset with the examples for which keep is true.
func (d *Dataset) Filter(keep func(Example) bool) *Dataset {
	out := &Dataset{Path: d.Path}
	for _, e := range d.Examples {
		if keep(e) {
			out.Examples = append(out.Examples, e)
		}
	}
	out.Labels = uniqueLabels(out.Examples)
	return out
}

// Relabel returns a new dataset whose labels are mapped through m: a label
// found in m becomes m[label] (an empty value drops its examples), a label
// absent from m is kept. Example: map the SpamAssassin groups easy-ham-1,
// easy-ham-2, hard-ham-1 to "ham" and spam-1, spam-2 to "spam".
func (d *Dataset) Relabel(m map[string]string) *Dataset {
	out := &Dataset{Path: d.Path}
	for _, e := range d.Examples {
		if to, ok := m[e.Label]; ok {
			if to == "" {
				continue
			}
			e.Label = to
		}
		out.Examples = append(out.Examples, e)
	}
	out.Labels = uniqueLabels(out.Examples)
	return out
}

func uniqueLabels(es []Example) []string {
	seen := map[string]bool{}
	var ls []string
	for _, e := range es {
		if !seen[e.Label] {
			seen[e.Label] = true
			ls = append(ls, e.Label)
		}
	}
	sort.Strings(ls)
	return ls
}

// Split divides d into a training and a test set, stratified by label:
// each label with n examples sends round(testFrac·n) of them to test, but
// always keeps at least one in train. The choice is a seeded shuffle
// (math/rand/v2 PCG), so the same data, fraction and seed give the same
// split. Both halves keep the original example order. testFrac must be
// in [0, 1).
func (d *Dataset) Split(testFrac float64, seed uint64) (train, test *Dataset) {
	if testFrac < 0 || testFrac >= 1 || math.IsNaN(testFrac) {
		panic("corpus: Split: testFrac must be in [0, 1)")
	}
	byLabel := map[string][]int{}
	for i, e := range d.Examples {
		byLabel[e.Label] = append(byLabel[e.Label], i)
	}
	labels := make([]string, 0, len(byLabel))
	for l := range byLabel {
		labels = append(labels, l)
	}
	sort.Strings(labels)
	rng := rand.New(rand.NewPCG(seed, seed))
	inTest := make([]bool, len(d.Examples))
	for _, l := range labels {
		idx := byLabel[l]
		rng.Shuffle(len(idx), func(i, j int) { idx[i], idx[j] = idx[j], idx[i] })
		k := int(math.Round(testFrac * float64(len(idx))))
		if k > len(idx)-1 {
			k = len(idx) - 1
		}
		for _, i := range idx[:k] {
			inTest[i] = true
		}
	}
	train = &Dataset{Path: d.Path}
	test = &Dataset{Path: d.Path}
	for i, e := range d.Examples {
		if inTest[i] {
			test.Examples = append(test.Examples, e)
		} else {
			train.Examples = append(train.Examples, e)
		}
	}
	train.Labels = uniqueLabels(train.Examples)
	test.Labels = uniqueLabels(test.Examples)
	return train, test
}

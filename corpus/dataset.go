package corpus

import (
	"encoding/binary"
	"fmt"
	"hash/fnv"
	"io"
	"math"
	"math/rand/v2"
	"sort"
	"strings"
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
			const fix = "add training examples for it, or remove or relabel these examples"
			if e.File != "" {
				return nil, errAt(d.Where(e), 0, ErrLabel, "label %s is not among the training labels %s: %s", quote(e.Label), quoteList(labels), fix)
			}
			return nil, errAt(d.Path, e.Line, ErrLabel, "label %s is not among the training labels %s: %s", quote(e.Label), quoteList(labels), fix)
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
// always keeps at least one in train. It is SplitThree with no dev share.
// testFrac must be in [0, 1).
func (d *Dataset) Split(testFrac float64, seed uint64) (train, test *Dataset) {
	if testFrac < 0 || testFrac >= 1 || math.IsNaN(testFrac) {
		panic("corpus: Split: testFrac must be in [0, 1)")
	}
	train, _, test = d.SplitThree(0, testFrac, seed)
	return train, test
}

// SplitThree divides d into training, dev and test splits, stratified by
// label: the examples of each label (n of them) are shuffled with a seeded
// generator (math/rand/v2 PCG), the first round(testFrac·n) go to test, the
// next round(devFrac·n) to dev and the rest to training, which always keeps
// at least one (dev gives up examples first, then test). The same data,
// shares and seed give the same splits; the test split does not depend on
// devFrac except through that last rule. Each split keeps the original
// example order. devFrac and testFrac must be in [0, 1).
func (d *Dataset) SplitThree(devFrac, testFrac float64, seed uint64) (train, dev, test *Dataset) {
	for _, f := range []float64{devFrac, testFrac} {
		if f < 0 || f >= 1 || math.IsNaN(f) {
			panic("corpus: SplitThree: shares must be in [0, 1)")
		}
	}
	byLabel, labels := d.indexByLabel()
	rng := rand.New(rand.NewPCG(seed, seed))
	const inTrain, inDev, inTest = 0, 1, 2
	where := make([]int8, len(d.Examples))
	for _, l := range labels {
		idx := byLabel[l]
		rng.Shuffle(len(idx), func(i, j int) { idx[i], idx[j] = idx[j], idx[i] })
		n := len(idx)
		kt := min(int(math.Round(testFrac*float64(n))), n-1)
		kd := min(int(math.Round(devFrac*float64(n))), n-1-kt)
		for _, i := range idx[:kt] {
			where[i] = inTest
		}
		for _, i := range idx[kt : kt+kd] {
			where[i] = inDev
		}
	}
	parts := [3]*Dataset{{Path: d.Path}, {Path: d.Path}, {Path: d.Path}}
	for i, e := range d.Examples {
		p := parts[where[i]]
		p.Examples = append(p.Examples, e)
	}
	for _, p := range parts {
		p.Labels = uniqueLabels(p.Examples)
	}
	return parts[inTrain], parts[inDev], parts[inTest]
}

// indexByLabel returns the indexes of d's examples of each label, in
// example order, and the labels sorted: the draw order of the stratified
// splits (SplitThree, Folds).
func (d *Dataset) indexByLabel() (map[string][]int, []string) {
	byLabel := map[string][]int{}
	for i, e := range d.Examples {
		byLabel[e.Label] = append(byLabel[e.Label], i)
	}
	labels := make([]string, 0, len(byLabel))
	for l := range byLabel {
		labels = append(labels, l)
	}
	sort.Strings(labels)
	return byLabel, labels
}

// Fingerprint identifies the examples of d, their order, texts and labels
// (not where they were read from): the FNV-1a 64-bit hash of each text and
// label, length-prefixed, in hexadecimal. Two datasets with the same
// fingerprint split the same way (SplitThree).
func (d *Dataset) Fingerprint() string {
	h := fnv.New64a()
	var n [8]byte
	put := func(s string) {
		binary.LittleEndian.PutUint64(n[:], uint64(len(s)))
		h.Write(n[:])
		io.WriteString(h, s)
	}
	for _, e := range d.Examples {
		put(e.Text)
		put(e.Label)
	}
	return fmt.Sprintf("%016x", h.Sum64())
}

// LabelWarnings points out labels that are likely mistakes: a label with a
// single example (nothing can be learned from one text) and labels that
// differ only in letter case, such as "BOOKINGS" and "bookings" (surrounding
// white space is already trimmed when reading). The warnings name d.Path.
func (d *Dataset) LabelWarnings() []Warning {
	var out []Warning
	counts := d.Counts()
	for _, l := range d.Labels {
		if counts[l] == 1 {
			out = append(out, Warning{Path: d.Path, Message: fmt.Sprintf(
				"label %s has a single example: nothing can be learned from one text; add examples, or merge it into another label with --relabel", quote(l))})
		}
	}
	first := map[string]string{}
	for _, l := range d.Labels {
		k := strings.ToLower(l)
		if f, ok := first[k]; ok {
			out = append(out, Warning{Path: d.Path, Message: fmt.Sprintf(
				"labels %s and %s differ only in letter case: if they are one label, merge them with --relabel %s", quote(f), quote(l), quote(l+"="+f))})
			continue
		}
		first[k] = l
	}
	return out
}

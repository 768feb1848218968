package corpus

import (
	"reflect"
	"testing"
)

// TestFolds: the folds partition the data, stratified (each label's
// counts per fold differ by at most one, and so do the fold sizes: common
// practice for stratified k-fold cross-validation, no source), the same
// seed gives the same folds, another seed others, and Join puts them back.
func TestFolds(t *testing.T) {
	d := labeledSet(map[string]int{"a": 40, "b": 15, "c": 3, "d": 1})
	for _, k := range []int{2, 3, 10} {
		folds := d.Folds(k, 7)
		if len(folds) != k {
			t.Fatalf("k %d: %d folds", k, len(folds))
		}
		seen := map[string]int{}
		minSize, maxSize := len(d.Examples), 0
		perLabel := map[string][]int{}
		for f, part := range folds {
			minSize, maxSize = min(minSize, len(part.Examples)), max(maxSize, len(part.Examples))
			for i, e := range part.Examples {
				seen[e.Text]++
				if perLabel[e.Label] == nil {
					perLabel[e.Label] = make([]int, k)
				}
				perLabel[e.Label][f]++
				if i > 0 && e.Line < part.Examples[i-1].Line {
					t.Fatalf("k %d: fold %d lost the file order", k, f)
				}
			}
		}
		if len(seen) != len(d.Examples) {
			t.Errorf("k %d: %d distinct examples in the folds, want %d", k, len(seen), len(d.Examples))
		}
		for text, n := range seen {
			if n != 1 {
				t.Errorf("k %d: %q in %d folds", k, text, n)
			}
		}
		if maxSize-minSize > 1 {
			t.Errorf("k %d: fold sizes %d to %d", k, minSize, maxSize)
		}
		for l, c := range perLabel {
			lo, hi := c[0], c[0]
			for _, n := range c {
				lo, hi = min(lo, n), max(hi, n)
			}
			if hi-lo > 1 {
				t.Errorf("k %d: label %s counts per fold %v", k, l, c)
			}
		}
		if !reflect.DeepEqual(folds, d.Folds(k, 7)) {
			t.Errorf("k %d: the same seed gave other folds", k)
		}
		if reflect.DeepEqual(folds, d.Folds(k, 8)) {
			t.Errorf("k %d: seeds 7 and 8 gave the same folds", k)
		}
		if got := Join(folds...); len(got.Examples) != len(d.Examples) || !reflect.DeepEqual(got.Labels, d.Labels) || got.Path != d.Path {
			t.Errorf("k %d: Join gave %d examples, labels %v, path %q", k, len(got.Examples), got.Labels, got.Path)
		}
	}
}

func TestFoldsRejectsK(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("Folds(1) did not panic")
		}
	}()
	labeledSet(map[string]int{"a": 3}).Folds(1, 1)
}

package reviewset

import (
	"bufio"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"telltale/corpus"
)

// File is the set's path under the module root.
const File = "testdata/reviews/amazon_cells_labelled.txt"

// Folds is the number of cross-validation folds, and FoldSeed the seed of
// their stratified draw (corpus.Dataset.Folds).
const (
	Folds    = 10
	FoldSeed = 7
)

// Load reads the set from path. Labels become "negative" and "positive".
func Load(path string) (*corpus.Dataset, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("%s: %w (run `make corpora`)", path, err)
	}
	defer f.Close()
	d := &corpus.Dataset{Path: path}
	sc := bufio.NewScanner(f)
	for line := 1; sc.Scan(); line++ {
		s := strings.TrimRight(sc.Text(), "\r")
		if strings.TrimSpace(s) == "" {
			continue
		}
		cut := strings.LastIndexByte(s, '\t')
		if cut < 0 {
			return nil, fmt.Errorf("%s:%d: no tab before the label: each line is a sentence, a tab and 0 or 1", path, line)
		}
		var label string
		switch strings.TrimSpace(s[cut+1:]) {
		case "0":
			label = "negative"
		case "1":
			label = "positive"
		default:
			return nil, fmt.Errorf("%s:%d: label %q: want 0 or 1", path, line, s[cut+1:])
		}
		text := strings.TrimSpace(s[:cut])
		if text == "" {
			return nil, fmt.Errorf("%s:%d: no sentence before the tab: each line is a sentence, a tab and 0 or 1", path, line)
		}
		d.Examples = append(d.Examples, corpus.Example{Text: text, Label: label, Line: line})
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	d.Labels = []string{"negative", "positive"}
	return d, nil
}

// LoadUnder reads the set under the module root.
func LoadUnder(root string) (*corpus.Dataset, error) {
	return Load(filepath.Join(root, File))
}

// Splits returns rotation k (0 ≤ k < Folds) of the cross-validation:
// fold k is the test split, fold k+1 (mod Folds) the dev split and the
// others, joined in order, the training split.
func Splits(d *corpus.Dataset, k int) (train, dev, test *corpus.Dataset) {
	folds := d.Folds(Folds, FoldSeed)
	var rest []*corpus.Dataset
	for i, f := range folds {
		if i != k && i != (k+1)%Folds {
			rest = append(rest, f)
		}
	}
	return corpus.Join(rest...), folds[(k+1)%Folds], folds[k]
}

package reviewset

import (
	"bufio"
	"encoding/json"
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

// The set's other two sources, Yelp and IMDb sentences (1,000 each, 500
// of each label), as the npm package sentiment 5.0.2 ships them in
// test/fixtures and `make corpora` fetches them.
const (
	YelpFile = "testdata/reviews/yelp.json"
	IMDbFile = "testdata/reviews/imdb.json"
)

// LoadJSON reads one source shipped as a JSON array of {"text", "class"}
// records, class 0 (negative) or 1 (positive). The files end with a record
// with neither text nor class, which is skipped; anywhere else such a
// record is an error. Line is the record's number in the array, from 1.
func LoadJSON(path string) (*corpus.Dataset, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("%s: %w (run `make corpora`)", path, err)
	}
	const fix = "delete it and run `make corpora` to fetch it as sentiment 5.0.2 ships it"
	var recs []json.RawMessage
	if err := json.Unmarshal(b, &recs); err != nil {
		return nil, fmt.Errorf("%s: %w: want a JSON array of {\"text\", \"class\"} records; %s", path, err, fix)
	}
	d := &corpus.Dataset{Path: path, Labels: []string{"negative", "positive"}}
	for i, raw := range recs {
		var r struct {
			Text  string `json:"text"`
			Class *int   `json:"class"`
		}
		if err := json.Unmarshal(raw, &r); err != nil {
			return nil, fmt.Errorf("%s: record %d: %w; %s", path, i+1, err, fix)
		}
		text := strings.TrimSpace(r.Text)
		switch {
		case text == "" && r.Class == nil && i == len(recs)-1:
			continue
		case text == "":
			return nil, fmt.Errorf("%s: record %d: no text; %s", path, i+1, fix)
		case r.Class == nil:
			return nil, fmt.Errorf("%s: record %d: no class; want 0 or 1; %s", path, i+1, fix)
		case *r.Class != 0 && *r.Class != 1:
			return nil, fmt.Errorf("%s: record %d: class %d; want 0 or 1; %s", path, i+1, *r.Class, fix)
		}
		d.Examples = append(d.Examples, corpus.Example{Text: text, Label: d.Labels[*r.Class], Line: i + 1})
	}
	if len(d.Examples) == 0 {
		return nil, fmt.Errorf("%s: no record with text and class; %s", path, fix)
	}
	return d, nil
}

// LoadThreeUnder reads the set's three sources under the module root:
// Amazon, Yelp and IMDb, in that order.
func LoadThreeUnder(root string) ([]*corpus.Dataset, error) {
	amazon, err := LoadUnder(root)
	if err != nil {
		return nil, err
	}
	out := []*corpus.Dataset{amazon}
	for _, f := range []string{YelpFile, IMDbFile} {
		d, err := LoadJSON(filepath.Join(root, f))
		if err != nil {
			return nil, err
		}
		out = append(out, d)
	}
	return out, nil
}

// SplitsOfSources returns rotation k (0 ≤ k < Folds) of a set made of
// several sources: each source's rotation k (Splits), joined in the order
// given, so that every split holds each source in its share. With one
// source it is Splits; with several, each split's Path is the first
// source's folder, since its lines come from several files.
func SplitsOfSources(srcs []*corpus.Dataset, k int) (train, dev, test *corpus.Dataset) {
	var trs, devs, tes []*corpus.Dataset
	for _, s := range srcs {
		tr, dv, te := Splits(s, k)
		trs, devs, tes = append(trs, tr), append(devs, dv), append(tes, te)
	}
	train, dev, test = corpus.Join(trs...), corpus.Join(devs...), corpus.Join(tes...)
	if len(srcs) > 1 {
		dir := filepath.Dir(srcs[0].Path)
		train.Path, dev.Path, test.Path = dir, dir, dir
	}
	return train, dev, test
}

package main

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/reviewset"
)

// load returns the splits of a corpus under the module root, made as the
// tests make them: the demo's dev is 10% of train.csv (seed 1) and its test
// split demo-equal/test.csv (drawn like the training data, as the demo's
// accuracy test reads it); SpamAssassin's test split is 20% of the corpus and dev 10%
// of the rest (seed 1, `telltale train --data`'s defaults); the addresses
// are split by address (loadSOTU). The test split is read only when
// withTest is set.
func load(root, which string, withTest bool) (splits, error) {
	td := filepath.Join(root, "testdata")
	var sp splits
	switch which {
	case "demo":
		d, _, err := corpus.Load(filepath.Join(td, "demo", "train.csv"), corpus.Options{})
		if err != nil {
			return sp, err
		}
		sp.train, sp.dev = d.Split(cnn.DefaultDevFrac, 1)
		if withTest {
			if sp.test, _, err = corpus.Load(filepath.Join(td, "demo-equal", "test.csv"), corpus.Options{}); err != nil {
				return sp, err
			}
		}
		return sp, nil
	case "spam":
		d, _, err := corpus.Load(filepath.Join(td, "spamassassin"), corpus.Options{ReplaceInvalidUTF8: true})
		if err != nil {
			return sp, err
		}
		d = d.MapTexts(corpus.SubjectAndBody).Relabel(map[string]string{"easy-ham-1": "ham", "easy-ham-2": "ham",
			"hard-ham-1": "ham", "spam-1": "spam", "spam-2": "spam"})
		trainAll, test := d.Split(0.2, 1)
		sp.train, sp.dev = trainAll.Split(cnn.DefaultDevFrac, 1)
		if withTest {
			sp.test = test
		}
		return sp, nil
	case "sotu":
		return loadSOTU(filepath.Join(td, "sotu"), withTest)
	}
	return sp, fmt.Errorf("corpus %q: use demo, spam, sotu, reviews, reviews-skew, reviews3 or reviews3-skew", which)
}

// trainShare returns the share of d kept for a learning curve: of each
// label's n texts, n − round((1−share)·n), drawn by corpus.Dataset.Split
// with seed 1 whatever the training seed, so that every candidate and seed
// trains on the same texts and a smaller share's texts lie inside a larger
// one's (Split keeps the tail of one seeded shuffle per label). share 1
// returns d itself.
func trainShare(d *corpus.Dataset, share float64) *corpus.Dataset {
	if share >= 1 {
		return d
	}
	kept, _ := d.Split(1-share, 1)
	return kept
}

// loadRotations returns the corpus's one rotation, or for the reviews
// (internal/reviewset) its ten cross-validation rotations: every text is
// in one rotation's dev split and in another's test split. "reviews" is
// the Amazon sentences, "reviews3" the Amazon, Yelp and IMDb sentences
// cut source by source; "-skew" keeps two in five negative ones (skewed).
func loadRotations(root, which string, withTest bool) ([]rotation, error) {
	var srcs []*corpus.Dataset
	var err error
	switch strings.TrimSuffix(which, "-skew") {
	case "reviews":
		var d *corpus.Dataset
		d, err = reviewset.LoadUnder(root)
		srcs = []*corpus.Dataset{d}
	case "reviews3":
		srcs, err = reviewset.LoadThreeUnder(root)
	default:
		sp, err := load(root, which, withTest)
		return []rotation{{which, sp}}, err
	}
	if err != nil {
		return nil, err
	}
	if strings.HasSuffix(which, "-skew") {
		for i, d := range srcs {
			srcs[i] = skewed(d)
		}
	}
	var out []rotation
	for k := range reviewset.Folds {
		tr, dev, te := reviewset.SplitsOfSources(srcs, k)
		if !withTest {
			te = nil
		}
		out = append(out, rotation{fmt.Sprintf("%s/%d", which, k), splits{tr, dev, te}})
	}
	return out, nil
}

// loadSOTU reads the State of the Union addresses of Democratic and
// Republican Presidents, cut into passages (passages); addresses of a year
// ending in 3 form the dev split, those ending in 7 the test split, the
// others the training split, so that no address is in two splits.
func loadSOTU(dir string, withTest bool) (splits, error) {
	files, err := filepath.Glob(filepath.Join(dir, "*.json"))
	if err != nil || len(files) == 0 {
		return splits{}, fmt.Errorf("%s: no addresses: run `make corpora`", dir)
	}
	labels := []string{"Democratic", "Republican"}
	sp := splits{train: &corpus.Dataset{Path: dir, Labels: labels}, dev: &corpus.Dataset{Path: dir, Labels: labels}}
	if withTest {
		sp.test = &corpus.Dataset{Path: dir, Labels: labels}
	}
	for _, f := range files {
		b, err := os.ReadFile(f)
		if err != nil {
			return splits{}, err
		}
		var a struct {
			Year  int    `json:"year"`
			Party string `json:"party"`
			Text  string `json:"text"`
		}
		if err := json.Unmarshal(b, &a); err != nil {
			return splits{}, fmt.Errorf("%s: %v", f, err)
		}
		if a.Party != "Democratic" && a.Party != "Republican" {
			continue
		}
		d := sp.train
		switch a.Year % 10 {
		case 3:
			d = sp.dev
		case 7:
			d = sp.test
		}
		if d == nil {
			continue
		}
		for _, p := range passages(a.Text, 80) {
			d.Examples = append(d.Examples, corpus.Example{Text: p, Label: a.Party, File: filepath.Base(f)})
		}
	}
	return sp, nil
}

// passages cuts text after the first sentence end (". ") once a passage
// holds at least n words; a short last passage is dropped.
func passages(text string, n int) []string {
	var out []string
	words := strings.Fields(text)
	start := 0
	for i, w := range words {
		if i+1-start >= n && strings.HasSuffix(w, ".") {
			out = append(out, strings.Join(words[start:i+1], " "))
			start = i + 1
		}
	}
	return out
}

// logf is the natural logarithm, with probabilities that round to 0 in
// float32 counted as the smallest normal float32.
func logf(p float64) float64 { return math.Log(max(p, 0x1p-126)) }

// skewed keeps every positive review and the negative ones on two lines
// (or records, in a JSON source) in five, by number, so that about 70% of
// a source is positive (Amazon: 500 of 716; the three sources: 1,500 of
// 2,120): a stand-in for collections whose labels are not balanced, where
// accuracy and macro-F1 diverge.
func skewed(d *corpus.Dataset) *corpus.Dataset {
	out := *d
	out.Examples = nil
	for _, e := range d.Examples {
		if e.Label == "positive" || e.Line%5 < 2 {
			out.Examples = append(out.Examples, e)
		}
	}
	return &out
}

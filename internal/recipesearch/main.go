// Command recipesearch measures candidate training recipes on the dev
// splits of the corpora the project has (the demo, SpamAssassin and the
// State of the Union addresses, fetched by `make corpora`) and prints one
// Markdown table row per recipe, corpus and seed: dev accuracy, macro-F1
// and loss of the CNN (the kept epoch's), the epochs run, the training
// throughput and time, and, with -baseline, the linear baseline's best dev
// macro-F1. The default recipe (cnn.DefaultRecipe) is chosen from its
// output.
//
// A candidate is a '+'-joined list of changes to the default recipe, e.g.
// "ppmi+avg3"; -base applies changes to every candidate.
//
//	go run ./internal/recipesearch -corpus spam -recipes default,min2,ppmi+avg3 -seeds 1,2,3
//
// The test splits are read only with -test, for the check made after the
// choice: then each row also holds the test accuracy and macro-F1 (and the
// baseline's, with -baseline).
//
// On the demo each row also scores the dev split with its planted cues
// spread evenly over the labels (spread.go), a dev-side stand-in for the
// demo's test split, and the baseline beside it with -baseline.
// -corpus reviews-skew is the reviews with two in five negative sentences
// kept (about 70% positive), for labels that are not balanced.
// -corpus reviews3 adds the set's Yelp and IMDb sentences (2,400
// training, 300 dev and 300 test texts per rotation); reviews3-skew skews
// each source the same way (about 1,696 / 212 / 212).
//
// With -halves each row also scores the CNN's choice of epoch (and with
// -baseline the baseline's choice of C) cross-fitted over two halves of the
// dev split (halves.go).
//
// With -baseline -stack each row also scores the CNN and the baseline
// joined by stacking (stack.go). -dump-text DIR writes a corpus's splits
// as JSON lines for the PyTorch pooling prototype (pooling.py) or for
// telltale train, one set per rotation (reviews-K-dev.jsonl), and stops.
package main

import (
	"context"
	"flag"
	"fmt"
	"log"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/linear"
)

func main() {
	log.SetFlags(0)
	log.SetPrefix("recipesearch: ")
	which := flag.String("corpus", "demo", "demo, spam, sotu, reviews (ten cross-validation rotations, one row each), reviews-skew (the same with two in five negative reviews kept), reviews3 or reviews3-skew (Amazon, Yelp and IMDb sentences)")
	recipes := flag.String("recipes", "default", "comma-separated candidates, each a '+'-joined list of: "+names())
	seeds := flag.String("seeds", "1", "comma-separated training seeds")
	base := flag.String("base", "", "changes applied first to every candidate, '+'-joined")
	threads := flag.Int("threads", 0, "worker goroutines (0: all cores)")
	baseline := flag.Bool("baseline", false, "fit the linear baseline too")
	withTest := flag.Bool("test", false, "also evaluate on the test split (only to check a choice already made)")
	stack := flag.Bool("stack", false, "with -baseline: also score the CNN and the baseline joined by stacking (stack.go)")
	halvesFlag := flag.Bool("halves", false, "also score the CNN's epoch choice (and with -baseline the baseline's C) cross-fitted over two halves of the dev split (halves.go)")
	share := flag.Float64("train-share", 1, "keep this share of each training split, stratified by label and seeded (trainShare), for a learning curve on the same dev and test splits")
	refit := flag.Bool("refit", false, "score a first fit and its refit with the choices fixed (refit.go): nested on the dev split, or with -test on the test split")
	dumpText := flag.String("dump-text", "", "write the splits as JSON lines (text, label) into this folder and stop, for pooling.py (the reviews: one set per rotation)")
	flag.Parse()
	// The options first, before any corpus is read.
	if *share <= 0 || *share > 1 {
		log.Fatalf("-train-share %g: give a share in (0, 1]", *share)
	}
	rotations, err := loadRotations(root(), *which, *withTest)
	if err != nil {
		log.Fatal(err)
	}
	for i := range rotations {
		rotations[i].train = trainShare(rotations[i].train, *share)
	}
	if *dumpText != "" {
		// One set of files per rotation, named after it ("reviews/3" → reviews-3-dev.jsonl).
		for _, rot := range rotations {
			if err := dumpSplits(rot.splits, strings.ReplaceAll(rot.name, "/", "-"), *dumpText); err != nil {
				log.Fatal(err)
			}
		}
		return
	}
	for _, rot := range rotations {
		log.Printf("%s: training %d, dev %d texts", rot.name, len(rot.train.Examples), len(rot.dev.Examples))
	}
	for _, name := range strings.Split(*recipes, ",") {
		for _, s := range strings.Split(*seeds, ",") {
			var seed uint64
			if _, err := fmt.Sscan(s, &seed); err != nil {
				log.Fatalf("seed %q: %v", s, err)
			}
			r, err := candidate(*base, name)
			if err != nil {
				log.Fatal(err)
			}
			r.Train.Seed, r.Train.Threads = seed, *threads
			if !*baseline {
				r.Baseline = nil
			} else if r.Baseline == nil {
				c := linear.DefaultConfig()
				r.Baseline = &c
			}
			for _, rot := range rotations {
				measureRot := func() (string, error) {
					return measure(rot.name, strings.Trim(*base+"+"+name, "+"), r, rot.splits, *stack, *halvesFlag)
				}
				if *refit {
					measureRot = func() (string, error) {
						return measureRefit(rot.name, strings.Trim(*base+"+"+name, "+"), r, rot.splits)
					}
				}
				row, err := measureRot()
				if err != nil {
					log.Fatal(err)
				}
				fmt.Println(row)
			}
		}
	}
}

// candidate is the default recipe with the changes of base and name.
func candidate(base, name string) (cnn.Recipe, error) {
	r := cnn.DefaultRecipe()
	for _, ch := range strings.Split(base+"+"+name, "+") {
		if ch == "" {
			continue
		}
		v, ok := variants[ch]
		if !ok {
			return r, fmt.Errorf("no change %q: use one of %s", ch, names())
		}
		v(&r)
	}
	return r, nil
}

// measure trains r on the splits and returns the table row.
func measure(which, name string, r cnn.Recipe, sp splits, stack, halved bool) (string, error) {
	start := time.Now()
	ep, err := newEpochPredictions(halved, r, sp)
	if err != nil {
		return "", err
	}
	tr, err := cnn.TrainText(context.Background(), sp.train, sp.dev, r, ep.progressFunc())
	if err != nil {
		return "", err
	}
	secs := time.Since(start).Seconds()
	m := tr.Model
	enc, err := m.Encoder()
	if err != nil {
		return "", err
	}
	devData, err := cnn.EncodeDataset(enc, sp.dev, m.Labels, r.Train.Threads)
	if err != nil {
		return "", err
	}
	loss := meanLoss(m, devData)
	row := fmt.Sprintf("| %s | %s | %d | %.4f | %.4f | %.4f | %d/%d | %.0f | %.0f |", which, name, r.Train.Seed,
		m.Info.Dev.Accuracy, m.Info.Dev.MacroF1, loss, tr.Result.BestEpoch, len(tr.Result.Epochs), tr.Result.ExamplesPerSec, secs)
	if m.Config.Chars != nil {
		// Early stopping saw the dev split's unseen words as UNK; this is
		// the kept model with each unseen word's own character vector.
		mu, encU, err := m.WithUnseen(enc, sp.dev.Texts())
		if err != nil {
			return "", err
		}
		du, err := cnn.EncodeDataset(encU, sp.dev, m.Labels, r.Train.Threads)
		if err != nil {
			return "", err
		}
		mt, _, err := cnn.Evaluate(mu, du, r.Train.Threads)
		if err != nil {
			return "", err
		}
		row += fmt.Sprintf(" unseen-word rows: dev %.4f / %.4f |", mt.Accuracy, mt.MacroF1)
	}
	if m.Baseline != nil {
		best := 0.0
		for _, d := range m.Baseline.Dev {
			best = max(best, d.Score)
		}
		row += fmt.Sprintf(" %.4f (C=%g) |", best, m.Baseline.Classifier.C)
	}
	if which == "demo" {
		cells, err := spreadCells(m, sp.dev, r.Train.Threads)
		if err != nil {
			return "", err
		}
		row += cells
	}
	if halved {
		cells, err := halvesCells(context.Background(), r, m, sp, ep)
		if err != nil {
			return "", err
		}
		row += cells
	}
	if stack && m.Baseline != nil {
		cells, err := stackCells(m, enc, sp, r.Train.MaxLen, r.Train.Threads)
		if err != nil {
			return "", err
		}
		row += cells
	}
	if sp.test != nil {
		cells, err := testCells(m, enc, sp.test, "test", r.Train.Threads)
		if err != nil {
			return "", err
		}
		row += cells
	}
	return row, nil
}

// testCells is the row's cells of the test split (read only with -test),
// or of another split named what: the CNN's accuracy and macro-F1 and,
// when m carries a baseline, the baseline's and the exact McNemar test
// between the two.
func testCells(m *cnn.Model, enc *corpus.Encoder, test *corpus.Dataset, what string, threads int) (string, error) {
	if m.Baseline != nil {
		cmp, err := cnn.CompareBaseline(m, test, threads)
		if err != nil {
			return "", err
		}
		// The discordant counts let rotations be pooled into one exact McNemar test.
		return fmt.Sprintf(" %s %.4f / %.4f | baseline %.4f / %.4f | McNemar p %.3g (only CNN %d, only baseline %d) |", what,
			cmp.CNN.Accuracy, cmp.CNN.MacroF1, cmp.Baseline.Accuracy, cmp.Baseline.MacroF1, cmp.McNemar.P,
			cmp.McNemar.OnlyA, cmp.McNemar.OnlyB), nil
	}
	td, err := cnn.EncodeDataset(enc, test, m.Labels, threads)
	if err != nil {
		return "", err
	}
	mt, _, err := cnn.Evaluate(m, td, threads)
	if err != nil {
		return "", err
	}
	return fmt.Sprintf(" %s %.4f / %.4f |", what, mt.Accuracy, mt.MacroF1), nil
}

// meanLoss is the mean cross-entropy of m on d.
func meanLoss(m *cnn.Model, d cnn.Data) float64 {
	probs := m.Probabilities(d.IDs, 0)
	var s float64
	for i, p := range probs {
		s -= logf(float64(p[d.Labels[i]]))
	}
	return s / float64(len(probs))
}

func names() string {
	var out []string
	for n := range variants {
		out = append(out, n)
	}
	sort.Strings(out)
	return strings.Join(out, ", ")
}

// root is the module root, found from the working directory.
func root() string {
	dir, _ := os.Getwd()
	for d := dir; d != filepath.Dir(d); d = filepath.Dir(d) {
		if _, err := os.Stat(filepath.Join(d, "go.mod")); err == nil {
			return d
		}
	}
	return dir
}

// rotation is one way of splitting a corpus, named for its rows: the
// corpus itself, or for the reviews "reviews/K", fold K being its test
// split.
type rotation struct {
	name string
	splits
}

// splits are the three splits of a corpus; test is nil unless asked for.
type splits struct {
	train, dev, test *corpus.Dataset
}

// Command recipesearch measures candidate training recipes on the dev
// splits of the corpora the project has (the demo, SpamAssassin and the
// State of the Union addresses, fetched by `make corpora`) and prints one
// Markdown table row per recipe, corpus and seed: dev accuracy and macro-F1
// of the CNN (the kept epoch's) and of the linear baseline, the epochs run
// and the training throughput. It never looks at a test split: the default
// recipe (cnn.DefaultRecipe) is chosen from its output.
//
//	go run ./internal/recipesearch -corpus spam -recipes default,min2,wd -seeds 1,2
package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"log"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/linear"
)

// variants are the candidate recipes: each changes the default recipe.
var variants = map[string]func(r *cnn.Recipe){
	"default": func(r *cnn.Recipe) {},
	"min2":    func(r *cnn.Recipe) { r.Tokenizer.MinCount = 2 },
	"min3":    func(r *cnn.Recipe) { r.Tokenizer.MinCount = 3 },
	"wd":      func(r *cnn.Recipe) { r.Train.WordDropout = 0.25 },
	"wd1":     func(r *cnn.Recipe) { r.Train.WordDropout = 1 },
	"min2wd":  func(r *cnn.Recipe) { r.Tokenizer.MinCount = 2; r.Train.WordDropout = 0.25 },
	"sub":     func(r *cnn.Recipe) { r.Tokenizer.Subword = true },
	"tok10":   func(r *cnn.Recipe) { r.Train.TokenDropout = 0.1 },
	"tok25":   func(r *cnn.Recipe) { r.Train.TokenDropout = 0.25 },
	"tok40":   func(r *cnn.Recipe) { r.Train.TokenDropout = 0.4 },
	"min2ep20": func(r *cnn.Recipe) {
		r.Tokenizer.MinCount = 2
		r.Train.Epochs, r.Train.Patience = 20, 5
	},
	"min2tok25ep20": func(r *cnn.Recipe) {
		r.Tokenizer.MinCount = 2
		r.Train.TokenDropout = 0.25
		r.Train.Epochs, r.Train.Patience = 20, 5
	},
	"min2tok10": func(r *cnn.Recipe) {
		r.Tokenizer.MinCount = 2
		r.Train.TokenDropout = 0.1
	},
	"min2wd1": func(r *cnn.Recipe) {
		r.Tokenizer.MinCount = 2
		r.Train.WordDropout = 1
	},
	"w123":      func(r *cnn.Recipe) { r.Model.Widths = []int{1, 2, 3} },
	"w123tok25": func(r *cnn.Recipe) { r.Model.Widths = []int{1, 2, 3}; r.Train.TokenDropout = 0.25 },
	"w12tok25":  func(r *cnn.Recipe) { r.Model.Widths = []int{1, 2}; r.Train.TokenDropout = 0.25 },
	"w123f200tok25": func(r *cnn.Recipe) {
		r.Model.Widths, r.Model.Filters = []int{1, 2, 3}, 200
		r.Train.TokenDropout = 0.25
	},
	"tok25drop7": func(r *cnn.Recipe) { r.Train.TokenDropout = 0.25; r.Model.Dropout = 0.7 },
	"tok25lr5ep20": func(r *cnn.Recipe) {
		r.Train.TokenDropout = 0.25
		r.Train.LR, r.Train.Epochs, r.Train.Patience = 5e-4, 20, 5
	},
	"min2tok25": func(r *cnn.Recipe) {
		r.Tokenizer.MinCount = 2
		r.Train.TokenDropout = 0.25
	},
	"subwd":  func(r *cnn.Recipe) { r.Tokenizer.Subword = true; r.Train.WordDropout = 0.25 },
	"drop3":  func(r *cnn.Recipe) { r.Model.Dropout = 0.3 },
	"drop6":  func(r *cnn.Recipe) { r.Model.Dropout = 0.6 },
	"dim64":  func(r *cnn.Recipe) { r.Model.Dim = 64 },
	"dim200": func(r *cnn.Recipe) { r.Model.Dim = 200 },
	"ep20":   func(r *cnn.Recipe) { r.Train.Epochs = 20; r.Train.Patience = 5 },
	"ep5":    func(r *cnn.Recipe) { r.Train.Epochs = 5 },
	"lr2":    func(r *cnn.Recipe) { r.Train.LR = 2e-3 },
	"lr5":    func(r *cnn.Recipe) { r.Train.LR = 5e-4 },
	"adadelta": func(r *cnn.Recipe) {
		r.Train.Optimizer = "adadelta"
		r.Model.MaxNorm = 3
	},
	"maxnorm3": func(r *cnn.Recipe) { r.Model.MaxNorm = 3 },
	"batch25":  func(r *cnn.Recipe) { r.Train.Batch = 25 },
}

func main() {
	log.SetFlags(0)
	log.SetPrefix("recipesearch: ")
	which := flag.String("corpus", "demo", "demo, spam or sotu")
	recipes := flag.String("recipes", "default", "comma-separated recipe names: "+names())
	seeds := flag.String("seeds", "1", "comma-separated training seeds")
	base := flag.String("base", "", "recipes to apply first to every candidate, comma-separated")
	threads := flag.Int("threads", 0, "worker goroutines (0: all cores)")
	baseline := flag.Bool("baseline", true, "fit the linear baseline too")
	flag.Parse()
	train, dev, err := load(*which)
	if err != nil {
		log.Fatal(err)
	}
	log.Printf("%s: training %d, dev %d texts", *which, len(train.Examples), len(dev.Examples))
	for _, name := range strings.Split(*recipes, ",") {
		for _, s := range strings.Split(*seeds, ",") {
			var seed uint64
			if _, err := fmt.Sscan(s, &seed); err != nil {
				log.Fatalf("seed %q: %v", s, err)
			}
			r := cnn.DefaultRecipe()
			for _, b := range append(strings.Split(*base, ","), name) {
				if b == "" {
					continue
				}
				v, ok := variants[b]
				if !ok {
					log.Fatalf("no recipe %q: use one of %s", b, names())
				}
				v(&r)
			}
			r.Train.Seed, r.Train.Threads = seed, *threads
			if !*baseline {
				r.Baseline = nil
			} else if r.Baseline == nil {
				c := linear.DefaultConfig()
				r.Baseline = &c
			}
			tr, err := cnn.TrainText(context.Background(), train, dev, r, nil)
			if err != nil {
				log.Fatal(err)
			}
			m := tr.Model
			row := fmt.Sprintf("| %s | %s%s | %d | %.4f | %.4f | %d/%d | %.0f | %d |", *which, *base, name, seed,
				m.Info.Dev.Accuracy, m.Info.Dev.MacroF1, tr.Result.BestEpoch, len(tr.Result.Epochs), tr.Result.ExamplesPerSec, len(m.Vocab))
			if m.Baseline != nil {
				best := 0.0
				for _, d := range m.Baseline.Dev {
					best = max(best, d.Score)
				}
				row += fmt.Sprintf(" %.4f (C=%g) |", best, m.Baseline.Classifier.C)
			}
			fmt.Println(row)
		}
	}
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

// load returns the training and dev splits of a corpus, made as `telltale
// train` makes them (seed 1) or, for the addresses, grouped by address.
func load(which string) (train, dev *corpus.Dataset, err error) {
	td := filepath.Join(root(), "testdata")
	switch which {
	case "demo":
		d, _, err := corpus.Load(filepath.Join(td, "demo", "train.csv"), corpus.Options{})
		if err != nil {
			return nil, nil, err
		}
		train, dev = d.Split(cnn.DefaultDevFrac, 1)
		return train, dev, nil
	case "spam":
		d, _, err := corpus.Load(filepath.Join(td, "spamassassin"), corpus.Options{ReplaceInvalidUTF8: true})
		if err != nil {
			return nil, nil, err
		}
		d = d.MapTexts(corpus.SubjectAndBody).Relabel(map[string]string{"easy-ham-1": "ham", "easy-ham-2": "ham",
			"hard-ham-1": "ham", "spam-1": "spam", "spam-2": "spam"})
		trainAll, _ := d.Split(0.2, 1) // the 20% test split is never read
		train, dev = trainAll.Split(cnn.DefaultDevFrac, 1)
		return train, dev, nil
	case "sotu":
		return loadSOTU(filepath.Join(td, "sotu"))
	}
	return nil, nil, fmt.Errorf("corpus %q: use demo, spam or sotu", which)
}

// loadSOTU reads the State of the Union addresses of Democratic and
// Republican Presidents, cut into passages (SOTUPassages); addresses of a
// year ending in 3 form the dev split, those ending in 7 the test split (not
// returned), the others the training split, so that no address is in two
// splits.
func loadSOTU(dir string) (train, dev *corpus.Dataset, err error) {
	files, err := filepath.Glob(filepath.Join(dir, "*.json"))
	if err != nil || len(files) == 0 {
		return nil, nil, fmt.Errorf("%s: no addresses: run `make corpora`", dir)
	}
	train, dev = &corpus.Dataset{Path: dir}, &corpus.Dataset{Path: dir}
	for _, f := range files {
		b, err := os.ReadFile(f)
		if err != nil {
			return nil, nil, err
		}
		var a struct {
			Year  int    `json:"year"`
			Party string `json:"party"`
			Text  string `json:"text"`
		}
		if err := json.Unmarshal(b, &a); err != nil {
			return nil, nil, fmt.Errorf("%s: %v", f, err)
		}
		if a.Party != "Democratic" && a.Party != "Republican" {
			continue
		}
		d := train
		switch a.Year % 10 {
		case 3:
			d = dev
		case 7:
			continue
		}
		for _, p := range passages(a.Text, 80) {
			d.Examples = append(d.Examples, corpus.Example{Text: p, Label: a.Party, File: filepath.Base(f)})
		}
	}
	train.Labels, dev.Labels = []string{"Democratic", "Republican"}, []string{"Democratic", "Republican"}
	return train, dev, nil
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

package main

import (
	"context"
	"flag"
	"fmt"
	"sync"

	"telltale/corpus"
	"telltale/explain"
	"telltale/internal/outguard"
	"telltale/report"
)

var cmdFilters = &command{
	Name:      "filters",
	UsageLine: "filters --model MODEL --data FILE [--top K] [--filters 3,17] [--json]",
	Short:     "profile every filter over a corpus: top n-grams, slot words, families, purity threshold",
	Long: `Filters runs the model once over every text of --data and describes each
filter: the class it votes for, the n-grams that win its max pooling most
strongly (with the score of every slot), the words that switch each slot on
(triggers) and off (suppressors), the families its strong n-grams fall into,
its activation histogram and the purity threshold of Jacovi, Sar Shalom and
Goldberg (2018). Filters with almost nothing above that threshold are marked
idle. Filters are numbered from 0, as in every command; --filters shows only
those listed.`,
	Options: func() options { return new(filtersOptions) },
	Run:     runAs(runFilters),
}

type filtersOptions struct {
	model, data, filters, export string
	read                         readOptions
	top                          int
	purity                       float64
	threads                      threadsOption
	asJSON, quiet                bool

	only []int
}

func (o *filtersOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	fs.StringVar(&o.data, "data", "", "the corpus to profile the filters on (usually the training file)")
	o.read.register(fs, true)
	intVar(fs, &o.top, "top", 10, "n-grams shown per filter (1 or more)")
	fs.StringVar(&o.filters, "filters", "", "show only these filters: indexes from 0, comma-separated (default: all)")
	floatVar(fs, &o.purity, "purity", 0.5, "share of the purity threshold, in (0, 1]")
	o.threads.register(fs)
	fs.StringVar(&o.export, "export", "", "also write the top n-grams of every filter to this .csv or .jsonl file")
	fs.BoolVar(&o.asJSON, "json", false, "print the profiles as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "no progress bar or warnings")
}

func (o *filtersOptions) check(fs *flag.FlagSet, env *runEnv) error {
	if o.purity <= 0 || o.purity > 1 {
		return usagef("--purity %g: a share between 0 (exclusive) and 1", o.purity)
	}
	var err error
	if o.only, err = listInts("filters", o.filters, 0, "a filter index (0 or more)"); err != nil {
		return err
	}
	if o.data == "" {
		return usagef("--data is required: the corpus to profile the filters on (usually the training file)")
	}
	for _, err := range []error{requireModel(o.model), checkExport(o.export), checkAtLeast("top", o.top, 1, "n-grams shown per filter"),
		o.read.check(), o.threads.check(env.Stderr)} {
		if err != nil {
			return err
		}
	}
	return nil
}

func (o *filtersOptions) files() (outputs, inputs []outguard.File) {
	return []outguard.File{{Name: "--export", Path: o.export}},
		[]outguard.File{{Name: "--model", Path: o.model}, {Name: "--data", Path: o.data}}
}

func runFilters(ctx context.Context, env *runEnv, o *filtersOptions) error {
	m, enc, err := openModel(o.model)
	if err != nil {
		return err
	}
	if nf := m.Config.NumFilters(); len(o.only) > 0 {
		for _, g := range o.only {
			if g >= nf {
				return usagef("--filters %s: the model has filters 0 to %d", clip(o.filters), nf-1)
			}
		}
	}
	// The corpus is streamed: only a few texts are held at once.
	next, stop := streamTexts(ctx, o.data, o.read.corpusOptions(false), o.read.example, enc, m.Labels)
	defer stop()
	bar := newProgressBar(env.Stderr, o.quiet)
	prof, err := explain.ProfileStream(ctx, m, next, explain.ProfileOptions{
		TopK: o.top, Purity: o.purity, Workers: o.threads.N,
		Progress: func(done, _ int) { bar.note(fmt.Sprintf("profiling filters: %d texts", done)) },
	})
	bar.done()
	if err != nil {
		return err
	}
	if len(o.only) > 0 {
		kept := make([]explain.FilterProfile, 0, len(o.only))
		for _, g := range o.only {
			kept = append(kept, prof.Filters[g])
		}
		prof.Filters = kept
	}
	if o.export != "" {
		if err := report.WriteTableFile(o.export, report.ProfileTable(prof)); err != nil {
			return err
		}
	}
	if o.asJSON {
		return writeJSON(env.Stdout, prof)
	}
	return prof.WriteText(env.Stdout, o.top)
}

// streamTexts reads a labeled file one example at a time (corpus.Stream) on
// a goroutine and hands each text's ids and gold class (−1 for a label the
// model does not know) to the caller's pulls. Stop ends the reading early.
func streamTexts(ctx context.Context, path string, opt corpus.Options, prepare func(corpus.Example) (corpus.Example, bool),
	enc *corpus.Encoder, labels []string) (explain.TextSource, func()) {
	type item struct {
		ids  []int32
		gold int
	}
	class := make(map[string]int, len(labels))
	for i, l := range labels {
		class[l] = i
	}
	items := make(chan item, 256)
	done := make(chan struct{})
	var readErr error
	go func() {
		defer close(items)
		_, readErr = corpus.Stream(path, opt, func(e corpus.Example) error {
			e, keep := prepare(e)
			if !keep {
				return nil
			}
			_, ids := enc.Encode(e.Text)
			g, ok := class[e.Label]
			if !ok {
				g = -1
			}
			select {
			case items <- item{ids, g}:
				return nil
			case <-done:
				return context.Canceled
			case <-ctx.Done():
				return ctx.Err()
			}
		})
	}()
	next := func() ([]int32, int, bool, error) {
		it, ok := <-items
		if !ok {
			return nil, 0, false, readErr
		}
		return it.ids, it.gold, true, nil
	}
	var once sync.Once
	return next, func() { once.Do(func() { close(done) }) }
}

package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"strings"

	"telltale/cnn"
	"telltale/explain"
	"telltale/internal/outguard"
)

var cmdFaithfulness = &command{
	Name:      "faithfulness",
	UsageLine: "faithfulness --model MODEL (--data FILE | --test FILE) [--limit N] [--json]",
	Short:     "measure how faithful each attribution method is on this model (comprehensiveness, sufficiency, AOPC)",
	Long: `Faithfulness removes each text's most important tokens by every attribution
method (and by a random ranking, as a control) and measures what the model then
does: comprehensiveness and sufficiency (DeYoung et al. 2020) at several shares
of tokens, and the area over the deletion curve (Samek et al. 2017). Higher
comprehensiveness and AOPC and lower sufficiency mean a method you can trust
more on this model. The texts are found as eval finds them: --test FILE, or
the test split of the model's own --data, or all of other data.`,
	Options: func() options { return new(faithOptions) },
	Run:     runAs(runFaithfulness),
}

type faithOptions struct {
	model, data, test string
	read              readOptions
	limit             int
	seed              uint64
	threads           threadsOption
	asJSON, quiet     bool
}

func (o *faithOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	registerEvalData(fs, &o.data, &o.test)
	o.read.register(fs, true)
	intVar(fs, &o.limit, "limit", 2000, "score a seeded, stratified sample of at most this many texts (0: all)")
	seedVar(fs, &o.seed, "seed", cnn.DefaultRecipe().Train.Seed, "random seed of the sample and of the random ranking")
	o.threads.register(fs)
	fs.BoolVar(&o.asJSON, "json", false, "print the scores as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "no progress bar, notes or warnings")
}

func (o *faithOptions) check(fs *flag.FlagSet, env *runEnv) error {
	if o.limit < 0 {
		return usagef("--limit %d: 0 (all texts) or more", o.limit)
	}
	for _, err := range []error{requireModel(o.model), requireEvalData(o.data, o.test), o.read.check(), o.threads.check(env.Stderr)} {
		if err != nil {
			return err
		}
	}
	return nil
}

func (o *faithOptions) files() (outputs, inputs []outguard.File) {
	return nil, []outguard.File{{Name: "--model", Path: o.model}, {Name: "--data", Path: o.data}, {Name: "--test", Path: o.test}}
}

func runFaithfulness(ctx context.Context, env *runEnv, o *faithOptions) error {
	m, enc, err := openModel(o.model)
	if err != nil {
		return err
	}
	es, err := findTestSplit(m, o.data, o.test, &o.read, env.Stderr, o.quiet)
	if err != nil {
		return err
	}
	say(env.Stderr, o.quiet, "%s", es.note)
	ds := es.test
	if o.limit > 0 && len(ds.Examples) > o.limit {
		// A seeded, stratified sample, not the first texts of the file.
		ds, _ = ds.Split(1-float64(o.limit)/float64(len(ds.Examples)), o.seed)
	}
	data, err := encodeFor(m, enc, ds, o.threads.N)
	if err != nil {
		return err
	}
	bar := newProgressBar(env.Stderr, o.quiet)
	r, err := explain.Faithfulness(ctx, m, data.IDs, data.Labels, explain.FaithOptions{Workers: o.threads.N, Seed: o.seed,
		Progress: func(done, total int) { bar.show(done, total, "scoring attribution methods", false) }})
	bar.done()
	if err != nil {
		return err
	}
	if o.asJSON {
		return writeJSON(env.Stdout, r)
	}
	writeFaith(env.Stdout, r)
	return nil
}

func writeFaith(w io.Writer, r *explain.FaithReport) {
	fmt.Fprintf(w, "faithfulness over %d texts (model accuracy %.4f)\n", r.Texts, r.Accuracy)
	fmt.Fprintln(w, "higher comprehensiveness and AOPC, lower sufficiency: the more faithful method")
	fmt.Fprintf(w, "\n%-10s  %8s  %8s  %8s\n", "method", "compr.", "suff.", "AOPC")
	for _, mf := range r.Methods {
		fmt.Fprintf(w, "%-10s  %8.4f  %8.4f  %8.4f\n", mf.Method, mf.Comp, mf.Suff, mf.AOPC)
	}
	fmt.Fprintf(w, "\nby share of tokens removed (%%): %v\n", r.Percents)
	for _, mf := range r.Methods {
		fmt.Fprintf(w, "%-10s  compr. %s\n%-10s  suff.  %s\n", mf.Method, floats(mf.Comprehensiveness), "", floats(mf.Sufficiency))
	}
}

func floats(xs []float64) string {
	parts := make([]string, len(xs))
	for i, x := range xs {
		parts[i] = fmt.Sprintf("%.4f", x)
	}
	return strings.Join(parts, " ")
}

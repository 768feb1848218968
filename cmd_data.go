package main

import (
	"context"
	"flag"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/outguard"
)

var cmdData = &command{
	Name:      "data",
	UsageLine: "data --data FILE [--dev FILE | --dev-frac X] [--test FILE | --test-frac X] [--text-col C] [--label-col C] [--json]",
	Short:     "summarize a labeled dataset: labels, balance, vocabulary, lengths, duplicates and leaks",
	Long: `Data reads a labeled dataset and prints its summary over the three splits that
train would make of it (the same options, the same splits): examples per label
in the training, dev and test splits, class balance, vocabulary size,
token-length percentiles, exact and near-exact duplicate texts, and dev or test
texts that also occur in the training split (leaks). It warns of labels with a
single example and of labels that differ only in letter case. Bad input stops
with a message naming the file, the line and what to do.`,
	Options: func() options { return new(dataOptions) },
	Run:     runAs(runData),
}

type dataOptions struct {
	data     string
	read     readOptions
	split    splitOptions
	lower    bool
	minCount int
	asJSON   bool
	quiet    bool
}

func (o *dataOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.data, "data", "", "labeled data: a .csv, .tsv or .jsonl file, or a folder with one sub-folder per label")
	o.split.register(fs, "random seed of the dev and test shares")
	o.read.register(fs, true)
	rec := cnn.DefaultRecipe()
	fs.BoolVar(&o.lower, "lower", rec.Tokenizer.Lower, "lower-case tokens")
	intVar(fs, &o.minCount, "min-count", rec.Tokenizer.MinCount, "minimum training count for a word to enter the vocabulary")
	fs.BoolVar(&o.asJSON, "json", false, "print the summary as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "print no warnings")
}

func (o *dataOptions) check(fs *flag.FlagSet, env *runEnv) error {
	if o.data == "" {
		return usagef("--data is required: a labeled .csv, .tsv, .jsonl file or a folder of label folders")
	}
	if err := checkAtLeast("min-count", o.minCount, 1, "a word enters the vocabulary once it occurs this often"); err != nil {
		return err
	}
	if err := o.split.check(fs); err != nil {
		return err
	}
	return o.read.check()
}

func (o *dataOptions) files() (outputs, inputs []outguard.File) {
	return nil, []outguard.File{{Name: "--data", Path: o.data}, {Name: "--dev", Path: o.split.Dev}, {Name: "--test", Path: o.split.Test}}
}

func runData(ctx context.Context, env *runEnv, o *dataOptions) error {
	sp, err := o.split.load(o.data, &o.read, env.Stderr, o.quiet)
	if err != nil {
		return err
	}
	if !o.quiet {
		printWarnings(env.Stderr, sp.all.LabelWarnings())
	}
	tok, err := corpus.NewTokenizer(corpus.TokenizerConfig{Lower: o.lower, MinCount: o.minCount})
	if err != nil {
		return err
	}
	s := corpus.SummarizeThree(sp.train, sp.dev, sp.test, tok)
	if o.asJSON {
		return writeJSON(env.Stdout, s)
	}
	return s.WriteText(env.Stdout)
}

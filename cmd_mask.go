package main

import (
	"context"
	"flag"
	"fmt"

	"telltale/cnn"
	"telltale/internal/outguard"
)

var cmdMask = &command{
	Name:      "mask",
	UsageLine: "mask --model MODEL --filters 12,40,77 --out MODEL2 [--data FILE | --test FILE] [--json]",
	Short:     "write a copy of a model with some filters masked (the original is kept)",
	Long: `Mask writes a new model file in which the listed filters (indexes from 0)
are switched off: their pooled units held at zero. The original model file is
never overwritten. With --data or --test, both models are evaluated side by
side on the texts eval would use.`,
	Options: func() options { return new(maskOptions) },
	Run:     runAs(runMask),
}

type maskOptions struct {
	model, filters, out, data, test string
	read                            readOptions
	asJSON, quiet                   bool

	indexes []int
}

func (o *maskOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	fs.StringVar(&o.filters, "filters", "", "the filters to mask: indexes from 0, comma-separated")
	fs.StringVar(&o.out, "out", "", "where to write the masked model (never --model itself)")
	registerEvalData(fs, &o.data, &o.test)
	o.read.register(fs, true)
	fs.BoolVar(&o.asJSON, "json", false, "print the comparison as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "print nothing but errors (and --json output)")
}

func (o *maskOptions) check(fs *flag.FlagSet, env *runEnv) error {
	if o.out == "" {
		return usagef("--out is required: where to write the masked model")
	}
	var err error
	if o.indexes, err = listInts("filters", o.filters, 0, "a filter index (0 or more)"); err != nil {
		return err
	}
	if len(o.indexes) == 0 {
		return usagef("--filters is required: e.g. --filters 12,40 (the indexes shown by 'telltale audit' or 'telltale filters')")
	}
	if err := requireModel(o.model); err != nil {
		return err
	}
	return o.read.check()
}

func (o *maskOptions) files() (outputs, inputs []outguard.File) {
	return []outguard.File{{Name: "--out", Path: o.out}},
		[]outguard.File{{Name: "--model", Path: o.model}, {Name: "--data", Path: o.data}, {Name: "--test", Path: o.test}}
}

func runMask(ctx context.Context, env *runEnv, o *maskOptions) error {
	m, enc, err := openModel(o.model)
	if err != nil {
		return err
	}
	masked, err := m.MaskedCopy(o.indexes)
	if err != nil {
		return usageError{err.Error()}
	}
	if err := masked.Save(o.out); err != nil {
		return err
	}
	if !o.quiet {
		fmt.Fprintf(env.Stderr, "masked filters %v; model written to %s (%s unchanged)\n", o.indexes, o.out, o.model)
	}
	if o.data == "" && o.test == "" {
		if o.asJSON {
			return writeJSON(env.Stdout, map[string]any{"model": o.out, "masked": o.indexes})
		}
		return nil
	}
	es, err := findTestSplit(m, o.data, o.test, &o.read, env.Stderr, o.quiet)
	if err != nil {
		return err
	}
	say(env.Stderr, o.quiet, "%s", es.note)
	data, err := encodeFor(m, enc, es.test, 0)
	if err != nil {
		return err
	}
	return compareModels(env, data, []string{o.model, o.out}, []*cnn.Model{m, masked}, o.asJSON)
}

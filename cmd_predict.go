package main

import (
	"context"
	"flag"
	"strings"

	"telltale/internal/outguard"
	"telltale/report"
)

var cmdPredict = &command{
	Name:      "predict",
	UsageLine: "predict --model MODEL [--text \"...\" | --data FILE [--text-col C]] [--export FILE] [--json]",
	Short:     "label new text with a saved model",
	Long: `Predict labels --text, the texts of --data (a .csv, .tsv or .jsonl file with
a text column, or a folder of .txt files: one text per record or file, line
breaks and all), or else every line of standard input (blank lines are
skipped), and prints the label and the probability of each class.`,
	Options: func() options { return new(predictOptions) },
	Run:     runAs(runPredict),
}

type predictOptions struct {
	model  string
	texts  textSource
	export string
	asJSON bool
}

func (o *predictOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	o.texts.register(fs, "label")
	fs.StringVar(&o.export, "export", "", "also write the predictions to this .csv or .jsonl file")
	fs.BoolVar(&o.asJSON, "json", false, "print one JSON object per text")
}

func (o *predictOptions) check(fs *flag.FlagSet, env *runEnv) error {
	for _, err := range []error{requireModel(o.model), checkExport(o.export), o.texts.check(fs)} {
		if err != nil {
			return err
		}
	}
	return nil
}

func (o *predictOptions) files() (outputs, inputs []outguard.File) {
	return []outguard.File{{Name: "--export", Path: o.export}},
		[]outguard.File{{Name: "--model", Path: o.model}, {Name: "--data", Path: o.texts.data}}
}

func runPredict(ctx context.Context, env *runEnv, o *predictOptions) error {
	m, enc, err := openCNN(o.model)
	if err != nil {
		return err
	}
	next, err := o.texts.batches(env)
	if err != nil {
		return err
	}
	var texts []string
	var probs [][]float32
	var keep func(text, []float32)
	if o.export != "" {
		keep = func(t text, p []float32) {
			texts, probs = append(texts, t.Text), append(probs, append([]float32(nil), p...))
		}
	}
	format := func(dst []byte, t text, p []float32) ([]byte, error) {
		return appendTextLine(dst, m.Labels, t, p), nil
	}
	if o.asJSON {
		format = newPredictionJSON(m.Labels).appendLine
	}
	if err := predictStream(ctx, next, m, enc, env.Stdout, format, keep); err != nil || o.export == "" {
		return err
	}
	return report.WriteTableFile(o.export, report.PredictionTable(m.Labels, texts, nil, probs))
}

// textSource is where predict and explain take their texts from: --text,
// --data (read as texts to label) or the lines of standard input.
type textSource struct {
	text  string
	data  string
	read  readOptions
	quiet bool
	given bool // --text was given
}

func (s *textSource) register(fs *flag.FlagSet, verb string) {
	fs.StringVar(&s.text, "text", "", "the text to "+verb+" (default: the texts of --data, else one text per line of standard input)")
	fs.StringVar(&s.data, "data", "", "texts to "+verb+": a .csv, .tsv or .jsonl file with a text column, or a folder of .txt files")
	s.read.register(fs, false)
	fs.BoolVar(&s.quiet, "quiet", false, "print no warnings")
}

func (s *textSource) check(fs *flag.FlagSet) error {
	s.given = isSet(fs, "text")
	switch {
	case s.given && s.data != "":
		return usagef("give --text or --data, not both")
	case s.given && strings.TrimSpace(s.text) == "":
		return usagef("--text is empty: give a text, or leave --text out to read one text per line of standard input")
	}
	return s.read.check()
}

// text is one text to label and where it came from (Line and File are
// those of --data; both are empty for --text and standard input).
type text struct {
	Text string
	Line int
	File string
}

// batches returns the texts of the source in batches (see predictStream);
// --data is read whole first, standard input as it comes.
func (s *textSource) batches(env *runEnv) (batchSource, error) {
	switch {
	case s.given:
		return sliceBatches([]text{{Text: s.text}}), nil
	case s.data != "":
		ds, err := s.read.readTexts(s.data, env.Stderr, s.quiet)
		if err != nil {
			return nil, err
		}
		texts := make([]text, len(ds.Examples))
		for i, e := range ds.Examples {
			texts[i] = text{Text: e.Text, Line: e.Line, File: e.File}
		}
		return sliceBatches(texts), nil
	}
	return lineBatches(env.Stdin), nil
}

// each calls fn with every text of the source.
func (s *textSource) each(ctx context.Context, env *runEnv, fn func(text) error) error {
	switch {
	case s.given:
		return fn(text{Text: s.text})
	case s.data != "":
		ds, err := s.read.readTexts(s.data, env.Stderr, s.quiet)
		if err != nil {
			return err
		}
		for _, e := range ds.Examples {
			if err := ctx.Err(); err != nil {
				return err
			}
			if err := fn(text{Text: e.Text, Line: e.Line, File: e.File}); err != nil {
				return err
			}
		}
		return nil
	}
	return eachLine(ctx, env.Stdin, func(t string) error { return fn(text{Text: t}) })
}

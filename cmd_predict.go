package main

import (
	"context"
	"flag"
	"fmt"
	"slices"
	"strconv"
	"strings"

	"telltale/internal/outguard"
	"telltale/internal/wording"
	"telltale/report"
)

var cmdPredict = &command{
	Name:      "predict",
	UsageLine: "predict --model MODEL [--text \"...\" | --data FILE [--text-col C]] [--export FILE] [--json]",
	Short:     "label new text with a saved model",
	Long: `Predict labels --text, the texts of --data (a .csv, .tsv or .jsonl file with
a text column, or a folder of .txt files: one text per record or file, line
breaks and all), or else every line of standard input, and prints the label
and the probability of each class.

On standard input every line gets one output line, in order, so outputs
pair with input lines: a blank line gives an empty line (with --json,
{"line":N,"blank":true}). --json gives each text's line: the line of --data
where its record starts, or of standard input. --export writes the same
line, the label --data gives a text (gold; empty where it has none), the
predicted label and p_<label> for each class.

A prediction describes the model, not the world: check it before you act
on it, and never use a classifier alone for decisions about people.`,
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
	next, total, err := o.texts.batches(env)
	if err != nil {
		return err
	}
	var kept []text
	var probs [][]float32
	bar := newProgressBar(env.Stderr, o.texts.quiet || o.texts.given)
	written := 0
	keep := func(t text, p []float32) {
		written++
		bar.progress("labeling", written, total)
		if o.export != "" {
			kept, probs = append(kept, t), append(probs, append([]float32(nil), p...))
		}
	}
	err = predictStream(ctx, next, m, enc, env.Stdout, predictFormat(m.Labels, o.asJSON), keep)
	bar.done()
	if err != nil && ctx.Err() != nil {
		return interrupted(stoppedNote("labels", written, o.texts.stdin(), o.export))
	}
	if err != nil || o.export == "" {
		return err
	}
	return report.WriteTableFile(o.export, predictionTable(m.Labels, kept, probs))
}

// stoppedNote says what a stopped predict or explain kept: the output of
// the first n texts (lines, for standard input) was printed, and the
// export, written only at the end, was not.
func stoppedNote(what string, n int, stdin bool, export string) string {
	if n == 0 {
		note := "stopped before any output was printed"
		if export != "" {
			note += "; nothing was written to " + export
		}
		return note
	}
	of := wording.Texts(n)
	if stdin {
		of = wording.Count(n, "line", "lines") + " of standard input"
	}
	note := fmt.Sprintf("stopped after printing the %s of %s, the first in the input", what, of)
	if export != "" {
		note += "; nothing was written to " + export
	}
	return note
}

// predictFormat appends predict's output line for one text (see
// predictStream): the plain line, or with asJSON one JSON object. A blank
// line of standard input gives an empty line, or {"line":N,"blank":true}.
func predictFormat(labels []string, asJSON bool) func(dst []byte, t text, probs []float32) ([]byte, error) {
	if !asJSON {
		return func(dst []byte, t text, p []float32) ([]byte, error) {
			if t.Blank {
				return append(dst, '\n'), nil
			}
			return appendTextLine(dst, labels, t, p), nil
		}
	}
	line := newPredictionJSON(labels).appendLine
	return func(dst []byte, t text, p []float32) ([]byte, error) {
		if t.Blank {
			return append(strconv.AppendInt(append(dst, `{"line":`...), int64(t.Line), 10), `,"blank":true}`+"\n"...), nil
		}
		return line(dst, t, p)
	}
}

// predictionTable is what predict's --export writes, one row per text:
// line (as --json's line: the line of --data or standard input where the
// text starts; empty for --text), file (only for a folder of texts), the
// text, gold (the label --data gives it, else empty), the predicted label
// and p_<label> for every class. A blank line of standard input has a row
// with no prediction.
func predictionTable(labels []string, texts []text, probs [][]float32) *report.Table {
	files := slices.ContainsFunc(texts, func(t text) bool { return t.File != "" })
	t := &report.Table{Columns: []string{"line"}}
	if files {
		t.Columns = append(t.Columns, "file")
	}
	t.Columns = append(t.Columns, "text", "gold", "predicted")
	for _, l := range labels {
		t.Columns = append(t.Columns, "p_"+l)
	}
	for i, x := range texts {
		row := []any{lineCell(x.Line)}
		if files {
			row = append(row, x.File)
		}
		row = append(row, x.Text, x.Gold)
		if x.Blank {
			row = append(row, nil)
			for range labels {
				row = append(row, nil)
			}
		} else {
			row = append(row, labels[argmax(probs[i])])
			for _, v := range probs[i] {
				row = append(row, float64(v))
			}
		}
		t.Add(row...)
	}
	return t
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
	fs.BoolVar(&s.quiet, "quiet", false, "print no progress and no warnings")
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

// text is one text to label and where it came from: Line is the line of
// --data or of standard input where it starts, File the file of a folder
// of texts (both empty for --text); Gold is its label where --data has
// one. Blank marks a line of standard input with nothing but white space,
// which gets an output line of its own so that outputs pair with lines.
type text struct {
	Text  string
	Line  int
	File  string
	Gold  string
	Blank bool
}

// stdin says whether the texts are the lines of standard input.
func (s *textSource) stdin() bool { return !s.given && s.data == "" }

// batches returns the texts of the source in batches (see predictStream)
// and their number (0 for standard input, which is read as it comes);
// --data is read whole first.
func (s *textSource) batches(env *runEnv) (batchSource, int, error) {
	switch {
	case s.given:
		return sliceBatches([]text{{Text: s.text}}), 1, nil
	case s.data != "":
		ds, err := s.read.readTexts(s.data, env.Stderr, s.quiet)
		if err != nil {
			return nil, 0, err
		}
		texts := make([]text, len(ds.Examples))
		for i, e := range ds.Examples {
			texts[i] = text{Text: e.Text, Line: e.Line, File: e.File, Gold: e.Label}
		}
		return sliceBatches(texts), len(texts), nil
	}
	return lineBatches(env.Stdin, warnTo(env.Stderr, s.quiet), s.read.MaxTextBytes), 0, nil
}

// each calls fn with every text of the source, total (when not nil) with
// their number first where it is known (--text, --data). Blank lines of
// standard input are passed on as Blank texts, so that outputs pair with
// input lines as predict's do.
func (s *textSource) each(ctx context.Context, env *runEnv, total func(int), fn func(text) error) error {
	if total == nil {
		total = func(int) {}
	}
	switch {
	case s.given:
		total(1)
		return fn(text{Text: s.text})
	case s.data != "":
		ds, err := s.read.readTexts(s.data, env.Stderr, s.quiet)
		if err != nil {
			return err
		}
		total(len(ds.Examples))
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
	return eachLine(ctx, env.Stdin, warnTo(env.Stderr, s.quiet), s.read.MaxTextBytes, func(t text) error { return fn(text{Text: t.Text, Line: t.Line, Blank: t.Blank}) })
}

package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io/fs"
	"path/filepath"
	"strings"
	"unicode"
	"unicode/utf8"

	"telltale/audit"
	"telltale/cnn"
	"telltale/internal/outguard"
	"telltale/report"
)

var cmdReport = &command{
	Name:      "report",
	UsageLine: "report --model MODEL --data FILE [--test FILE] --out report.html",
	Short:     "write one self-contained HTML report: data, metrics, filters, audit, explained examples",
	Long: `Report writes a single HTML file that needs nothing else to open (no network,
styles and images inline) and prints well: the dataset summary, the training
recipe and metrics, the confusion matrix and reliability diagram, the filter
catalogue, the spurious-cue audit with its evidence, and explained examples
(correct, wrong and cue-conflicting) painted by exact attribution. --data is
the data the model was trained on; the metrics are of the test split, found as
eval finds it: --test FILE, or the test split train held out of --data, or,
when --data is not the model's data, all of it with a note in the report.
On a test split too small for the audit's tests (fewer than 60 texts) the
report is still written without the audit, and says why.`,
	Options: func() options { return new(reportOptions) },
	Run:     runAs(runReport),
}

type reportOptions struct {
	model, data, test, out, title string
	read                          readOptions
	noAudit                       bool
	threads                       threadsOption
	asJSON, quiet                 bool
}

func (o *reportOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	fs.StringVar(&o.data, "data", "", "the labeled data the model was trained on")
	fs.StringVar(&o.test, "test", "", "labeled test file (default: the test split train held out of --data)")
	o.read.register(fs, true)
	fs.StringVar(&o.out, "out", "", "where to write the HTML report")
	fs.StringVar(&o.title, "title", "", "the report's title (default: from the model file's name)")
	fs.BoolVar(&o.noAudit, "no-audit", false, "leave out the spurious-cue audit")
	o.threads.register(fs)
	fs.BoolVar(&o.asJSON, "json", false, "print where the report went as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "no progress bar, notes or warnings")
}

func (o *reportOptions) check(fs *flag.FlagSet, env *runEnv) error {
	if o.out == "" {
		return usagef("--out is required: where to write the report, e.g. --out report.html")
	}
	if o.data == "" {
		return usagef("--data is required: the labeled data the model was trained on")
	}
	for _, err := range []error{requireModel(o.model), o.read.check(), o.threads.check(env.Stderr)} {
		if err != nil {
			return err
		}
	}
	return nil
}

func (o *reportOptions) files() (outputs, inputs []outguard.File) {
	return []outguard.File{{Name: "--out", Path: o.out}},
		[]outguard.File{{Name: "--model", Path: o.model}, {Name: "--data", Path: o.data}, {Name: "--test", Path: o.test},
			{Name: "the model's marks file", Path: audit.MarksPath(o.model)}}
}

func runReport(ctx context.Context, env *runEnv, o *reportOptions) error {
	m, _, err := openModel(o.model)
	if err != nil {
		return err
	}
	es, err := findTestSplit(m, o.data, o.test, &o.read, env.Stderr, o.quiet)
	if err != nil {
		return err
	}
	// The audit honours the marks kept beside the model (telltale audit --mark-…).
	marks, err := audit.ReadMarks(audit.MarksPath(o.model), m)
	if err != nil && !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	name := es.name
	if name == "all" {
		name = "evaluation"
	}
	bar := newProgressBar(env.Stderr, o.quiet)
	src := auditSource{model: o.model, data: o.data, test: o.test, read: &o.read, es: es, m: m}
	in, err := report.Gather(ctx, m, es.train, es.test, report.Options{Title: o.title, ModelPath: o.model, HeldOut: name, HeldOutNote: es.note, Warnings: es.warnings, Dev: es.dev,
		SkipAudit: o.noAudit, Threads: o.threads.N, Audit: audit.Options{Seed: cnn.DefaultRecipe().Train.Seed, // as telltale audit's default --seed: the same halves
			Marks: marks, TrainFile: o.data, HeldoutFile: cmpOr(o.test, o.data),
			HeldoutShare: src.heldoutShare(), RetrainCommands: src.retrainCommands}},
		func(stage string, done, total int) { bar.show(done, total, auditStage(stage), false) })
	bar.done()
	if err != nil && ctx.Err() != nil {
		return interrupted("the report was stopped before its figures were all measured: nothing was written to " + o.out)
	}
	if err != nil {
		return err
	}
	if in.AuditNote != "" {
		say(env.Stderr, o.quiet, "the report leaves out the cue audit: %s (--no-audit leaves it out without this note)", lowerFirst(strings.TrimSuffix(in.AuditNote, ".")))
	}
	r, err := report.New(in)
	if err != nil {
		return err
	}
	if err := report.WriteFile(o.out, r); err != nil {
		return err
	}
	abs, _ := filepath.Abs(o.out)
	if o.asJSON {
		return writeJSON(env.Stdout, map[string]string{"report": abs})
	}
	if !o.quiet {
		fmt.Fprintf(env.Stderr, "report written to %s\n", abs)
	}
	return nil
}

// lowerFirst is s with its first letter in lower case, for a sentence
// quoted inside another.
func lowerFirst(s string) string {
	r, n := utf8.DecodeRuneInString(s)
	return string(unicode.ToLower(r)) + s[n:]
}

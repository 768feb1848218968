package main

import (
	"context"
	"flag"
	"fmt"
	"path/filepath"

	"telltale/report"
)

func init() {
	register(&command{
		Name:      "report",
		UsageLine: "report --model MODEL --data FILE [--dev FILE] --out report.html",
		Short:     "write one self-contained HTML report: data, metrics, filters, audit, explained examples",
		Long: `Report writes a single HTML file that needs nothing else to open (no network,
styles and images inline) and prints well: the dataset summary, the training
recipe and metrics, the confusion matrix and reliability diagram, the filter
catalogue, the spurious-cue audit with its evidence, and explained examples
(correct, wrong and cue-conflicting) painted by exact attribution. --data is
the training file; --dev the held-out file. Without --dev, the held-out texts
are the dev split that train kept out of --data (when --data is the file the
model was trained on), else a share of --data, with a warning that it may
hold training texts.`,
		Setup: func(fs *flag.FlagSet) func(context.Context, *runEnv) error {
			var df dataFlags
			df.register(fs, "held-out file (default: the dev split train kept out of --data)")
			modelPath := fs.String("model", "", "model file written by train")
			out := fs.String("out", "", "where to write the HTML report")
			title := fs.String("title", "", "the report's title (default: from the model file's name)")
			skipAudit := fs.Bool("no-audit", false, "leave out the spurious-cue audit")
			threads := fs.Int("threads", 0, "worker goroutines (default: all cores)")
			quiet := fs.Bool("quiet", false, "no progress bar or warnings")
			asJSON := fs.Bool("json", false, "print where the report went as one JSON object")
			return func(ctx context.Context, env *runEnv) error {
				if *out == "" {
					return usagef("--out is required: where to write the report, e.g. --out report.html")
				}
				m, _, err := openModel(*modelPath)
				if err != nil {
					return err
				}
				train, held, name, note, err := df.loadForModel(m, env.Stderr, *quiet)
				if err != nil {
					return err
				}
				bar := newProgressBar(env.Stderr, *quiet)
				r, err := report.Build(ctx, m, train, held, report.Options{Title: *title, ModelPath: *modelPath, HeldOut: name, HeldOutNote: note,
					SkipAudit: *skipAudit, Threads: *threads},
					func(stage string, done, total int) { bar.show(done, total, stage, false) })
				bar.done()
				if err != nil {
					return err
				}
				if err := report.WriteFile(*out, r); err != nil {
					return err
				}
				abs, _ := filepath.Abs(*out)
				if *asJSON {
					return writeJSON(env.Stdout, map[string]string{"report": abs})
				}
				if !*quiet {
					fmt.Fprintf(env.Stderr, "report written to %s\n", abs)
				}
				return nil
			}
		},
	})
}

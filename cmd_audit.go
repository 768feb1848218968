package main

import (
	"context"
	"flag"
	"fmt"
	"path/filepath"
	"strings"

	"telltale/cnn"
	"telltale/explain"
	"telltale/internal/outguard"
	"telltale/report"
)

var cmdAudit = &command{
	Name:      "audit",
	UsageLine: "audit --model MODEL --data TRAIN [--test FILE] [--top K] [--export FILE] [--masked-out MODEL2] [--json]",
	Short:     "find the filters that key on spurious cues, with the evidence and interventions",
	Long: `Audit looks for filters that learned an artifact of how the data was collected
instead of the task. On the training split of --data it tests every token for
an association with a label (the z-statistic of Gardner et al. 2021 with a
Bonferroni-corrected threshold, and smoothed PMI) and measures how much of each
filter's strong activations rests on the flagged tokens. On the test split
(--test FILE; without it, the test split train held out of --data) it proves
each suspect by ablation (the filter masked), by counterfactual substitution of
its cue tokens with label-neutral words, and on the texts where the cue points
away from the gold label. When --data is not the model's data, all of it serves
both purposes, with a note. Flagged words that occur in the same texts are
merged into one cue (a footer line, say), and the filters keyed on each cue
are masked together too. Suspects and cues are ranked by scores whose every
part is shown, and the output ends with the mask command to try (--masked-out
writes that model).`,
	Options: func() options { return new(auditOptions) },
	Run:     runAs(runAudit),
}

type auditOptions struct {
	model, data, test, maskedOut, export string
	read                                 readOptions
	top                                  int
	seed                                 uint64
	threads                              threadsOption
	asJSON, quiet                        bool
}

func (o *auditOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	fs.StringVar(&o.data, "data", "", "the labeled data the model was trained on")
	fs.StringVar(&o.test, "test", "", "labeled test file for the interventions (default: the test split train held out of --data)")
	o.read.register(fs, true)
	intVar(fs, &o.top, "top", 10, "suspect filters reported, 1 or more (taken in turn from the cue groups, strongest group first)")
	seedVar(fs, &o.seed, "seed", cnn.DefaultRecipe().Train.Seed, "random seed of the counterfactual substitutions")
	o.threads.register(fs)
	fs.StringVar(&o.maskedOut, "masked-out", "", "also write a copy of the model with the audit's suggested filters masked to this file")
	fs.StringVar(&o.export, "export", "", "also write the suspect filters to this .csv or .jsonl file (and beside it the flagged tokens, NAME.tokens.csv, and the cue groups, NAME.groups.csv)")
	fs.BoolVar(&o.asJSON, "json", false, "print the audit as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "no progress bar, notes or warnings")
}

func (o *auditOptions) check(fs *flag.FlagSet, env *runEnv) error {
	if o.data == "" {
		return usagef("--data is required: the labeled data the model was trained on")
	}
	for _, err := range []error{requireModel(o.model), checkExport(o.export), checkAtLeast("top", o.top, 1, "suspect filters reported"),
		o.read.check(), o.threads.check(env.Stderr)} {
		if err != nil {
			return err
		}
	}
	return nil
}

// exportPaths are the files --export writes: the suspects, and beside them
// the flagged tokens and the cue groups.
func exportPaths(export string) (suspects, tokens, groups string) {
	if export == "" {
		return "", "", ""
	}
	ext := filepath.Ext(export)
	base := strings.TrimSuffix(export, ext)
	return export, base + ".tokens" + ext, base + ".groups" + ext
}

func (o *auditOptions) files() (outputs, inputs []outguard.File) {
	suspects, tokens, groups := exportPaths(o.export)
	return []outguard.File{{Name: "--export", Path: suspects}, {Name: "--export's token table", Path: tokens},
			{Name: "--export's group table", Path: groups}, {Name: "--masked-out", Path: o.maskedOut}},
		[]outguard.File{{Name: "--model", Path: o.model}, {Name: "--data", Path: o.data}, {Name: "--test", Path: o.test}}
}

func runAudit(ctx context.Context, env *runEnv, o *auditOptions) error {
	m, _, err := openModel(o.model)
	if err != nil {
		return err
	}
	es, err := findTestSplit(m, o.data, o.test, &o.read, env.Stderr, o.quiet)
	if err != nil {
		return err
	}
	say(env.Stderr, o.quiet, "%s", es.note)
	a, err := o.audit(ctx, env, m, es)
	if err != nil {
		return err
	}
	if err := o.writeFiles(env, m, a); err != nil {
		return err
	}
	if o.asJSON {
		return writeJSON(env.Stdout, a)
	}
	return a.WriteText(env.Stdout)
}

// audit runs the audit of m with evidence from es.train and interventions
// on es.test.
func (o *auditOptions) audit(ctx context.Context, env *runEnv, m *cnn.Model, es *evalSet) (*explain.Audit, error) {
	maxLen := 0
	if m.Info.Recipe != nil {
		maxLen = m.Info.Recipe.MaxLen
	}
	trainData, err := explain.NewAuditData(m, es.train, maxLen, o.threads.N)
	if err != nil {
		return nil, err
	}
	heldData, err := explain.NewAuditData(m, es.test, maxLen, o.threads.N)
	if err != nil {
		return nil, err
	}
	bar := newProgressBar(env.Stderr, o.quiet)
	a, err := explain.RunAudit(ctx, m, trainData, heldData, explain.AuditOptions{Top: o.top, Seed: o.seed, Workers: o.threads.N,
		ModelFile: o.model, HeldoutFile: o.test},
		func(stage string, done, total int) { bar.show(done, total, stage, false) })
	bar.done()
	return a, err
}

// writeFiles writes the exports and the masked model the options ask for.
func (o *auditOptions) writeFiles(env *runEnv, m *cnn.Model, a *explain.Audit) error {
	if o.export != "" {
		suspects, tokens, groups := exportPaths(o.export)
		for _, f := range []struct {
			path  string
			table *report.Table
		}{{suspects, report.SuspectTable(a)}, {tokens, report.TokenTable(a)}, {groups, report.CueGroupTable(a)}} {
			if err := report.WriteTableFile(f.path, f.table); err != nil {
				return err
			}
		}
	}
	if o.maskedOut == "" {
		return nil
	}
	if a.Plan == nil || len(a.Plan.Filters) == 0 {
		return fmt.Errorf("the audit suggests no filters to mask, so %s was not written", o.maskedOut)
	}
	masked, err := explain.MaskFilters(m, a.Plan.Filters)
	if err != nil {
		return err
	}
	if err := masked.Save(o.maskedOut); err != nil {
		return err
	}
	if !o.quiet {
		fmt.Fprintf(env.Stderr, "model with the %d suggested filters masked written to %s\n", len(a.Plan.Filters), o.maskedOut)
	}
	return nil
}

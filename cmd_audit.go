package main

import (
	"context"
	"flag"
	"fmt"
	"path/filepath"
	"strings"

	"telltale/cnn"
	"telltale/explain"
	"telltale/report"
)

func init() {
	register(&command{
		Name:      "audit",
		UsageLine: "audit --model MODEL --data TRAIN [--dev FILE] [--top K] [--json]",
		Short:     "find the filters that key on spurious cues, with the evidence and interventions",
		Long: `Audit looks for filters that learned an artifact of how the data was collected
instead of the task. On the training split (--data) it tests every token for an
association with a label (the z-statistic of Gardner et al. 2021 with a
Bonferroni-corrected threshold, and smoothed PMI) and measures how much of each
filter's strong activations rests on the flagged tokens. On the held-out split
(--dev; without it, the dev split train kept out of --data) it proves each suspect by ablation
(the filter masked), by counterfactual substitution of its cue tokens with
label-neutral words, and on the texts where the cue points away from the gold
label. Flagged words that occur in the same texts are merged into one cue
(a footer line, say), and the filters keyed on each cue are masked together
too. Suspects and cues are ranked by scores whose every part is shown, and the
output ends with the mask command to try (--masked-out writes that model).`,
		Setup: func(fs *flag.FlagSet) func(context.Context, *runEnv) error {
			var df dataFlags
			df.register(fs, "held-out file for the interventions (default: the dev split train kept out of --data)")
			modelPath := fs.String("model", "", "model file written by train")
			top := fs.Int("top", 10, "suspect filters reported (taken in turn from the cue groups, strongest group first)")
			asJSON := fs.Bool("json", false, "print the audit as one JSON object")
			threads := fs.Int("threads", 0, "worker goroutines (default: all cores)")
			quiet := fs.Bool("quiet", false, "no progress bar or warnings")
			maskedOut := fs.String("masked-out", "", "also write a copy of the model with the audit's suggested filters masked to this file")
			export := fs.String("export", "", "also write the suspect filters to this .csv or .jsonl file (and beside it the flagged tokens, NAME.tokens.csv, and the cue groups, NAME.groups.csv)")
			return func(ctx context.Context, env *runEnv) error {
				if err := checkExport(*export); err != nil {
					return err
				}
				if *maskedOut != "" {
					if same, _ := samePath(*maskedOut, *modelPath); same {
						return usagef("--masked-out %s is the input model: give a new file name, the original is never overwritten", *maskedOut)
					}
				}
				m, _, err := openModel(*modelPath)
				if err != nil {
					return err
				}
				train, held, _, _, err := df.loadForModel(m, env.Stderr, *quiet)
				if err != nil {
					return err
				}
				maxLen := 0
				if m.Info.Recipe != nil {
					maxLen = m.Info.Recipe.MaxLen
				}
				trainData, err := explain.NewAuditData(m, train, maxLen, *threads)
				if err != nil {
					return err
				}
				heldData, err := explain.NewAuditData(m, held, maxLen, *threads)
				if err != nil {
					return err
				}
				bar := newProgressBar(env.Stderr, *quiet)
				a, err := explain.RunAudit(ctx, m, trainData, heldData, explain.AuditOptions{Top: *top, Seed: df.Seed, Workers: *threads,
					ModelFile: *modelPath, HeldoutFile: df.Dev},
					func(stage string, done, total int) { bar.show(done, total, stage, false) })
				bar.done()
				if err != nil {
					return err
				}
				if *export != "" {
					if err := report.WriteTableFile(*export, report.SuspectTable(a)); err != nil {
						return err
					}
					ext := filepath.Ext(*export)
					base := strings.TrimSuffix(*export, ext)
					if err := report.WriteTableFile(base+".tokens"+ext, report.TokenTable(a)); err != nil {
						return err
					}
					if err := report.WriteTableFile(base+".groups"+ext, report.CueGroupTable(a)); err != nil {
						return err
					}
				}
				if *maskedOut != "" {
					if a.Plan == nil || len(a.Plan.Filters) == 0 {
						return fmt.Errorf("the audit suggests no filters to mask, so %s was not written", *maskedOut)
					}
					masked, err := explain.MaskFilters(m, a.Plan.Filters)
					if err != nil {
						return err
					}
					if err := masked.Save(*maskedOut); err != nil {
						return err
					}
					if !*quiet {
						fmt.Fprintf(env.Stderr, "model with the %d suggested filters masked written to %s\n", len(a.Plan.Filters), *maskedOut)
					}
				}
				if *asJSON {
					return writeJSON(env.Stdout, a)
				}
				return a.WriteText(env.Stdout)
			}
		},
	})
	register(&command{
		Name:      "mask",
		UsageLine: "mask --model MODEL --filters 12,40,77 --out MODEL2 [--data FILE]",
		Short:     "write a copy of a model with some filters masked (the original is kept)",
		Long: `Mask writes a new model file in which the listed filters are switched off
(their pooled units held at zero). The original model file is never
overwritten. With --data, both models are evaluated on that labeled file
side by side.`,
		Setup: func(fs *flag.FlagSet) func(context.Context, *runEnv) error {
			modelPath := fs.String("model", "", "model file written by train")
			filters := fs.String("filters", "", "global filter numbers to mask, comma-separated")
			out := fs.String("out", "", "where to write the masked model (must differ from --model)")
			var df dataFlags
			df.register(fs, "not used by mask")
			asJSON := fs.Bool("json", false, "print the comparison as one JSON object")
			quiet := fs.Bool("quiet", false, "print nothing but errors (and --json output)")
			return func(ctx context.Context, env *runEnv) error {
				if *out == "" {
					return usagef("--out is required: where to write the masked model")
				}
				if same, _ := samePath(*out, *modelPath); same {
					return usagef("--out %s is the input model: give a new file name, the original is never overwritten", *out)
				}
				gs, err := parseInts(*filters, "filters")
				if err != nil {
					return err
				}
				if len(gs) == 0 {
					return usagef("--filters is required: e.g. --filters 12,40 (the numbers shown by 'telltale audit' or 'telltale filters')")
				}
				m, enc, err := openModel(*modelPath)
				if err != nil {
					return err
				}
				if err := checkOutPath(*out); err != nil {
					return err
				}
				masked, err := explain.MaskFilters(m, gs)
				if err != nil {
					return usageError{err.Error()}
				}
				if err := masked.Save(*out); err != nil {
					return err
				}
				if !*quiet {
					fmt.Fprintf(env.Stderr, "masked filters %v; model written to %s (%s unchanged)\n", gs, *out, *modelPath)
				}
				if df.Data == "" {
					if *asJSON {
						return writeJSON(env.Stdout, map[string]any{"model": *out, "masked": gs})
					}
					return nil
				}
				ds, err := df.read(df.Data, env.Stderr, *quiet)
				if err != nil {
					return err
				}
				data, err := cnn.EncodeDataset(enc, ds, m.Labels, 0)
				if err != nil {
					return err
				}
				return compareModels(env, data, []string{*modelPath, *out}, []*cnn.Model{m, masked}, *asJSON)
			}
		},
	})
	register(&command{
		Name:      "compare",
		UsageLine: "compare --models A,B[,…] --data FILE [--json]",
		Short:     "evaluate several models side by side on the same labeled file",
		Long: `Compare evaluates each model on the same labeled file and prints their
metrics side by side, e.g. a model against its masked copy, or against one
retrained with --mask-tokens. The models must share their labels; each uses its
own tokenizer and vocabulary.`,
		Setup: func(fs *flag.FlagSet) func(context.Context, *runEnv) error {
			models := fs.String("models", "", "model files, comma-separated")
			var df dataFlags
			df.register(fs, "not used by compare")
			asJSON := fs.Bool("json", false, "print the comparison as one JSON object")
			quiet := fs.Bool("quiet", false, "print no warnings")
			return func(ctx context.Context, env *runEnv) error {
				paths := splitList(*models)
				if len(paths) < 2 {
					return usagef("--models needs at least two model files, comma-separated")
				}
				if df.Data == "" {
					return usagef("--data is required: the labeled file to compare the models on")
				}
				ds, err := df.read(df.Data, env.Stderr, *quiet)
				if err != nil {
					return err
				}
				rows := make([]compareRow, 0, len(paths))
				var first []int
				var labels []string
				for i, p := range paths {
					m, enc, err := openModel(p)
					if err != nil {
						return err
					}
					if i == 0 {
						labels = m.Labels
					} else if strings.Join(m.Labels, "\x00") != strings.Join(labels, "\x00") {
						return usagef("%s has the labels %s but %s has %s: compare needs models with the same labels in the same order",
							p, strings.Join(m.Labels, ", "), paths[0], strings.Join(labels, ", "))
					}
					data, err := cnn.EncodeDataset(enc, ds, m.Labels, 0)
					if err != nil {
						return err
					}
					met, pred, err := cnn.Evaluate(m, data, 0)
					if err != nil {
						return err
					}
					row := compareRow{Model: p, Metrics: met}
					if i == 0 {
						first = pred
					} else {
						row.Flipped = flippedShare(first, pred)
					}
					rows = append(rows, row)
				}
				return writeComparison(env, rows, *asJSON)
			}
		},
	})
}

type compareRow struct {
	Model   string      `json:"model"`
	Metrics cnn.Metrics `json:"metrics"`
	// Flipped is the share of texts whose prediction differs from the first model's.
	Flipped float64 `json:"flipped_vs_first"`
}

// compareModels evaluates models that share one encoder on data.
func compareModels(env *runEnv, data cnn.Data, names []string, ms []*cnn.Model, asJSON bool) error {
	rows := make([]compareRow, len(ms))
	var first []int
	for i, m := range ms {
		met, pred, err := cnn.Evaluate(m, data, 0)
		if err != nil {
			return err
		}
		rows[i] = compareRow{Model: names[i], Metrics: met}
		if i == 0 {
			first = pred
			continue
		}
		rows[i].Flipped = flippedShare(first, pred)
	}
	return writeComparison(env, rows, asJSON)
}

func writeComparison(env *runEnv, rows []compareRow, asJSON bool) error {
	if asJSON {
		return writeJSON(env.Stdout, rows)
	}
	w := env.Stdout
	fmt.Fprintf(w, "%-40s  %8s  %8s  %11s  %6s  %8s\n", "model", "accuracy", "macro-F1", "weighted-F1", "ECE", "flipped")
	for i, r := range rows {
		flip := "-"
		if i > 0 && r.Flipped >= 0 {
			flip = fmt.Sprintf("%.1f%%", 100*r.Flipped)
		}
		fmt.Fprintf(w, "%-40s  %8.4f  %8.4f  %11.4f  %6.4f  %8s\n", oneLine(r.Model, 40), r.Metrics.Accuracy, r.Metrics.MacroF1, r.Metrics.WeightedF1, r.Metrics.ECE, flip)
	}
	if len(rows) > 0 {
		fmt.Fprintf(w, "\nper-class F1\n%-20s", "label")
		for i := range rows {
			fmt.Fprintf(w, "  %8s", fmt.Sprintf("model %d", i+1))
		}
		fmt.Fprintln(w)
		for c, pc := range rows[0].Metrics.PerClass {
			fmt.Fprintf(w, "%-20s", pc.Label)
			for _, r := range rows {
				if c < len(r.Metrics.PerClass) {
					fmt.Fprintf(w, "  %8.4f", r.Metrics.PerClass[c].F1)
				}
			}
			fmt.Fprintln(w)
		}
	}
	return nil
}

// samePath reports whether a and b name the same file (or would).
func samePath(a, b string) (bool, error) {
	pa, err := filepath.Abs(a)
	if err != nil {
		return false, err
	}
	pb, err := filepath.Abs(b)
	if err != nil {
		return false, err
	}
	return filepath.Clean(pa) == filepath.Clean(pb), nil
}

// flippedShare is the share of positions where b's prediction differs from a's.
func flippedShare(a, b []int) float64 {
	flips := 0
	for j := range b {
		if b[j] != a[j] {
			flips++
		}
	}
	return float64(flips) / float64(max(1, len(b)))
}

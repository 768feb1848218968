package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/report"
)

func init() {
	register(&command{
		Name:      "eval",
		UsageLine: "eval --model MODEL --data FILE [--text-col C] [--label-col C] [--json]",
		Short:     "evaluate a model on labeled data: accuracy, per-class F1, confusion matrix, calibration",
		Long: `Eval runs a saved model on every text of --data and prints accuracy,
per-class precision, recall and F1 with support, macro- and weighted-F1, the
confusion matrix (rows: gold label, columns: predicted) and the expected
calibration error over equal-width confidence bins.`,
		Setup: func(fs *flag.FlagSet) func(context.Context, *runEnv) error {
			var df dataFlags
			df.register(fs, "not used by eval")
			modelPath := fs.String("model", "", "model file written by train")
			asJSON := fs.Bool("json", false, "print the metrics as one JSON object")
			bins := fs.Int("bins", cnn.DefaultBins, "equal-width bins for the calibration error (1 or more)")
			threads := fs.Int("threads", 0, "worker goroutines (default: all cores)")
			quiet := fs.Bool("quiet", false, "print no warnings")
			export := fs.String("export", "", "also write every prediction with its probabilities to this .csv or .jsonl file")
			return func(ctx context.Context, env *runEnv) error {
				if err := checkExport(*export); err != nil {
					return err
				}
				if *bins < 1 {
					return usagef("--bins %d: give at least 1 bin", *bins)
				}
				m, enc, err := openModel(*modelPath)
				if err != nil {
					return err
				}
				if df.Data == "" {
					return usagef("--data is required: the labeled file to evaluate on")
				}
				ds, err := df.read(df.Data, env.Stderr, *quiet)
				if err != nil {
					return err
				}
				data, err := cnn.EncodeDataset(enc, ds, m.Labels, *threads)
				if err != nil {
					return fmt.Errorf("%w (the model knows the labels %s)", err, strings.Join(m.Labels, ", "))
				}
				met, _, err := cnn.Evaluate(m, data, *threads)
				if err != nil {
					return err
				}
				if *bins != cnn.DefaultBins || *export != "" {
					probs := m.Probabilities(data.IDs, *threads)
					met = metricsWithBins(m, data, probs, *bins)
					if *export != "" {
						if err := report.WriteTableFile(*export, report.PredictionTable(m.Labels, ds.Texts(), data.Labels, probs)); err != nil {
							return err
						}
					}
				}
				if *asJSON {
					return writeJSON(env.Stdout, met)
				}
				writeMetrics(env.Stdout, met)
				return nil
			}
		},
	})
	register(&command{
		Name:      "predict",
		UsageLine: "predict --model MODEL [--text \"...\"] [--json]     (without --text: one text per stdin line)",
		Short:     "label new text with a saved model",
		Long: `Predict labels --text, or every line of standard input (blank lines are
skipped), and prints the label and the probability of each class.`,
		Setup: func(fs *flag.FlagSet) func(context.Context, *runEnv) error {
			modelPath := fs.String("model", "", "model file written by train")
			text := fs.String("text", "", "the text to label (default: one text per line of standard input)")
			asJSON := fs.Bool("json", false, "print one JSON object per text")
			export := fs.String("export", "", "also write the predictions to this .csv or .jsonl file")
			fs.Bool("quiet", false, "accepted for symmetry: predict prints no progress or warnings")
			return func(ctx context.Context, env *runEnv) error {
				if err := checkExport(*export); err != nil {
					return err
				}
				m, enc, err := openModel(*modelPath)
				if err != nil {
					return err
				}
				pr := m.NewPredictor()
				out := make([]cnn.Output, 1)
				var texts []string
				var probs [][]float32
				emit := func(t string) error {
					_, ids := enc.Encode(t)
					pr.Run([][]int32{ids}, out)
					if *export != "" {
						texts, probs = append(texts, t), append(probs, append([]float32(nil), out[0].Probs...))
					}
					return writePrediction(env.Stdout, m, t, out[0].Probs, *asJSON)
				}
				var err2 error
				if isSet(fs, "text") {
					if strings.TrimSpace(*text) == "" {
						return usagef("--text is empty: give a text, or leave --text out to read one text per line of standard input")
					}
					err2 = emit(*text)
				} else {
					err2 = eachLine(ctx, env.Stdin, emit)
				}
				if err2 != nil || *export == "" {
					return err2
				}
				return report.WriteTableFile(*export, report.PredictionTable(m.Labels, texts, nil, probs))
			}
		},
	})
}

// openModel loads a model file and rebuilds its encoder.
func openModel(path string) (*cnn.Model, *corpus.Encoder, error) {
	if path == "" {
		return nil, nil, usagef("--model is required: a model file written by 'telltale train'")
	}
	m, err := cnn.Load(path)
	if err != nil {
		return nil, nil, err
	}
	enc, err := m.Encoder()
	if err != nil {
		return nil, nil, fmt.Errorf("%s: rebuilding its tokenizer: %w", path, err)
	}
	return m, enc, nil
}

func metricsWithBins(m *cnn.Model, d cnn.Data, probs [][]float32, bins int) cnn.Metrics {
	pred := make([]int, len(probs))
	conf := make([]float64, len(probs))
	for i, p := range probs {
		best := 0
		for c := range p {
			if p[c] > p[best] {
				best = c
			}
		}
		pred[i], conf[i] = best, float64(p[best])
	}
	return cnn.ComputeMetrics(m.Labels, d.Labels, pred, conf, bins)
}

type prediction struct {
	Text          string             `json:"text"`
	Label         string             `json:"label"`
	Probabilities map[string]float64 `json:"probabilities"`
}

func writePrediction(w io.Writer, m *cnn.Model, text string, probs []float32, asJSON bool) error {
	best := 0
	for c := range probs {
		if probs[c] > probs[best] {
			best = c
		}
	}
	if asJSON {
		p := prediction{Text: text, Label: m.Labels[best], Probabilities: map[string]float64{}}
		for c, l := range m.Labels {
			p.Probabilities[l] = float64(probs[c])
		}
		b, err := jsonLine(p)
		if err != nil {
			return err
		}
		_, err = w.Write(b)
		return err
	}
	var sb strings.Builder
	fmt.Fprintf(&sb, "%s\t", m.Labels[best])
	for c, l := range m.Labels {
		if c > 0 {
			sb.WriteString(" ")
		}
		fmt.Fprintf(&sb, "%s=%.3f", l, probs[c])
	}
	fmt.Fprintf(&sb, "\t%s\n", oneLine(text, 60))
	_, err := io.WriteString(w, sb.String())
	return err
}

// writeMetrics prints an evaluation as readable tables.
func writeMetrics(w io.Writer, m cnn.Metrics) {
	fmt.Fprintf(w, "accuracy %.4f   macro-F1 %.4f   weighted-F1 %.4f   ECE %.4f   (%d texts)\n\n", m.Accuracy, m.MacroF1, m.WeightedF1, m.ECE, m.N)
	width := 5
	for i, l := range m.Labels {
		width = max(width, len(fmt.Sprintf("[%d] %s", i, l)))
	}
	fmt.Fprintf(w, "%-*s  %9s  %6s  %6s  %7s\n", width, "label", "precision", "recall", "F1", "support")
	for _, c := range m.PerClass {
		fmt.Fprintf(w, "%-*s  %9.4f  %6.4f  %6.4f  %7d\n", width, c.Label, c.Precision, c.Recall, c.F1, c.Support)
	}
	fmt.Fprintf(w, "\nconfusion matrix (rows: gold, columns: predicted)\n%-*s", width, "")
	for i := range m.Labels {
		fmt.Fprintf(w, "  %6s", fmt.Sprintf("[%d]", i))
	}
	fmt.Fprintln(w)
	for i, row := range m.Confusion {
		fmt.Fprintf(w, "%-*s", width, fmt.Sprintf("[%d] %s", i, m.Labels[i]))
		for _, n := range row {
			fmt.Fprintf(w, "  %6d", n)
		}
		fmt.Fprintln(w)
	}
}

// checkExport refuses an export path of an unknown format before any work.
func checkExport(path string) error {
	if path == "" {
		return nil
	}
	if _, err := report.ExportFormat(path); err != nil {
		return usagef("--export %s: the file must end in .csv or .jsonl", path)
	}
	return nil
}

package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/outguard"
	"telltale/report"
)

var cmdEval = &command{
	Name:      "eval",
	UsageLine: "eval --model MODEL (--data FILE | --test FILE) [--text-col C] [--label-col C] [--export FILE] [--json]",
	Short:     "evaluate a model on labeled data: accuracy, per-class F1, confusion matrix, calibration",
	Long: `Eval runs a saved model on labeled texts and prints accuracy with its 95%
Wilson interval, macro-F1 with its 95% bootstrap interval over texts,
per-class precision and recall (Wilson intervals) and F1 with support,
weighted-F1, the confusion matrix (rows: gold label, columns: predicted)
and the expected calibration error over equal-width confidence bins, with
bootstrap intervals. Where a class has fewer than 10 errors or fewer than
10 right texts, the bootstrap is too narrow (its resamples hold only the
few errors seen), so its F1's interval is an exact Clopper–Pearson one
instead, and the macro-F1's is an exact bound; so is the weighted F1's
where fewer than 10 texts in all are errors or right. When the model
file carries the linear baseline train fits beside the CNN, the baseline's
accuracy and macro-F1 are shown beside the CNN's, with the exact McNemar
test between the two, and what to try where the baseline is significantly
ahead, as train shows them.

The texts: with --test FILE, those. With --data FILE alone, when it holds the
data the model was trained on, the test split train held out of it (or the test
file train was given); with other data, all of it, with a note that it may hold
texts the model was trained on. A warning (in --json too, even with --quiet)
says when the texts are the model's training data or hold some of its
training texts, found in --data or, without it, in the data file the model
records (a note says when that cannot be checked), when the test file
the model was trained with has changed since, and when they hold the
choosing half of an audit's held-out texts, which chose a retrained or
masked model's cues; no texts to evaluate on (an empty test split) is
refused.

The texts may hold fewer labels than the model knows (one label measures its
recall; a label the model does not know is an error): a label with no text
has no recall or F1, and a label no text was predicted as no precision
(shown "–", null in JSON, without an interval). Macro-F1 is scikit-learn's
(f1_score, average='macro'): the mean F1 of the labels among the gold or
predicted ones, a label predicted but with no text counting with F1 0.`,
	Options: func() options { return new(evalOptions) },
	Run:     runAs(runEval),
}

type evalOptions struct {
	model, data, test string
	read              readOptions
	bins              int
	threads           threadsOption
	export            string
	asJSON, quiet     bool
}

func (o *evalOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	registerEvalData(fs, &o.data, &o.test)
	o.read.register(fs, true)
	intVar(fs, &o.bins, "bins", cnn.DefaultBins, "equal-width bins for the calibration error (1 or more)")
	o.threads.register(fs)
	fs.StringVar(&o.export, "export", "", "also write every prediction with its probabilities to this .csv or .jsonl file")
	fs.BoolVar(&o.asJSON, "json", false, "print the metrics as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "print no notes or warnings")
}

// registerEvalData adds --data and --test as the commands that evaluate a
// saved model read them.
func registerEvalData(fs *flag.FlagSet, data, test *string) {
	fs.StringVar(data, "data", "", "labeled data: the test split train held out of it when it is the model's data, else all of it")
	fs.StringVar(test, "test", "", "labeled test file to evaluate on")
}

func (o *evalOptions) check(fs *flag.FlagSet, env *runEnv) error {
	for _, err := range []error{requireModel(o.model), requireEvalData(o.data, o.test), checkExport(o.export),
		checkAtLeast("bins", o.bins, 1, "bins of the calibration error"), o.read.check(), o.threads.check(env.Stderr)} {
		if err != nil {
			return err
		}
	}
	return nil
}

func (o *evalOptions) files() (outputs, inputs []outguard.File) {
	return []outguard.File{{Name: "--export", Path: o.export}},
		[]outguard.File{{Name: "--model", Path: o.model}, {Name: "--data", Path: o.data}, {Name: "--test", Path: o.test}}
}

// evalOutput is eval's JSON: the metrics and the texts they are of, the
// figures with their intervals and the baseline beside the CNN.
type evalOutput struct {
	cnn.Metrics
	Split     string `json:"split"` // "test", or "all" when all of --data
	SplitNote string `json:"split_note"`
	// Warnings say why the texts may not be held out, or not those train
	// evaluated on (a test file that changed since training).
	Warnings []string    `json:"warnings,omitempty"`
	Figures  cnn.Figures `json:"figures"`
	// Intervals are those of the weighted F1, the ECE and every class's
	// precision, recall and F1 (the headline's are in Figures).
	Intervals cnn.MetricIntervals `json:"intervals"`
	Baseline  *baselineJSON       `json:"baseline,omitempty"`
	// BaselineNote says why the model carries no baseline, when training
	// was stopped before it was fitted (missingBaseline).
	BaselineNote string `json:"baseline_note,omitempty"`
}

func runEval(ctx context.Context, env *runEnv, o *evalOptions) error {
	m, enc, err := openModel(o.model)
	if err != nil {
		return err
	}
	es, err := findTestSplit(m, o.data, o.test, &o.read, env.Stderr, o.quiet)
	if err != nil {
		return err
	}
	if m, enc, err = m.WithUnseen(enc, es.test.Texts()); err != nil { // unseen words' own rows, with --chars
		return err
	}
	data, err := encodeFor(m, enc, es.test, o.threads.N)
	if err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	probs := m.Probabilities(data.IDs, o.threads.N)
	met := metricsWithBins(m, data, probs, o.bins)
	cmp, err := compareWithBaseline(m, es.test, o.threads.N)
	if err != nil {
		return err
	}
	figures := cnn.FiguresOf(met, cmp)
	if o.export != "" {
		if err := report.WriteTableFile(o.export, predictionTable(m.Labels, labeledTexts(es.test), probs)); err != nil {
			return err
		}
	}
	if o.asJSON {
		return writeJSON(env.Stdout, evalOutput{Metrics: met, Split: es.name, SplitNote: es.note, Warnings: es.warnings, Figures: figures,
			Intervals: cnn.IntervalsOf(met), Baseline: baselineOf(m, cmp), BaselineNote: missingBaseline(m)})
	}
	writeFigures(env.Stdout, splitHeading(es.name, met.N), figures, baselineOf(m, cmp))
	fmt.Fprint(env.Stdout, notHeldOutLine(es.warnings))
	writeMissingBaseline(env.Stdout, missingBaseline(m))
	var why string
	if len(es.warnings) > 0 {
		why = "texts that the warnings say are not all held-out texts"
	}
	fmt.Fprint(env.Stdout, adviceOnHeldOut(baselineAdvice(m, figures.McNemar), why))
	fmt.Fprintln(env.Stdout)
	writeMetrics(env.Stdout, met, cnn.IntervalsOf(met), o.bins)
	return nil
}

// splitHeading names the texts a command evaluated: the test split, or all
// of --data.
// notHeldOut says, under figures, that the texts are not all held-out
// texts for the model, where the warnings (on stderr unless --quiet, and
// in the JSON) say why.
const notHeldOut = "not all held-out texts for this model: the warnings say why, on stderr and in --json"

// notHeldOutLine is "" without warnings, else a line that says notHeldOut
// under the figures, so that they say it even with --quiet.
func notHeldOutLine(warnings []string) string {
	if len(warnings) == 0 {
		return ""
	}
	return "  (" + notHeldOut + ")\n"
}

func splitHeading(split string, n int) string {
	if split == "all" {
		return fmt.Sprintf("all %d texts of --data", n)
	}
	return fmt.Sprintf("%s split, %d texts", split, n)
}

// encodeFor encodes ds for model m, saying which labels the model knows
// when ds has another.
func encodeFor(m *cnn.Model, enc *corpus.Encoder, ds *corpus.Dataset, threads int) (cnn.Data, error) {
	data, err := cnn.EncodeDataset(enc, ds, m.Labels, threads)
	if err != nil {
		return data, fmt.Errorf("%w (the model knows the labels %s)", err, listed(m.Labels))
	}
	return data, nil
}

// requireModel refuses a missing --model.
func requireModel(path string) error {
	if path == "" {
		return usagef("--model is required: a model file written by 'telltale train'")
	}
	return nil
}

// requireEvalData refuses a command line with neither --data nor --test.
func requireEvalData(data, test string) error {
	if data == "" && test == "" {
		return usagef("--data or --test is required: labeled texts to evaluate the model on")
	}
	return nil
}

// openModel loads a model file and rebuilds its encoder.
func openModel(path string) (*cnn.Model, *corpus.Encoder, error) {
	return openModelFrom(path, cnn.Load)
}

// openCNN loads a model file without the linear baseline it may carry, for
// the commands that only run the CNN, and rebuilds its encoder.
func openCNN(path string) (*cnn.Model, *corpus.Encoder, error) {
	return openModelFrom(path, cnn.LoadWithoutBaseline)
}

func openModelFrom(path string, load func(string) (*cnn.Model, error)) (*cnn.Model, *corpus.Encoder, error) {
	m, err := load(path)
	if err != nil {
		return nil, nil, err
	}
	enc, err := m.Encoder()
	if err != nil {
		return nil, nil, fmt.Errorf("%s: rebuilding its tokenizer: %w", path, err)
	}
	return m, enc, nil
}

// metricsWithBins evaluates the probabilities probs of d's texts with bins
// calibration bins.
func metricsWithBins(m *cnn.Model, d cnn.Data, probs [][]float32, bins int) cnn.Metrics {
	pred := make([]int, len(probs))
	conf := make([]float64, len(probs))
	for i, p := range probs {
		best := argmax(p)
		pred[i], conf[i] = best, float64(p[best])
	}
	return cnn.ComputeMetrics(m.Labels, d.Labels, pred, conf, bins)
}

func argmax(p []float32) int {
	best := 0
	for c := range p {
		if p[c] > p[best] {
			best = c
		}
	}
	return best
}

// writeMetrics prints an evaluation as readable tables, after the
// figures writeFigures prints, each measured figure with its interval iv.
func writeMetrics(w io.Writer, m cnn.Metrics, iv cnn.MetricIntervals, bins int) {
	fmt.Fprintf(w, "weighted-F1 %s   ECE %s (%d bins)   (%g%% intervals: Wilson for precision and recall, bootstrap over texts for F1 and ECE, exact for an F1 with under 10 errors or right texts: a class's by Clopper–Pearson, the macro-F1's a Bonferroni bound, the weighted F1's a bound over the class shares)\n\n",
		iv.WeightedF1, eceText(m.ECE, iv.ECE), bins, 100*cnn.IntervalLevel)
	width := 5
	for i, l := range m.Labels {
		width = max(width, len(fmt.Sprintf("[%d] %s", i, l)))
	}
	fmt.Fprintf(w, "%-*s  %-19s  %-19s  %-19s  %7s\n", width, "label", "precision", "recall", "F1", "support")
	for i, c := range m.PerClass {
		ci := iv.PerClass[i]
		fmt.Fprintf(w, "%-*s  %-19s  %-19s  %-19s  %7d\n", width, c.Label, ci.Precision, ci.Recall, ci.F1, c.Support)
	}
	if note := report.DescribeUndefined(m); note != "" {
		fmt.Fprintln(w, strings.Replace(note, ". Macro-F1", ".\nMacro-F1", 1)) // a line each
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

// eceText is the ECE with its interval, or the point value with why it has
// none.
func eceText(ece float64, iv *cnn.CalibrationFigure) string {
	if iv == nil {
		return fmt.Sprintf("%.3f (no interval: the confidences are not known)", ece)
	}
	return iv.String()
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

// labeledTexts are ds's examples as predict's export takes them (its
// predictionTable): each with the line of its file where it starts (or its
// file, for a folder of texts) and its label as the gold label.
func labeledTexts(ds *corpus.Dataset) []text {
	texts := make([]text, len(ds.Examples))
	for i, e := range ds.Examples {
		texts[i] = text{Text: e.Text, Line: e.Line, File: e.File, Gold: e.Label}
	}
	return texts
}

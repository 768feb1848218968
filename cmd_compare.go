package main

import (
	"cmp"
	"context"
	"flag"
	"fmt"
	"io"
	"slices"
	"strings"
	"unicode/utf8"

	"telltale/cnn"
	"telltale/internal/outguard"
)

var cmdCompare = &command{
	Name:      "compare",
	UsageLine: "compare --models A,B[,…] (--data FILE | --test FILE) [--json]",
	Short:     "evaluate several models side by side on the same labeled texts",
	Long: `Compare evaluates each model on the same labeled texts and prints their
metrics side by side, e.g. a model against its masked copy, or against one
retrained with --mask-tokens: accuracy with its 95% Wilson interval,
macro-F1, weighted-F1, per-class F1 and the calibration error with their 95%
bootstrap intervals over texts (exact bounds for the F1s where a class has
fewer than 10 errors or 10 right texts, as eval says), the share of
predictions that differ from the first model's with its Wilson interval,
and the exact McNemar test of each model against the first (the texts only
one of the two labels right).
A model whose file carries the linear baseline train fits beside the CNN is
then shown beside it, with the exact McNemar test between the two, as train
shows them. The texts are found as eval finds them for the first model:
--test FILE, or the test split of its own --data, or all of other data.
Every model gets eval's checks of them, with warnings of its own: when they
are its training data or hold texts of its training split (found in --data,
or in the data file the model records), when they are its test file
changed since training, and when they hold the choosing half of an
audit's held-out texts, which chose its cues (retrained or masked); a note
says when that cannot be checked. The models
must share their labels; each uses its own tokenizer and vocabulary.`,
	Options: func() options { return new(compareOptions) },
	Run:     runAs(runCompare),
}

type compareOptions struct {
	models, data, test string
	read               readOptions
	asJSON, quiet      bool

	paths []string
}

func (o *compareOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.models, "models", "", "model files, comma-separated")
	registerEvalData(fs, &o.data, &o.test)
	o.read.register(fs, true)
	fs.BoolVar(&o.asJSON, "json", false, "print the comparison as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "print no notes or warnings")
}

func (o *compareOptions) check(fs *flag.FlagSet, env *runEnv) error {
	var err error
	if o.paths, err = listItems("models", o.models); err != nil {
		return err
	}
	if len(o.paths) < 2 {
		return usagef("--models needs at least two model files, comma-separated")
	}
	if err := requireEvalData(o.data, o.test); err != nil {
		return err
	}
	return o.read.check()
}

func (o *compareOptions) files() (outputs, inputs []outguard.File) {
	inputs = []outguard.File{{Name: "--data", Path: o.data}, {Name: "--test", Path: o.test}}
	for _, p := range o.paths {
		inputs = append(inputs, outguard.File{Name: "--models", Path: p})
	}
	return nil, inputs
}

func runCompare(ctx context.Context, env *runEnv, o *compareOptions) error {
	models := make([]*cnn.Model, len(o.paths))
	for i, p := range o.paths {
		m, _, err := openModel(p)
		if err != nil {
			return err
		}
		if i > 0 && strings.Join(m.Labels, "\x00") != strings.Join(models[0].Labels, "\x00") {
			return usagef("%s has the labels %s but %s has %s: compare needs models with the same labels in the same order",
				p, listed(m.Labels), o.paths[0], listed(models[0].Labels))
		}
		models[i] = m
		if j := slices.IndexFunc(o.paths[:i], func(q string) bool { return sameFile(q, p) }); j >= 0 {
			say(env.Stderr, o.quiet, "model %d (%s) is the file of model %d again: its figures are the same", i+1, p, j+1)
		}
	}
	es, err := findTestSplitOf(models[0], o.paths[0], o.data, o.test, &o.read, env.Stderr, o.quiet)
	if err != nil {
		return err
	}
	warnings, notes := make([][]string, len(models)), make([]string, len(models))
	warnings[0] = es.warnings
	if models[0].Info.Splits == nil {
		// The first model (an imported one) records no splits: the texts
		// are all of --data, unchecked; the row keeps the note for --json.
		notes[0] = es.note
		if j := slices.IndexFunc(models[1:], func(m *cnn.Model) bool { return m.Info.Splits != nil }); j >= 0 && o.test == "" {
			say(env.Stderr, o.quiet, "to compare on the test split a model was trained with, give that model first (%s), or a test file with --test", o.paths[j+1])
		}
	}
	for i, m := range models[1:] {
		warnings[i+1], notes[i+1] = o.checksFor(m, o.paths[i+1], models[0], es)
		if notes[i+1] != "" {
			say(env.Stderr, o.quiet, "%s", notes[i+1])
		}
		printHeldOut(env.Stderr, o.quiet, o.paths[i+1], warnings[i+1])
	}
	rows := make([]compareRow, 0, len(models))
	var first []int
	for i, m := range models {
		enc, err := m.Encoder()
		if err != nil {
			return fmt.Errorf("%s: rebuilding its tokenizer: %w", o.paths[i], err)
		}
		if m, enc, err = m.WithUnseen(enc, es.test.Texts()); err != nil { // unseen words' own rows, with --chars
			return fmt.Errorf("%s: %w", o.paths[i], err)
		}
		data, err := encodeFor(m, enc, es.test, 0)
		if err != nil {
			return err
		}
		met, pred, err := cnn.Evaluate(m, data, 0)
		if err != nil {
			return err
		}
		c, err := compareWithBaseline(m, es.test, 0)
		if err != nil {
			return fmt.Errorf("%s: %w", o.paths[i], err)
		}
		row := compareRow{Model: o.paths[i], Metrics: met, Figures: cnn.FiguresOf(met, c), Intervals: cnn.IntervalsOf(met), Baseline: baselineOf(m, c),
			BaselineNote: missingBaseline(m)}
		if i == 0 {
			first = pred
		} else {
			row.setVsFirst(data.Labels, first, pred)
		}
		row.Warnings, row.Note = warnings[i], notes[i]
		rows = append(rows, row)
	}
	return writeComparison(env, rows, splitHeading(es.name, len(es.test.Examples)), o.asJSON)
}

// checksFor makes for model m (at path), not the first (first), the
// checks findTestSplit made for the first on the texts it found (es):
// with --data alone, es's warnings when m was trained with first's splits;
// else whether the texts are m's training data or hold texts of its
// training split, and, when they are a file's (--test, or the test file
// the first recorded), whether that file is m's recorded test file changed
// since training. m's own choosing-half warnings (cuesChosen) follow. The
// training split is found in --data or in the data file m records
// (recordedTraining); when it cannot be, note says so.
func (o *compareOptions) checksFor(m *cnn.Model, path string, first *cnn.Model, es *evalSet) (warnings []string, note string) {
	rec := m.Info.Splits
	own := cuesChosen(&m.Info, es.test) // m's own retraining's choosing half, if any
	if o.test == "" && sameSplits(rec, first.Info.Splits) {
		return append(es.splitWarnings(), own...), ""
	}
	defer func() { warnings = append(warnings, own...) }()
	name := cmp.Or(es.file, o.data)
	if es.file == "" && es.name == "test" {
		name = fmt.Sprintf("the test split of %s (that of %s)", o.data, o.paths[0])
	}
	train, why := recordedTraining(rec, es.all, &o.read)
	if w := trainingWarning(rec, es.test, name, train); w != "" {
		warnings = append(warnings, w)
	}
	if rec != nil && es.file != "" && absPath(es.file) == rec.TestFile {
		if w := changedSince("test", es.file, rec.TestFingerprint, es.test); w != "" {
			warnings = append(warnings, w)
		}
	}
	if len(warnings) == 0 && train == nil {
		note = fmt.Sprintf("whether the texts hold texts of the training split of %s cannot be checked (%s): its figures %s",
			path, lowerFirst(why), mayHoldTraining)
	}
	return warnings, note
}

// sameSplits reports whether two models' splits were made the same way
// from the same data. The seed counts only where a split was drawn from
// the data (a share held out); with both splits given as files it draws
// nothing.
func sameSplits(a, b *cnn.SplitRecord) bool {
	if a == nil || b == nil {
		return a == b
	}
	drawn := a.DevFrac > 0 || a.TestFrac > 0
	return a.Fingerprint == b.Fingerprint && a.DevFrac == b.DevFrac && a.TestFrac == b.TestFrac && (a.Seed == b.Seed || !drawn) &&
		sameFileSplit(a.DevFile, b.DevFile, a.DevFingerprint, b.DevFingerprint) &&
		sameFileSplit(a.TestFile, b.TestFile, a.TestFingerprint, b.TestFingerprint)
}

// sameFileSplit reports whether two recorded split files are the same
// split: by their examples' fingerprints when both records have them (a
// pipe's path, /dev/fd/63, says nothing of what it held), else by path.
func sameFileSplit(pathA, pathB, printA, printB string) bool {
	if printA != "" && printB != "" {
		return printA == printB
	}
	return pathA == pathB
}

type compareRow struct {
	Model   string      `json:"model"`
	Metrics cnn.Metrics `json:"metrics"`
	// Figures are the model's accuracy and macro-F1 with their intervals,
	// and its baseline's beside them when its file carries one (Baseline).
	Figures cnn.Figures `json:"figures"`
	// Intervals are those of the weighted F1, the ECE and every class's
	// precision, recall and F1.
	Intervals cnn.MetricIntervals `json:"intervals"`
	Baseline  *baselineJSON       `json:"baseline,omitempty"`
	// BaselineNote says why the model carries no baseline, when training
	// was stopped before it was fitted (missingBaseline).
	BaselineNote string `json:"baseline_note,omitempty"`
	// Flipped is the share of texts whose prediction differs from the first
	// model's; FlippedInterval is its Wilson interval (nil for the first).
	Flipped         float64       `json:"flipped_vs_first"`
	FlippedInterval *cnn.Interval `json:"flipped_vs_first_interval,omitempty"`
	// VsFirst is the exact McNemar test of this model against the first on
	// the same texts: OnlyA counts those only the first labels right, OnlyB
	// those only this one does (nil for the first).
	VsFirst *cnn.McNemar `json:"mcnemar_vs_first,omitempty"`
	// Warnings say why the texts may not be held-out texts for this model,
	// as eval's (findTestSplit) for the first and compareOptions.checksFor
	// for every other; absent when there are none.
	Warnings []string `json:"warnings,omitempty"`
	// Note says, for a model after the first, that whether the texts hold
	// texts of its training split cannot be checked, and why
	// (compareOptions.checksFor); absent when it could be. The first
	// model's is the split note eval gives, on stderr.
	Note string `json:"note,omitempty"`
}

// setVsFirst sets the share of texts whose prediction pred differs from
// first's, its Wilson interval, and the exact McNemar test of pred against
// first on the gold labels (all the same length).
func (r *compareRow) setVsFirst(gold, first, pred []int) {
	flips := 0
	for j := range pred {
		if pred[j] != first[j] {
			flips++
		}
	}
	iv := cnn.WilsonInterval(flips, len(pred), cnn.IntervalLevel)
	r.Flipped, r.FlippedInterval = iv.Estimate, &iv
	mc := cnn.McNemarExact(gold, first, pred)
	r.VsFirst = &mc
}

// writeComparison prints rows as tables (or JSON) and, for every model
// whose file carries a baseline, the model beside it on the texts named by
// heading.
func writeComparison(env *runEnv, rows []compareRow, heading string, asJSON bool) error {
	if asJSON {
		return writeJSON(env.Stdout, rows)
	}
	w := env.Stdout
	fmt.Fprintf(w, "%g%% intervals: Wilson for accuracy and the flipped share, bootstrap over texts for F1s and ECE,\nexact for an F1 with under 10 errors or right texts (a class's by Clopper–Pearson, the macro-F1's a Bonferroni bound, the weighted F1's a bound over the class shares)\n\n", 100*cnn.IntervalLevel)
	table := [][]string{{"model", "accuracy", "macro-F1", "weighted-F1", "ECE (bias-corrected)", "flipped"}}
	marked := false
	for i, r := range rows {
		flip := "-"
		if i > 0 && r.FlippedInterval != nil {
			fi := r.FlippedInterval
			flip = fmt.Sprintf("%.1f%% (%.1f–%.1f%%)", 100*fi.Estimate, 100*fi.Low, 100*fi.High)
		}
		name := oneLine(r.Model, 40)
		if len(r.Warnings) > 0 {
			name, marked = name+" *", true
		}
		table = append(table, []string{name, r.Figures.CNN.Accuracy.String(), r.Figures.CNN.MacroF1.String(),
			r.Intervals.WeightedF1.String(), eceCell(r.Metrics.ECE, r.Intervals.ECE), flip})
	}
	writeAligned(w, table)
	writeCalibrationTests(w, rows)
	if marked {
		fmt.Fprintf(w, "* %s\n", notHeldOut)
	}
	writePairedTests(w, rows)
	if len(rows) == 0 {
		return nil
	}
	line := fmt.Sprintf("%-20s", "label")
	for i := range rows {
		line += fmt.Sprintf("  %-19s", fmt.Sprintf("model %d", i+1))
	}
	fmt.Fprintf(w, "\nper-class F1\n%s\n", strings.TrimRight(line, " "))
	for c, pc := range rows[0].Metrics.PerClass {
		line = fmt.Sprintf("%-20s", pc.Label)
		for _, r := range rows {
			if c < len(r.Intervals.PerClass) {
				line += fmt.Sprintf("  %-19s", r.Intervals.PerClass[c].F1)
			}
		}
		fmt.Fprintln(w, strings.TrimRight(line, " "))
	}
	if predicted, absent := rows[0].Metrics.WithoutSupport(); len(predicted)+len(absent) > 0 {
		fmt.Fprintf(w, "– : no text of the label here, so no F1; macro-F1 is scikit-learn's (f1_score, average='macro'): "+
			"a label with no text here counts with F1 0 for a model that predicts it, and is left out for one that does not\n")
	}
	for i, r := range rows {
		switch {
		case r.Figures.Baseline != nil:
			fmt.Fprintln(w)
			writeFigures(w, fmt.Sprintf("model %d beside its linear baseline, %s", i+1, heading), r.Figures, r.Baseline)
			fmt.Fprint(w, notHeldOutLine(r.Warnings))
		case r.BaselineNote != "":
			fmt.Fprintf(w, "\nmodel %d has no linear baseline: %s\n", i+1, r.BaselineNote)
		}
	}
	return nil
}

// writeAligned writes a table whose columns are as wide as their widest
// cell (in characters), two spaces apart, with no trailing space.
func writeAligned(w io.Writer, table [][]string) {
	var widths []int
	for _, row := range table {
		for c, cell := range row {
			if c == len(widths) {
				widths = append(widths, 0)
			}
			widths[c] = max(widths[c], utf8.RuneCountInString(cell))
		}
	}
	for _, row := range table {
		var b strings.Builder
		for c, cell := range row {
			if c > 0 {
				b.WriteString("  ")
			}
			b.WriteString(cell)
			b.WriteString(strings.Repeat(" ", widths[c]-utf8.RuneCountInString(cell)))
		}
		fmt.Fprintln(w, strings.TrimRight(b.String(), " "))
	}
}

// writePairedTests writes the exact McNemar test of every model after the
// first against the first on the same texts.
func writePairedTests(w io.Writer, rows []compareRow) {
	if len(rows) < 2 {
		return
	}
	fmt.Fprintln(w, "\nagainst model 1 on the same texts (exact McNemar test)")
	for i, r := range rows[1:] {
		if r.VsFirst == nil {
			continue
		}
		fmt.Fprintf(w, "model %d: %d right only with model 1, %d only with model %d; two-sided p = %s\n",
			i+2, r.VsFirst.OnlyA, r.VsFirst.OnlyB, i+2, cnn.PValue(r.VsFirst.P))
	}
}

// eceCell is a model's ECE as the compare table shows it: the
// bias-corrected estimate with its interval (the observed figure and the
// calibration test follow the table: writeCalibrationTests), or the
// observed figure where the confidences are not known.
func eceCell(ece float64, iv *cnn.CalibrationFigure) string {
	if iv == nil {
		return fmt.Sprintf("%.3f (no interval)", ece)
	}
	return fmt.Sprintf("%.3f (%.3f–%.3f)", iv.Estimate, iv.Low, iv.High)
}

// writeCalibrationTests writes, under the compare table, each model's
// observed ECE with its test of perfect calibration, as eval prints them.
func writeCalibrationTests(w io.Writer, rows []compareRow) {
	var parts []string
	for i, r := range rows {
		if r.Intervals.ECE == nil {
			continue
		}
		_, test, _ := strings.Cut(r.Intervals.ECE.String(), "; ")
		parts = append(parts, fmt.Sprintf("model %d %s", i+1, test))
	}
	if len(parts) > 0 {
		fmt.Fprintf(w, "ECE: %s\n", strings.Join(parts, "; "))
	}
}

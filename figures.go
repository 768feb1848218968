package main

import (
	"fmt"
	"io"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/linear"
	"telltale/report"
)

// The CNN beside the linear baseline its model file carries, as train,
// eval and compare show it: the headline figures with their intervals
// (cnn.Figures) and the baseline's own metrics.

// baselineJSON is the linear baseline of a model file in the commands'
// JSON: its C (chosen on the dev split) and its metrics on the texts the
// command evaluates.
type baselineJSON struct {
	C float64 `json:"c"`
	// Dev is the dev macro-F1 of every C of the grid; empty when there was
	// no dev split (then C is the grid's middle value).
	Dev     []linear.DevScore `json:"dev,omitempty"`
	Metrics *cnn.Metrics      `json:"metrics,omitempty"`
	// Intervals are those of Metrics' figures beside the headline's (in
	// the figures' baseline): weighted F1, ECE with the calibration test,
	// and every class's precision, recall and F1 (cnn.IntervalsOf).
	Intervals *cnn.MetricIntervals `json:"intervals,omitempty"`
}

// baselineOf is m's baseline for the JSON, with its metrics from c (which
// may be nil) and their intervals; nil when m carries none.
func baselineOf(m *cnn.Model, c *cnn.Comparison) *baselineJSON {
	if m.Baseline == nil {
		return nil
	}
	b := &baselineJSON{C: m.Baseline.Classifier.C, Dev: m.Baseline.Dev}
	if c != nil {
		iv := cnn.IntervalsOf(c.Baseline)
		b.Metrics, b.Intervals = &c.Baseline, &iv
	}
	return b
}

// baselineStopped is what eval, compare and the report say of a model
// that carries no baseline because training was stopped before it was
// fitted (cnn.Info.BaselineStopped), not trained without one.
const baselineStopped = "training was stopped before the baseline was fitted"

// missingBaseline is baselineStopped when m carries no baseline because
// training was stopped before it was fitted; else "".
func missingBaseline(m *cnn.Model) string {
	if m.Baseline == nil && m.Info.BaselineStopped {
		return baselineStopped
	}
	return ""
}

// writeMissingBaseline prints, under figures that writeFigures printed
// without a baseline, why there is none (missingBaseline's why); nothing
// when why is "".
func writeMissingBaseline(w io.Writer, why string) {
	if why != "" {
		fmt.Fprintf(w, "  %-15s  none: %s\n", "linear baseline", why)
	}
}

// evaluateBeside evaluates m on ds (its texts encoded with enc) and, when
// m carries a baseline, the baseline on the same texts (c is nil
// otherwise).
func evaluateBeside(m *cnn.Model, enc *corpus.Encoder, ds *corpus.Dataset, threads int) (met cnn.Metrics, c *cnn.Comparison, err error) {
	if m, enc, err = m.WithUnseen(enc, ds.Texts()); err != nil { // unseen words' own rows, with --chars, as eval reads them
		return met, nil, err
	}
	if c, err = compareWithBaseline(m, ds, threads); err != nil || c != nil {
		if c != nil {
			met = c.CNN
		}
		return met, c, err
	}
	data, err := encodeFor(m, enc, ds, threads)
	if err != nil {
		return met, nil, err
	}
	met, _, err = cnn.Evaluate(m, data, threads)
	return met, nil, err
}

// compareWithBaseline is cnn.CompareBaseline of m on ds, or nil when m
// carries no baseline.
func compareWithBaseline(m *cnn.Model, ds *corpus.Dataset, threads int) (*cnn.Comparison, error) {
	if m.Baseline == nil {
		return nil, nil
	}
	c, err := cnn.CompareBaseline(m, ds, threads)
	if err != nil {
		return nil, fmt.Errorf("%w (the model knows the labels %s)", err, listed(m.Labels))
	}
	return c, nil
}

// writeFigures prints f under heading: the CNN's accuracy and macro-F1 with
// their intervals, the baseline's beside them (b, when not nil, gives its
// C) and the exact McNemar test between the two.
func writeFigures(w io.Writer, heading string, f cnn.Figures, b *baselineJSON) {
	fmt.Fprintf(w, "%s (%g%% intervals):\n", heading, 100*cnn.IntervalLevel)
	row := func(name string, h cnn.Headline, tail string) {
		fmt.Fprintf(w, "  %-15s  accuracy %s  macro-F1 %s%s\n", name, h.Accuracy, h.MacroF1, tail)
	}
	row("CNN", f.CNN, "")
	if f.Baseline == nil || f.McNemar == nil {
		return
	}
	tail := ""
	switch {
	case b != nil && len(b.Dev) > 0:
		tail = fmt.Sprintf("  (C = %g, chosen on the dev split)", b.C)
	case b != nil:
		tail = fmt.Sprintf("  (C = %g, the grid's middle: no dev split)", b.C)
	}
	row("linear baseline", *f.Baseline, tail)
	fmt.Fprintf(w, "  %s\n", f.McNemar.Sentence())
}

// baselineAdvice is report.BaselineAdvice for the command line: the lines
// train and eval print after the test split's figures where the linear
// baseline is significantly ahead of the CNN, broken after "or" and before
// "and read", or "" (also when t is nil: no baseline).
func baselineAdvice(m *cnn.Model, t *cnn.BaselineTest) string {
	if t == nil {
		return ""
	}
	advice := report.BaselineAdvice(m, *t)
	if advice == "" {
		return ""
	}
	advice = strings.Replace(advice, ") or --", ") or\n--", 1)
	return strings.Replace(advice, ", and read", ",\nand read", 1) + " (README, \"The default recipe\")\n"
}

// adviceOnHeldOut is baselineAdvice's advice (advice) followed, when the
// figures it rests on are not all held-out figures (why is the reason,
// "" when they are), by a line that says so: the baseline's lead is then
// to be judged on held-out texts.
func adviceOnHeldOut(advice, why string) string {
	if advice == "" || why == "" {
		return advice
	}
	return advice + "this rests on " + why + ": judge the baseline's lead on held-out texts\n"
}

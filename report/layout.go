package report

import (
	"cmp"
	"fmt"
	"html/template"
	"math"
	"slices"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/wording"
)

// page is everything the template shows, already formatted.
type page struct {
	Title, Generated, ModelPath string
	Glance                      []kv
	Summary                     *summaryView
	Recipe                      recipeView
	Metrics                     *metricsView
	Filters                     *filtersView
	Audit                       *auditView
	AuditNote                   string
	Examples                    []exampleView
	ExamplesNote                string
	Notes                       []string
	Labels                      []string
}

type kv struct{ Key, Value string }

type summaryView struct {
	Labels              []string
	Splits              []splitRow
	Vocab, OOV          string
	HasTest             bool
	Exact, Near, Leaks  string
	Leaked              string // the splits a leak is of: "Test", or "Dev or test"
	Duplicates          []dupRow
	MoreDuplicates      int
	ExactShown, NearAll int
}

type splitRow struct {
	Name, Path, Examples string
	PerLabel             []string // "count (share)" by label
	P50, P90, P99, Max   string
}

type dupRow struct {
	Kind, Text, Members string
	Flags               []string
}

type recipeView struct {
	Arch, Train []kv
	Epochs      []epochRow
	Created     string
	// Chars and Wide say whether the word vectors have a character part
	// and the logits a word-weight term, Bigrams whether that term has
	// weights for pairs of adjacent words too, for the lead sentence.
	Chars, Wide, Bigrams bool
}

type epochRow struct {
	Epoch, Loss, DevAcc, DevF1, Speed string
	Best                              bool
}

type metricsView struct {
	Split, Note, N, Accuracy, MacroF1, WeightedF1, ECE string
	// Warnings are Input.Warnings, each a sentence ending in a full stop.
	Warnings []string
	// Figures: the CNN and, when the model carries one, its linear
	// baseline, each with accuracy and macro-F1 and their intervals;
	// McNemar says the test between the two ("" without a baseline).
	Figures []figureRow
	Level   string
	McNemar string
	// BaselineStopped says, without a baseline, that training was stopped
	// before it was fitted (cnn.Info.BaselineStopped), not trained without.
	BaselineStopped              bool
	Rows                         []classRow
	Undefined                    string // DescribeUndefined: what "–" stands for and how macro-F1 counts the labels without a text
	Labels                       []string
	Confusion                    [][]heatCell
	ConfusionImg, ReliabilityImg template.URL
	ConfusionAlt, ReliabilityAlt string
	Bins                         []binRow
}

// sentences are ws, each ending in a full stop.
func sentences(ws []string) []string {
	out := make([]string, len(ws))
	for i, w := range ws {
		out[i] = strings.TrimSuffix(w, ".") + "."
	}
	return out
}

type classRow struct{ Label, Precision, Recall, F1, Support string }

type figureRow struct{ Model, Note, Accuracy, MacroF1 string }

type binRow struct{ Range, Count, Confidence, Accuracy, Gap string }

// heatCell is a coloured cell or token with its value as text.
type heatCell struct {
	Text  string
	Style template.CSS // background and ink, built from palette colours only
	Title string
}

type legend struct {
	Swatches []heatCell
	Lo, Hi   string
}

func layout(in Input) (*page, error) {
	m := in.Model
	p := &page{Title: in.Title, ModelPath: in.ModelPath, Notes: in.Notes, Labels: m.Labels, AuditNote: in.AuditNote}
	if p.Title == "" {
		p.Title = "telltale report"
	}
	if !in.Generated.IsZero() {
		p.Generated = in.Generated.Format("2006-01-02 15:04 MST")
	}
	p.Recipe = recipe(in)
	if in.Summary != nil {
		p.Summary = summary(in.Summary)
	}
	if in.Metrics != nil {
		mv, err := metrics(in)
		if err != nil {
			return nil, err
		}
		p.Metrics = mv
		p.Glance = append(p.Glance,
			kv{"Evaluated on", fmt.Sprintf("%s split, %s texts", mv.Split, mv.N)},
			kv{"Accuracy", mv.Accuracy}, kv{"Macro-F1", mv.MacroF1}, kv{"ECE", mv.ECE})
		if len(mv.Figures) > 1 {
			p.Glance = append(p.Glance, kv{"Linear baseline accuracy", mv.Figures[1].Accuracy})
		}
	}
	p.Glance = append(p.Glance, kv{"Filters", count(m.Config.NumFilters())}, kv{"Vocabulary", count(m.Config.VocabSize)})
	if in.Profiles != nil {
		fv, err := filters(in)
		if err != nil {
			return nil, err
		}
		p.Filters = fv
	}
	if in.Audit != nil {
		p.Audit = auditLayout(in.Audit, trainShares(in.Summary, m.Labels), in.ModelPath)
	}
	p.ExamplesNote = in.ExamplesNote
	for i, ex := range in.Examples {
		ev, err := example(in, ex)
		if err != nil {
			return nil, fmt.Errorf("report: example %d: %w", i+1, err)
		}
		p.Examples = append(p.Examples, ev)
	}
	return p, nil
}

// recipeExtras are the rows of the training table for the settings only
// some recipes have: the word weights' rate and start, and the patterns
// taken out of the training text (train --mask-tokens). noDev says that
// the dev split had no text (to choose a C on).
func recipeExtras(r *cnn.TrainConfig, c cnn.Config, noDev bool) []kv {
	var rows []kv
	if c.Wide {
		rows = append(rows, kv{"Learning rate of the word weights", fmt.Sprintf("%g × the rest's", cmp.Or(r.WideLR, 1))})
	}
	if c.Wide && r.WideFit {
		rows = append(rows, kv{"Start of the word weights", shrunk(r.WideFitShrink) + "the logistic regression fitted on them alone (" + fitC(r.WideFitC, noDev) + "); the filters joined from zero"})
	}
	if len(r.MaskTokens) > 0 {
		rows = append(rows, kv{"Taken out of the training text (--mask-tokens)", strings.Join(r.MaskTokens, "   ")})
	}
	return rows
}

func recipe(in Input) recipeView {
	m := in.Model
	c := m.Config
	widths := make([]string, len(c.Widths))
	for i, w := range c.Widths {
		widths[i] = fmt.Sprint(w)
	}
	rv := recipeView{Arch: []kv{
		{"Embedding dimension", fmt.Sprint(c.Dim)},
		{"Filter widths", strings.Join(widths, ", ")},
		{"Filters per width", fmt.Sprint(c.Filters)},
		{"Classes", fmt.Sprintf("%d (%s)", c.Classes, strings.Join(m.Labels, ", "))},
		{"Vocabulary", count(c.VocabSize) + " entries, padding and unknown included"},
		{"Dropout", num(float64(c.Dropout))},
		{"Max norm of output rows", maxNorm(c.MaxNorm)},
	}}
	if ch := c.Chars; ch != nil {
		rv.Chars = true
		rv.Arch = append(rv.Arch, kv{"Character layer", fmt.Sprintf("%d maps over windows of %d characters (the word vectors' last %d numbers)", ch.Filters, ch.Width, ch.Filters)})
	}
	if c.Wide {
		rv.Wide = true
		rv.Arch = append(rv.Arch, kv{"Word weights beside the filters", "yes: the mean over the text's words of one weight per word and label, added to the logits"})
	}
	if c.WideBigrams {
		rv.Bigrams = true
		rv.Arch = append(rv.Arch, kv{"Word-pair weights", fmt.Sprintf("yes: %s pairs of adjacent words of the training split, each with one weight per label, in the same mean", count(len(m.Bigrams)))})
	}
	if masked := maskedCount(m.Masked); masked > 0 {
		rv.Arch = append(rv.Arch, kv{"Masked filters", fmt.Sprint(masked)})
	}
	info := m.Info
	rv.Created = info.Created
	if r := info.Recipe; r != nil {
		rv.Train = []kv{
			{"Optimizer", r.Optimizer},
			{"Learning rate", fmt.Sprint(r.LR)},
			{"Epochs (at most)", fmt.Sprint(r.Epochs)},
			{"Batch size", fmt.Sprint(r.Batch)},
			{"Early-stopping patience", fmt.Sprint(r.Patience)},
			{"First epoch it could keep", keepFrom(r.KeepFrom, r.Epochs)},
			{"Class weight", cmp.Or(r.ClassWeight, "none")},
			{"Longest text kept", maxLen(r.MaxLen)},
			{"Embeddings frozen", yesNo(r.FreezeEmb)},
			{"Seed", fmt.Sprint(r.Seed)},
		}
		rv.Train = append(rv.Train, recipeExtras(r, c, info.Splits != nil && info.Splits.Dev == 0)...)
	}
	if info.BestEpoch > 0 {
		rv.Train = append(rv.Train, kv{"Weights kept from epoch", fmt.Sprint(info.BestEpoch) + averaged(info.Recipe)})
	}
	if info.ExamplesPerSec > 0 {
		rv.Train = append(rv.Train, kv{"Training speed (steady state)", count(int(math.Round(info.ExamplesPerSec))) + " texts/s"})
	}
	keys := make([]string, 0, len(info.Notes))
	for k := range info.Notes {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	for _, k := range keys {
		rv.Train = append(rv.Train, kv{k, info.Notes[k]})
	}
	for _, e := range info.Epochs {
		row := epochRow{Epoch: fmt.Sprint(e.Epoch), Loss: num(e.Loss), DevAcc: "–", DevF1: "–",
			Speed: count(int(math.Round(e.ExamplesPerSec))), Best: e.Epoch == info.BestEpoch}
		if e.Dev != nil {
			row.DevAcc, row.DevF1 = num(e.Dev.Accuracy), num(e.Dev.MacroF1)
		}
		rv.Epochs = append(rv.Epochs, row)
	}
	return rv
}

// keepFrom says which epochs the run could keep (cnn.TrainConfig.KeepFrom,
// one beyond the epochs meaning the last).
func keepFrom(k, epochs int) string {
	if k <= 1 {
		return "any"
	}
	return fmt.Sprintf("%d (no earlier epoch)", min(k, epochs))
}

// mcnemarLine words the test between the CNN and the baseline, and where
// the baseline is significantly ahead, what to try for m (BaselineAdvice).
func mcnemarLine(m *cnn.Model, t cnn.BaselineTest) string {
	sentence := t.Sentence()
	line := strings.ToUpper(sentence[:1]) + sentence[1:] + "."
	if advice := BaselineAdvice(m, t); advice != "" {
		line += " " + strings.ToUpper(advice[:1]) + advice[1:] + "."
	}
	return line
}

// BaselineAdvice words cnn.BaselineRemedies of m in telltale train's
// options: "the baseline is ahead here: retrain with telltale train
// --wide-fit (…) or --class-weight balanced (…), and read the cue audit
// beside the result", or "" when the baseline is not ahead or nothing is
// left to try. The report and the command line say it.
func BaselineAdvice(m *cnn.Model, t cnn.BaselineTest) string {
	var tries []string
	for _, r := range cnn.BaselineRemedies(m, t) {
		switch {
		case r == cnn.RemedyWideFit && m.Config.Wide:
			tries = append(tries, "--wide-fit (the word weights start at a fitted linear model)")
		case r == cnn.RemedyWideFit:
			tries = append(tries, "--wide --wide-fit (word weights, started at a fitted linear model)")
		case r == cnn.RemedyClassWeight:
			tries = append(tries, "--class-weight balanced (with unbalanced labels)")
		}
	}
	if len(tries) == 0 {
		return ""
	}
	return "the baseline is ahead here: retrain with telltale train " + strings.Join(tries, " or ") +
		", and read the cue audit beside the result"
}

// shrunk names the factor of a shrunk fitted start (TrainConfig.WideFitShrink).
func shrunk(nu float64) string {
	if nu > 0 && nu < 1 {
		return fmt.Sprintf("%g × ", nu)
	}
	return ""
}

// averaged says when the kept weights are an average (TrainConfig.WeightAverage,
// AverageLast) rather than the epoch's own.
func averaged(r *cnn.TrainConfig) string {
	switch {
	case r == nil:
		return ""
	case r.WeightAverage > 0:
		unit := "epochs"
		if r.WeightAverage == 1 {
			unit = "epoch"
		}
		return fmt.Sprintf(" (their moving average over the steps, a horizon of %g %s)", r.WeightAverage, unit)
	case r.AverageLast >= 2:
		return fmt.Sprintf(" (the mean of the weights at the ends of the last %d epochs)", r.AverageLast)
	}
	return ""
}

// fitC says how the fitted start's C (cnn.TrainConfig.WideFitC) was set:
// fixed in the recipe, or chosen on the dev split (0); without a dev text
// (noDev), the middle of the grid, as the baseline's (baselineNote).
func fitC(c float64, noDev bool) string {
	switch {
	case c > 0:
		return fmt.Sprintf("C %g, fixed", c)
	case noDev:
		return "C the middle of the grid: there was no dev split"
	}
	return "C chosen on the dev split"
}

func maxNorm(v float32) string {
	if v == 0 {
		return "off"
	}
	return num(float64(v))
}

func maxLen(n int) string {
	if n <= 0 {
		return "whole text"
	}
	return wording.Grouped(n, "token", "tokens")
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}

func maskedCount(m []bool) int {
	n := 0
	for _, b := range m {
		if b {
			n++
		}
	}
	return n
}

// tokens writes a token count of the percentiles p grouped by thousands
// as every other count of the page ("12,159"), "–" when they are of no
// text.
func tokens(n int, p corpus.Percentiles) string {
	if p.Undefined() {
		return "–"
	}
	return count(n)
}

func summary(s *corpus.Summary) *summaryView {
	sv := &summaryView{Labels: s.Labels, Vocab: count(s.VocabSize), OOV: pct(s.TestOOVRate),
		Exact: count(s.ExactGroups), Near: count(s.NearGroups), Leaks: count(s.Leaks), Leaked: "Test"}
	for _, sp := range s.Splits {
		tl := sp.TokenLength
		row := splitRow{Name: sp.Name, Path: sp.Path, Examples: count(sp.Examples),
			P50: tokens(tl.P50, tl), P90: tokens(tl.P90, tl), P99: tokens(tl.P99, tl), Max: tokens(tl.Max, tl)}
		for _, l := range s.Labels {
			share := math.NaN() // of no example
			if sp.Examples > 0 {
				share = sp.Balance[l]
			}
			row.PerLabel = append(row.PerLabel, fmt.Sprintf("%s (%s)", count(sp.PerLabel[l]), pct(share)))
		}
		switch sp.Name {
		case "dev":
			sv.Leaked = "Dev or test"
		case "test":
			sv.HasTest = true
		}
		sv.Splits = append(sv.Splits, row)
	}
	const most = 8
	add := func(kind string, gs []corpus.DuplicateGroup) {
		for _, g := range gs {
			if len(sv.Duplicates) == most {
				sv.MoreDuplicates++
				continue
			}
			row := dupRow{Kind: kind, Text: g.Text, Members: locations(g.Members)}
			if g.CrossSplit {
				row.Flags = append(row.Flags, "in "+splitsOf(g.Members))
			}
			if g.LabelConflict {
				row.Flags = append(row.Flags, "labels differ")
			}
			sv.Duplicates = append(sv.Duplicates, row)
		}
	}
	add("exact", s.ExactDuplicates)
	add("near", s.NearDuplicates)
	return sv
}

// splitsOf names the splits of a group's members, in the order first
// met: "train and test".
func splitsOf(ls []corpus.Location) string {
	var names []string
	for _, l := range ls {
		if !slices.Contains(names, l.Split) {
			names = append(names, l.Split)
		}
	}
	if len(names) < 2 {
		return strings.Join(names, "")
	}
	return strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
}

func locations(ls []corpus.Location) string {
	const most = 4
	parts := make([]string, 0, most+1)
	for i, l := range ls {
		if i == most {
			parts = append(parts, fmt.Sprintf("… %d more", len(ls)-most))
			break
		}
		where := l.Split
		switch {
		case l.File != "":
			where += " " + l.File
		case l.Line > 0:
			where += fmt.Sprintf(" line %d", l.Line)
		}
		parts = append(parts, where+" ("+l.Label+")")
	}
	return strings.Join(parts, "; ")
}

func metrics(in Input) (*metricsView, error) {
	mt := in.Metrics
	k := len(mt.Labels)
	if len(mt.Confusion) != k || len(mt.PerClass) != k {
		return nil, fmt.Errorf("report: metrics have %d labels, %d confusion rows and %d class rows", k, len(mt.Confusion), len(mt.PerClass))
	}
	split := in.HeldOut
	if split == "" {
		split = "test"
	}
	// The note is a sentence of its own, as it may give the count too
	// ("evaluating on the test file … (800 texts)"); it may start with a
	// file name, so it is led in rather than capitalised.
	note := "The texts: " + strings.TrimSuffix(cmp.Or(in.HeldOutNote, "none of them used for training"), ".") + "."
	if b := in.Baseline; b != nil && (b.CNN.N != mt.N || len(b.Baseline.Labels) != k || b.CNN.Accuracy != mt.Accuracy) {
		return nil, fmt.Errorf("report: the baseline comparison is of %d texts (CNN accuracy %g), the metrics of %d (accuracy %g): give both of the same test split",
			b.CNN.N, b.CNN.Accuracy, mt.N, mt.Accuracy)
	}
	fig := cnn.FiguresOf(*mt, in.Baseline)
	iv := cnn.IntervalsOf(*mt)
	ece := num(mt.ECE) + " (no interval: the confidences are not known)"
	if iv.ECE != nil {
		ece = iv.ECE.String()
	}
	mv := &metricsView{Split: split, Note: note, N: count(mt.N), Accuracy: fig.CNN.Accuracy.String(), MacroF1: fig.CNN.MacroF1.String(),
		WeightedF1: iv.WeightedF1.String(), ECE: ece, Labels: mt.Labels, Level: fmt.Sprintf("%g%%", 100*cnn.IntervalLevel)}
	mv.Warnings = sentences(in.Warnings)
	mv.Figures = []figureRow{{Model: "CNN", Accuracy: fig.CNN.Accuracy.String(), MacroF1: fig.CNN.MacroF1.String()}}
	if fig.Baseline != nil {
		mv.Figures = append(mv.Figures, figureRow{Model: "Linear baseline", Note: baselineNote(in.Model),
			Accuracy: fig.Baseline.Accuracy.String(), MacroF1: fig.Baseline.MacroF1.String()})
		mv.McNemar = mcnemarLine(in.Model, *fig.McNemar)
	} else if in.Model != nil {
		mv.BaselineStopped = in.Model.Info.BaselineStopped
	}
	for i, c := range mt.PerClass {
		ci := iv.PerClass[i]
		mv.Rows = append(mv.Rows, classRow{c.Label, ci.Precision.String(), ci.Recall.String(), ci.F1.String(), count(c.Support)})
	}
	mv.Undefined = DescribeUndefined(*mt)
	most := 0
	for _, row := range mt.Confusion {
		if len(row) != k {
			return nil, fmt.Errorf("report: confusion matrix row of %d cells, want %d", len(row), k)
		}
		for _, v := range row {
			most = max(most, v)
		}
	}
	for g, row := range mt.Confusion {
		cells := make([]heatCell, k)
		for p, v := range row {
			bg := sequentialAt(float64(v), float64(most))
			cells[p] = heatCell{Text: count(v), Style: cellStyle(bg),
				Title: fmt.Sprintf("gold %s, predicted %s: %d", mt.Labels[g], mt.Labels[p], v)}
		}
		mv.Confusion = append(mv.Confusion, cells)
	}
	img, err := confusionPlot(mt.Labels, mt.Confusion)
	if err != nil {
		return nil, err
	}
	mv.ConfusionImg = img
	mv.ConfusionAlt = fmt.Sprintf("Confusion matrix of %d texts: rows are gold labels, columns predicted labels; the table beside it holds the same counts.", mt.N)
	if len(in.Reliability) > 0 {
		img, err := reliabilityPlot(in.Reliability)
		if err != nil {
			return nil, err
		}
		mv.ReliabilityImg = img
		mv.ReliabilityAlt = "Reliability diagram: accuracy against mean confidence per confidence bin; the table below holds the same values."
		for _, b := range in.Reliability {
			if b.Count == 0 {
				continue
			}
			mv.Bins = append(mv.Bins, binRow{Range: fmt.Sprintf("(%.2f, %.2f]", b.Lo, b.Hi), Count: count(b.Count),
				Confidence: num(b.Conf), Accuracy: binAccuracy(b).String(), Gap: binGap(b)})
		}
	}
	return mv, nil
}

// binAccuracy is the accuracy of a reliability bin with its Wilson
// interval: a share of the bin's count.
func binAccuracy(b cnn.ReliabilityBin) cnn.Interval {
	return cnn.WilsonInterval(int(math.Round(b.Acc*float64(b.Count))), b.Count, cnn.IntervalLevel)
}

// binGap is a bin's accuracy less its mean confidence, with the interval
// of the accuracy (binAccuracy) shifted by the same: the mean confidence
// is the model's own figure for those texts, not an estimate.
func binGap(b cnn.ReliabilityBin) string {
	iv := binAccuracy(b)
	return fmt.Sprintf("%s (%s to %s)", signed(b.Acc-b.Conf), signed(iv.Low-b.Conf), signed(iv.High-b.Conf))
}

// baselineNote says what the baseline is and how its C was chosen (on the
// dev split, or the middle of the grid when there was none).
func baselineNote(m *cnn.Model) string {
	b := m.Baseline
	if b == nil || b.Classifier == nil {
		return "TF-IDF n-grams + logistic regression"
	}
	how := "chosen on the dev split"
	if len(b.Dev) == 0 {
		how = "the middle of the grid: there was no dev split"
	}
	return fmt.Sprintf("TF-IDF n-grams + logistic regression, C = %g, %s", b.Classifier.C, how)
}

func cellStyle(bg rgb) template.CSS {
	return template.CSS("background:" + bg.css() + ";color:" + ink(bg))
}

// newLegend lays out the diverging scale from −scale to +scale.
func newLegend(scale float64, lo, hi string) legend {
	lg := legend{Lo: lo, Hi: hi}
	n := len(diverging)
	for i := range n {
		v := scale * (2*float64(i)/float64(n-1) - 1)
		bg := divergingAt(v, scale)
		lg.Swatches = append(lg.Swatches, heatCell{Style: cellStyle(bg), Title: signed(v)})
	}
	return lg
}

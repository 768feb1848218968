package gui

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"

	"telltale/audit"
	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/wording"
)

// auditState is one cue audit of the open model (audit.Run) with what the
// views need around it: the corpus and model it read, the marks it ran
// with and the texts behind its figures.
type auditState struct {
	R     *audit.Result
	ms    *modelState
	cs    *corpusState
	marks *audit.Marks // the marks the audit honoured (a copy)
	// listed are the cues of both lists: the artifact-like ones (R.Ranked)
	// in rank order, then those that read like the task (R.Task).
	listed []*audit.Candidate
	// trainTexts are, for each listed cue (by its Text), training texts
	// that hold it: the examples behind its association.
	trainTexts map[string][]auditExample
	// cueTexts are confirming texts that hold a cue acted on: the texts
	// behind the figures without the cues.
	cueTexts []auditExample
	// keyed lists, for each filter, the listed cues it reads (indexes
	// into listed).
	keyed map[int][]int
	// priors are the labels' shares of the training split.
	priors []float64
}

// auditExample is one text behind a figure of the audit, or one filter
// that reads a cue (Filter ≥ 0).
type auditExample struct {
	Figure string // the figure it stands behind
	Split  string // "training" or "test"
	Index  int    // in its split, from 0
	Gold   string
	Pred   string // the model's label ("" when the figure has none)
	After  string // the label after the edit the figure measures ("" when none)
	Text   string // the whole text
	Quote  string // the part shown, the cue in [brackets] when the audit quotes it
	Filter int    // a filter that reads the cue, -1 for a text
}

func newAuditState(r *audit.Result, ms *modelState, cs *corpusState, marks *audit.Marks) *auditState {
	as := &auditState{R: r, ms: ms, cs: cs, marks: marks, keyed: map[int][]int{}}
	for i := range r.Ranked {
		as.listed = append(as.listed, &r.Ranked[i])
	}
	for i := range r.Task {
		as.listed = append(as.listed, &r.Task[i])
	}
	for k, c := range as.listed {
		if c.Filters != nil {
			for _, g := range c.Filters.Keyed {
				as.keyed[g] = append(as.keyed[g], k)
			}
		}
	}
	as.priors = make([]float64, len(r.Labels))
	if gold, err := cs.Train.LabelIndex(r.Labels); err == nil && len(gold) > 0 {
		for _, g := range gold {
			as.priors[g] += 1 / float64(len(gold))
		}
	}
	return as
}

// rankOf is the rank of listed cue k in its list, from 1, and whether it
// is in the list of artifact-like cues.
func (a *auditState) rankOf(k int) (int, bool) {
	if k < len(a.R.Ranked) {
		return k + 1, true
	}
	return k - len(a.R.Ranked) + 1, false
}

// find is the index in listed of the cue whose words are text, or -1.
func (a *auditState) find(text string) int {
	if a == nil {
		return -1
	}
	return slices.IndexFunc(a.listed, func(c *audit.Candidate) bool { return c.Text == text })
}

// cueRankOf is, for the Filters view, the best rank among the artifact-like
// cues of a cue filter g reads; "task" when it reads only cues that read like
// the task; "—" without an audit or when it reads no listed cue.
func (a *auditState) cueRankOf(g int) string {
	if a == nil || len(a.keyed[g]) == 0 {
		return "—"
	}
	if r, artifact := a.rankOf(a.keyed[g][0]); artifact {
		return fmt.Sprint(r)
	}
	return "task"
}

// cuesOf lists the listed cues filter g reads, "" when none.
func (a *auditState) cuesOf(g int) string {
	if a == nil {
		return ""
	}
	var s []string
	for _, k := range a.keyed[g] {
		s = append(s, cueShown(a.listed[k]))
	}
	return strings.Join(s, " | ")
}

// cueShown is a cue as the lists show it: its most common form in the
// text, on one line.
func cueShown(c *audit.Candidate) string {
	if c.Surface != "" {
		return oneLine(c.Surface)
	}
	return c.Text
}

// auditSeed seeds the audit's halves, edits and bootstrap: the command
// line's default (telltale audit --seed), so both give the same audit.
var auditSeed = cnn.DefaultRecipe().Train.Seed

// auditNow shows the audit view and runs the cue audit.
func (st *State) auditNow() {
	st.show(titleAudit)
	if !st.isRunning(taskAudit) {
		st.runAudit(nil)
	}
}

// runAudit runs the cue audit of the open model in the background, with
// the marks of the audit view: association on the training split, reliance
// on the test split; then runs then, if not nil (also after a failure).
// A newer run replaces one that waits.
func (st *State) runAudit(then func()) {
	ms, cs := itemGet(st.model), itemGet(st.data)
	if ms == nil || cs == nil {
		st.showError(errors.New("the audit needs a model and its data: train a model (Training view) or open one (File › Open model)"))
		if then != nil {
			then()
		}
		return
	}
	marks := st.auditView.marksForRun()
	st.setStatus("Running the cue audit…")
	st.start(taskAudit, true, func(ctx context.Context, report reporter) (func(), error) {
		as, err := auditWork(ctx, ms, cs, marks, report)
		if err != nil {
			return then, err
		}
		return func() {
			if itemGet(st.model) == ms && itemGet(st.data) == cs {
				st.audit.Set(as)
				st.setStatus(auditDone(as.R) + ms.warned())
			}
			if then != nil {
				then()
			}
		}, nil
	})
}

// auditDone says in the status bar what the audit found.
func auditDone(r *audit.Result) string {
	return fmt.Sprintf("Cue audit done: %s acted on, %s artifact-like, %s relied on that read like the task.",
		wording.Count(len(r.Action.Cues), "cue", "cues"), wording.Count(len(r.Ranked), "cue", "cues"), wording.Count(len(r.Task), "cue", "cues"))
}

// auditWork runs audit.Run on the training split (association) and the
// test split (reliance, halved into choosing and confirming texts), then
// finds the texts behind its figures.
func auditWork(ctx context.Context, ms *modelState, cs *corpusState, marks *audit.Marks, report reporter) (*auditState, error) {
	train, err := audit.NewData(ms.Model, cs.Train, 0)
	if err != nil {
		return nil, fmt.Errorf("the training split does not fit this model: %w", err)
	}
	// The test split as eval reads it: with a character layer, unseen
	// words have vectors of their own, read by mu, the model audited.
	mu, held, err := audit.NewHeldout(ms.Model, cs.Test, 0)
	if err != nil {
		return nil, fmt.Errorf("the test split does not fit this model: %w", err)
	}
	heldFile := cs.Record.TestFile
	if heldFile == "" {
		heldFile = cs.Record.Data
	}
	opt := audit.Options{Marks: marks, ModelFile: ms.Path, TrainFile: cs.Record.Data, HeldoutFile: heldFile, Seed: auditSeed}
	r, err := audit.Run(ctx, mu, train, held, opt, auditProgress(report))
	if err != nil {
		return nil, err
	}
	as := newAuditState(r, ms, cs, marks)
	as.findTexts(ctx)
	return as, ctx.Err()
}

// auditStages are audit.Run's stages in order, with what the status bar
// says of each.
var auditStages = []struct{ name, says string }{
	{"association", "testing which words predict a label in the training split"},
	{"phrases", "growing the words into phrases"},
	{"held-out", "running the model on the test split"},
	{"reliance", "replacing each cue by neutral words"},
	{"confirmation", "confirming on the second half of the test split"},
	{"action", "the test split without the cues acted on"},
}

// auditProgress turns audit.Run's per-stage progress into one figure for
// the status bar: each stage an equal part.
func auditProgress(report reporter) audit.Progress {
	const part = 1000
	return func(stage string, done, total int) {
		i := slices.IndexFunc(auditStages, func(s struct{ name, says string }) bool { return s.name == stage })
		if i < 0 || total <= 0 {
			return
		}
		report(i*part+done*part/total, len(auditStages)*part,
			fmt.Sprintf("Cue audit, step %d of %d: %s", i+1, len(auditStages), auditStages[i].says))
	}
}

// Examples are found at most in this many training texts per audit, and at
// most this many behind each figure.
const (
	maxScanned  = 20000
	perFigure   = 2
	maxCueTexts = 20
)

// findTexts finds the texts behind the figures the audit quotes none for:
// training texts that hold each listed cue (its pattern, as retraining
// takes it out), in its label and not, and confirming texts that hold a cue
// acted on.
func (a *auditState) findTexts(ctx context.Context) {
	a.trainTexts = map[string][]auditExample{}
	train := a.cs.Train.Examples
	for _, c := range a.listed {
		if ctx.Err() != nil {
			return
		}
		cm, err := corpus.MaskTokens([]string{c.Pattern})
		if err != nil {
			continue // a cue the audit writes no usable pattern for has no examples
		}
		var in, out []auditExample
		for i, e := range train[:min(len(train), maxScanned)] {
			if len(in) >= perFigure && len(out) >= perFigure {
				break
			}
			if _, n := cm.Mask(e.Text); n == 0 {
				continue
			}
			ex := auditExample{Split: "training", Index: i, Gold: e.Label, Text: e.Text, Quote: oneLine(e.Text), Filter: -1}
			if e.Label == c.Label && len(in) < perFigure {
				ex.Figure = "association, its label"
				in = append(in, ex)
			} else if e.Label != c.Label && len(out) < perFigure {
				ex.Figure = "association, another label"
				out = append(out, ex)
			}
		}
		a.trainTexts[c.Text] = append(in, out...)
	}
	a.findCueTexts()
}

// findCueTexts finds the confirming texts that hold a cue acted on.
func (a *auditState) findCueTexts() {
	cm, err := corpus.MaskTokens(a.R.Action.Patterns)
	if err != nil || len(a.R.Action.Patterns) == 0 {
		return
	}
	test := a.cs.Test.Examples
	for _, i := range a.R.Confirmation {
		if len(a.cueTexts) >= maxCueTexts {
			break
		}
		if i >= len(test) {
			continue
		}
		if _, n := cm.Mask(test[i].Text); n == 0 {
			continue
		}
		ex := auditExample{Figure: "confirming half, holds a cue", Split: "test", Index: i, Gold: test[i].Label,
			Text: test[i].Text, Quote: oneLine(test[i].Text), Filter: -1}
		if ev := a.ms.Eval; ev != nil && i < len(ev.Pred) {
			ex.Pred = a.ms.Model.Labels[ev.Pred[i]]
		}
		a.cueTexts = append(a.cueTexts, ex)
	}
}

// examplesOf lists what stands behind the figures of listed cue k: the
// training texts that hold it, the test texts whose prediction replacing
// it changed (the audit's own examples) and the filters that read it.
func (a *auditState) examplesOf(k int) []auditExample {
	c := a.listed[k]
	out := slices.Clone(a.trainTexts[c.Text])
	rl := c.Confirmed
	if rl == nil {
		rl = c.Reliance
	}
	if rl != nil {
		for _, e := range rl.Examples {
			i := e.Index // in the test split, as the audit was given it
			if i < 0 || i >= len(a.cs.Test.Examples) {
				continue
			}
			t := a.cs.Test.Examples[i]
			out = append(out, auditExample{Figure: "reliance, prediction changed", Split: "test", Index: i,
				Gold: e.Gold, Pred: e.Pred, After: e.After, Text: t.Text, Quote: e.Snippet, Filter: -1})
		}
	}
	if c.Filters != nil {
		for _, g := range c.Filters.Keyed {
			out = append(out, auditExample{Figure: "a filter that reads it", Filter: g})
		}
	}
	return out
}

// retrainRecipe is the recipe that trained m, for retraining it on the
// open corpus's training and dev splits, or an error saying why it cannot
// be: m records no recipe, or was not trained on these splits.
func retrainRecipe(m *cnn.Model, cs *corpusState) (cnn.Recipe, error) {
	if m.Info.Recipe == nil {
		return cnn.Recipe{}, errors.New("the model records no training recipe (an imported model?): retraining needs the recipe that trained it; train a model in the Training view")
	}
	if r := m.Info.Splits; r == nil || !sameSplits(*r, cs.Record) {
		return cnn.Recipe{}, errors.New("the model was not trained on the open data's training and dev splits: retraining without the cues needs them; " +
			"open the data it was trained on, or retrain from the command line (telltale audit --retrain)")
	}
	r := cnn.Recipe{Tokenizer: m.Tokenizer, Model: m.Config, Train: *m.Info.Recipe}
	r.Tokenizer.SubwordPieces = nil // learned again on the training text
	r.Model.VocabSize, r.Model.Classes = 0, 0
	r.Train.Threads = 0
	return r, nil
}

// sameSplits reports whether two split records make the same training and
// dev splits: the same data, shares and seed, no dev file, and a test file
// in both or in neither.
func sameSplits(a, b cnn.SplitRecord) bool {
	return a.Examples == b.Examples && a.Fingerprint == b.Fingerprint && a.DevFrac == b.DevFrac && a.TestFrac == b.TestFrac &&
		a.Seed == b.Seed && a.DevFile == "" && b.DevFile == "" && (a.TestFile == "") == (b.TestFile == "")
}

// retrainPatterns are the patterns retraining takes out of the text: those
// of the cues the audit acts on, then those of the cues marked artifact.
func retrainPatterns(r *audit.Result, marks *audit.Marks) []string {
	ps := slices.Clone(r.Action.Patterns)
	for _, p := range marks.Patterns() {
		if !slices.Contains(ps, p) {
			ps = append(ps, p)
		}
	}
	return ps
}

// recordRetrained gives m, a model retrained on the splits of the model
// the audit as audits (retrainRecipe checked that they are the open
// corpus's), that model's split record, and records the audit's choosing
// half as texts that chose the cues (cnn.Info.ChoseCues), as audit
// --retrain-out does: eval, compare and report then find its test split
// and warn of the figures on those texts.
func recordRetrained(m *cnn.Model, as *auditState) {
	rec := *as.ms.Model.Info.Splits
	m.Info.Splits = &rec
	m.Info.CuesChosenOn = as.ms.Model.Info.CuesChosenOn
	m.Info.ChoseCues(as.choice(cnn.ChoseRetrain))
}

// choice is the record (cnn.Info.ChoseCues) that the audit chose what
// (cnn.ChoseRetrain or ChoseMask) on its choosing half of the open
// corpus's test split: "test" when that is the test split the audited
// model records (isModelTest), else named by the corpus's test file, or
// its data file when the split is a share of it.
func (a *auditState) choice(what string) cnn.CueChoice {
	heldout := "test"
	if !isModelTest(a.ms.Model.Info.Splits, a.cs.Record) {
		heldout = cmp.Or(a.cs.Record.TestFile, a.cs.Record.DataAbs, a.cs.Record.Data)
	}
	return cnn.CueChoice{Half: "selection", For: what, Heldout: heldout, Of: len(a.cs.Test.Examples),
		Fingerprint: a.cs.Test.Fingerprint(), Seed: auditSeed, Texts: a.R.Selection}
}

// isModelTest reports whether the corpus whose splits cr records holds the
// test split that rec, a model's record, names: the same data (its size
// and fingerprint) and the same test file, or, without one, the same share
// and seed.
func isModelTest(rec *cnn.SplitRecord, cr cnn.SplitRecord) bool {
	if rec == nil || rec.Examples != cr.Examples || rec.Fingerprint != cr.Fingerprint || rec.TestFile != cr.TestFile {
		return false
	}
	return rec.TestFile != "" || rec.TestFrac == cr.TestFrac && rec.Seed == cr.Seed
}

// retrained is a model retrained without the cues, beside the one audited.
type retrained struct {
	of *auditState // the audit it acts on
	rt *audit.Retrained
}

// retrainNow trains a model with the audited model's recipe on the
// training split with the cues taken out (audit.Retrain) and compares both
// on the audit's confirming half as it is and without the cues; done gets the result on
// the UI goroutine, or nil when the retraining was stopped, failed or could
// not start.
func (st *State) retrainNow(as *auditState, done func(*retrained)) {
	if st.isRunning(taskRetrain) {
		return
	}
	rec, err := retrainRecipe(as.ms.Model, as.cs)
	if err != nil {
		done(nil)
		st.showErrorf(err, "cannot retrain without the cues")
		return
	}
	patterns := retrainPatterns(as.R, as.marks)
	if len(patterns) == 0 {
		done(nil)
		st.showError(errors.New("no cue to retrain without: the audit acted on none and none is marked artifact; mark a cue as an artifact first"))
		return
	}
	st.setStatus("Retraining without the cues…")
	st.start(taskRetrain, true, func(ctx context.Context, report reporter) (func(), error) {
		rt, err := audit.Retrain(ctx, as.ms.Model, patterns, as.cs.Train, as.cs.Dev, as.cs.Test, as.R.Confirmation, rec, func(p cnn.Progress) {
			if p.Phase == "train" {
				total := p.Epochs * max(p.Batches, 1)
				report((p.Epoch-1)*max(p.Batches, 1)+p.Batch, total,
					fmt.Sprintf("Retraining without the cues: epoch %d of %d, batch %d of %d", p.Epoch, p.Epochs, p.Batch, p.Batches))
			}
		})
		if err == nil {
			err = ctx.Err()
		}
		if err != nil {
			return func() { done(nil) }, err
		}
		recordRetrained(rt.Model, as)
		return func() {
			st.setStatus(retrainedStatus(rt))
			done(&retrained{of: as, rt: rt})
		}, nil
	})
}

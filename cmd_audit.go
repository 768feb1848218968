package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"

	"telltale/audit"
	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/inputfile"
	"telltale/internal/outguard"
	"telltale/internal/wording"
	"telltale/report"
)

var cmdAudit = &command{
	Name: "audit",
	UsageLine: "audit --model MODEL --data FILE [--test FILE] [--top K] [--measure N] [--export FILE] [--json]\n" +
		"               [--marks FILE] [--mark-artifact CUE]... [--mark-task CUE]... [--unmark CUE]...\n" +
		"               [--seeds N | --models M2,M3,...] [--stable-in K] [--retrain [--retrain-out MODEL2]] [--masked-out MODEL2]\n" +
		"               [--confirming-out FILE]",
	Short: "find the cues the model relies on that look like how its data was collected, and what to do",
	Long: `Audit asks three questions of every word and phrase that predicts a label in
the training split of --data, and tells in plain words what it found:

  association        Does it predict a label in the training split? Fisher's
                     exact test of each word in each label, corrected over
                     every word and label tested (Benjamini-Hochberg); a word
                     grows into the longest phrase it keeps (a footer line, a
                     stamp with its number).
  reliance           Does this model depend on it? In the test texts that hold
                     it, it is replaced by label-neutral words, against a
                     control that keeps it and puts the same words elsewhere:
                     how many predictions change and how much its label's
                     probability falls, with 95% intervals over texts (exact
                     for the flips, the bootstrap for the probability drops).
  artifact-likeness  Does it read like how the data was collected rather than
                     like the task? Where it sits (a line of its own, the start
                     or end of the text), the same neighbours every time, its
                     shape (an identifier with digits, an address, markup), and
                     a label share that differs in the choosing half of the
                     test texts: a rule's score, its weights set by hand.

The reliance of --measure N of the associated cues is measured (the cues
marked first, every one of them even beyond N, then the most associated and
the most artifact-like by turns; default 40): the text says how many were not, and how many of those read
like collection; a larger N measures more and takes longer.

The test split is --test FILE, or the share train held out of --data as its
test split. It is halved at random (--seed): the cues are ranked and chosen on
one half, and every figure shown is measured on the other, which took no part
in choosing them; its tests decide which cues are acted on, so for those the
figures are what passed that test. The cues the model relies on that look like
collection are ranked first; those that read like the task are listed apart,
for you to judge. The output opens with the story; the commands that act on it
and how the numbers are made close it.

Marks keep your verdicts in a file beside the model (its name ending in
.marks, or --marks FILE). --mark-artifact CUE and --mark-task CUE mark a cue,
written as the audit shows it or as it appears in the text; --unmark CUE
removes a mark. A cue marked artifact is acted on when the model relies on it,
one marked task never is. With --data the audit runs with the new marks and
the file is written only when it succeeds; without --data only the marks are
written.

--seeds N trains N more models with the model's recipe on the same splits
(the model's seed + 1 ... + N) and audits each; --models names models already
trained so. A cue acted on in at least --stable-in K of the audits (default: a
majority) is stable. Filter numbers differ from model to model; cue words do
not.

--retrain trains a model without the cues acted on and those marked artifact
(taken out of the training text as train's --mask-tokens does, with the
patterns the model's own --mask-tokens took out) and compares both models on
the confirming half of the test texts (the choosing half chose the cues) as
it is and with the cues taken out; --retrain-out keeps the new model, which
records the choosing half: eval, compare and report warn when its figures
include those texts. When the audit acted on no cue and none is marked
artifact there is nothing to retrain without: the audit is printed and its
files written as without --retrain, nothing is trained, and the command
fails, as --masked-out does when no mask helped. --masked-out writes a copy
of the model with the filters masked that helped on the confirming half; on
a model with word weights (train --wide) the copy also reads the cues' own
words as the unknown word by the word weights, as the audit measured it.
When no mask helped, nothing is written and the command fails, after the
audit is printed and its other files written. --confirming-out writes
the confirming half's texts and labels (as read) to a .csv, .tsv or .jsonl
file, for comparing models on texts that took no part in choosing the cues
(telltale compare --test FILE).`,
	Options: func() options { return new(auditOptions) },
	Run:     runAs(runAudit),
}

// defaultMeasured is --measure's default, audit.Options.Measured's.
const defaultMeasured = 40

// maxSeeds bounds --seeds: each seed trains a whole model.
const maxSeeds = 20

type auditOptions struct {
	model, data, test            string
	read                         readOptions
	top, measure                 int
	marks                        string
	markArtifact, markTask, drop cueList
	seeds                        int
	models                       string
	stableIn                     int
	retrain                      bool
	retrainOut, vectors          string
	maskedOut, export            string
	confirmingOut                string
	seed                         uint64
	threads                      threadsOption
	asJSON, quiet                bool

	others []string // the --models items
}

// cueList is a repeatable option naming cues.
type cueList []string

func (c *cueList) String() string { return strings.Join(*c, "; ") }

func (c *cueList) Set(s string) error {
	if strings.TrimSpace(s) == "" {
		return errors.New("give the cue's words, in quotes")
	}
	*c = append(*c, s)
	return nil
}

func (*cueList) typeName() string { return "CUE" }

func (o *auditOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	fs.StringVar(&o.data, "data", "", "the labeled data the model was trained on")
	fs.StringVar(&o.test, "test", "", "labeled test file (default: the test split train held out of --data)")
	o.read.register(fs, true)
	intVar(fs, &o.top, "top", 15, "cues listed in each list, 1 or more")
	intVar(fs, &o.measure, "measure", defaultMeasured, "associated cues whose reliance is measured, 1 or more (more takes longer)")
	fs.StringVar(&o.marks, "marks", "", "the marks file (default: beside the model, its name ending in .marks)")
	fs.Var(&o.markArtifact, "mark-artifact", "mark a cue as an artifact of how the data was collected (repeatable)")
	fs.Var(&o.markTask, "mark-task", "mark a cue as language of the task (repeatable)")
	fs.Var(&o.drop, "unmark", "remove the mark of a cue (repeatable)")
	intVar(fs, &o.seeds, "seeds", 0, fmt.Sprintf("also train this many models (at most %d) with the model's recipe and other seeds, and tell which cues are stable", maxSeeds))
	fs.StringVar(&o.models, "models", "", "other models trained with the model's recipe on the same splits, comma-separated: tell which cues are stable")
	intVar(fs, &o.stableIn, "stable-in", 0, "with --seeds or --models: a cue is stable when acted on in at least this many audits (0: a majority)")
	fs.BoolVar(&o.retrain, "retrain", false, "train a model without the cues acted on or marked artifact and compare both models")
	fs.StringVar(&o.retrainOut, "retrain-out", "", "with --retrain: write the retrained model to this file")
	fs.StringVar(&o.vectors, "vectors", "", "with --seeds or --retrain: the word vectors the model was trained with (model files do not record them)")
	fs.StringVar(&o.maskedOut, "masked-out", "", "write a copy of the model with the filters masked that helped on the confirming half")
	fs.StringVar(&o.confirmingOut, "confirming-out", "", "write the confirming half of the test texts to this .csv, .tsv or .jsonl file")
	fs.StringVar(&o.export, "export", "", "write the listed cues to this .csv or .jsonl file (with --seeds or --models, the stability table beside it, NAME.stability.csv)")
	seedVar(fs, &o.seed, "seed", cnn.DefaultRecipe().Train.Seed, "random seed of the halves, the edits and the bootstrap")
	o.threads.register(fs)
	fs.BoolVar(&o.asJSON, "json", false, "print the audit as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "no progress bar, notes or warnings")
}

// marking reports whether the command line changes marks.
func (o *auditOptions) marking() bool {
	return len(o.markArtifact)+len(o.markTask)+len(o.drop) > 0
}

func (o *auditOptions) check(fs *flag.FlagSet, env *runEnv) error {
	if err := requireModel(o.model); err != nil {
		return err
	}
	if o.data == "" {
		if !o.marking() {
			return usagef("--data is required: the labeled data the model was trained on")
		}
		for _, name := range []string{"test", "measure", "seeds", "models", "retrain", "retrain-out", "masked-out", "confirming-out", "export", "json"} {
			if isSet(fs, name) {
				return usagef("--%s needs --data: without it the audit only writes the marks", name)
			}
		}
	}
	var err error
	if o.others, err = listItems("models", o.models); err != nil {
		return err
	}
	audits := 1 + o.seeds + len(o.others)
	for _, err := range []error{checkExport(o.export), checkAtLeast("top", o.top, 1, "cues listed in each list"),
		checkAtLeast("measure", o.measure, 1, "cues measured"),
		checkAtLeast("seeds", o.seeds, 0, "models to train; 0 trains none"), checkAtLeast("stable-in", o.stableIn, 0, "audits; 0 is a majority"),
		o.read.check(), o.threads.check(env.Stderr)} {
		if err != nil {
			return err
		}
	}
	switch {
	case o.seeds > maxSeeds:
		return usagef("--seeds %d: give at most %d (each seed trains a whole model)", o.seeds, maxSeeds)
	case o.seeds > 0 && len(o.others) > 0:
		return usagef("give --seeds N or --models, not both")
	case isSet(fs, "stable-in") && audits == 1:
		return usagef("--stable-in needs --seeds or --models: the cues stable over several models")
	case o.stableIn > audits:
		return usagef("--stable-in %d: there are only %d audits (the model and %d more)", o.stableIn, audits, audits-1)
	case o.confirmingOut != "" && corpus.FormatOf(o.confirmingOut) == "":
		return usagef("--confirming-out %s: the file must end in .csv, .tsv or .jsonl (its format)", clip(o.confirmingOut))
	case o.retrainOut != "" && !o.retrain:
		return usagef("--retrain-out needs --retrain")
	case o.vectors != "" && !o.retrain && o.seeds == 0:
		return usagef("--vectors is for training: give it with --seeds or --retrain")
	case o.vectors != "" && (o.seeds > 1 || o.seeds == 1 && o.retrain) && inputfile.IsPipe(o.vectors):
		return usagef("--vectors %s is a pipe, which can be read only once, and every model the audit trains reads it: give a regular file", clip(o.vectors))
	case o.marking() && inputfile.IsPipe(o.marksPath()):
		return usagef("the marks file %s is a pipe: the marks are written back to that file, which would replace the pipe: give a regular file with --marks", clip(o.marksPath()))
	case slices.Contains(o.others, o.model):
		return usagef("--models %s: the model itself is always audited; list the other models", clip(o.model))
	}
	return o.checkCues()
}

// checkCues refuses a cue given twice among the mark options.
func (o *auditOptions) checkCues() error {
	seen := map[string]string{}
	for _, l := range []struct {
		name string
		cues cueList
	}{{"mark-artifact", o.markArtifact}, {"mark-task", o.markTask}, {"unmark", o.drop}} {
		for _, c := range l.cues {
			key := strings.Join(strings.Fields(c), " ")
			if prev, ok := seen[key]; ok {
				return usagef("the cue %q is given to --%s and --%s: give each cue once", clip(key), prev, l.name)
			}
			seen[key] = l.name
		}
	}
	return nil
}

// marksPath is the marks file read and written.
func (o *auditOptions) marksPath() string {
	if o.marks != "" {
		return o.marks
	}
	return audit.MarksPath(o.model)
}

// stabilityPath is the table --export writes beside the cues with --seeds
// or --models ("" when none).
func (o *auditOptions) stabilityPath() string {
	if o.export == "" || o.seeds+len(o.others) == 0 {
		return ""
	}
	ext := filepath.Ext(o.export)
	return strings.TrimSuffix(o.export, ext) + ".stability" + ext
}

func (o *auditOptions) files() (outputs, inputs []outguard.File) {
	outputs = []outguard.File{{Name: "--export", Path: o.export}, {Name: "--export's stability table", Path: o.stabilityPath()},
		{Name: "--masked-out", Path: o.maskedOut}, {Name: "--retrain-out", Path: o.retrainOut}, {Name: "--confirming-out", Path: o.confirmingOut}}
	inputs = []outguard.File{{Name: "--model", Path: o.model}, {Name: "--data", Path: o.data}, {Name: "--test", Path: o.test},
		{Name: "--vectors", Path: o.vectors}}
	for _, p := range o.others {
		inputs = append(inputs, outguard.File{Name: "--models", Path: p})
	}
	// The marks file is the one file the audit both reads and writes: an
	// output when the marks change, else an input.
	marks := outguard.File{Name: marksOption, Path: o.marksPath()}
	if o.marking() {
		outputs = append(outputs, marks)
	} else {
		inputs = append(inputs, marks)
	}
	return outputs, inputs
}

func runAudit(ctx context.Context, env *runEnv, o *auditOptions) error {
	m, _, err := openModel(o.model)
	if err != nil {
		return err
	}
	marks, err := o.loadMarks(m)
	if err != nil {
		return err
	}
	if o.data == "" {
		return o.writeMarks(env, marks)
	}
	others, err := o.openOthers(m)
	if err != nil {
		return err
	}
	es, err := findTestSplit(m, o.data, o.test, &o.read, env.Stderr, o.quiet)
	if err != nil {
		return err
	}
	var recipe *cnn.Recipe
	if o.retrain || o.seeds > 0 {
		if recipe, err = o.trainingRecipe(m, es); err != nil {
			return err
		}
	}
	run := &auditRun{o: o, env: env, es: es, marks: marks, bar: newProgressBar(env.Stderr, o.quiet),
		src: auditSource{model: o.model, data: o.data, test: o.test, read: &o.read, vectors: o.vectors, es: es, m: m}}
	out, err := run.all(ctx, m, others, recipe)
	run.bar.done()
	if err != nil && ctx.Err() != nil {
		return run.stopped(out)
	}
	if err != nil {
		return err
	}
	if err := o.writeFiles(env, m, es, marks, out); err != nil {
		return err
	}
	if err := run.print(out); err != nil {
		return err
	}
	return run.unmade(out)
}

// unmade is the error (exit 1) of a run that printed the audit and wrote
// its files but could not make what --masked-out or --retrain asked for:
// no mask helped, or nothing was there to retrain without (no cue acted
// on, none marked artifact); nil when everything asked for was made.
func (r *auditRun) unmade(out *auditJSON) error {
	o := r.o
	noMask := o.maskedOut != "" && !out.Action.Suggested()
	if !noMask && !out.RetrainSkipped {
		return nil
	}
	if len(r.retrainPatterns(out.Result)) == 0 {
		var parts, remedies, options []string
		if noMask {
			parts, remedies, options = append(parts, o.maskedOut+" was not written"), append(remedies, "mask"), append(options, "--masked-out")
		}
		if out.RetrainSkipped {
			trained := "--retrain trained nothing"
			if o.retrainOut != "" {
				trained += " (" + o.retrainOut + " was not written)"
			}
			parts, remedies, options = append(parts, trained), append(remedies, "retrain without"), append(options, "--retrain")
		}
		printed := "the audit is printed"
		if o.export != "" || o.confirmingOut != "" || o.marking() {
			printed = "the audit is printed and its other files are written"
		}
		return fmt.Errorf("%s: the audit acted on no cue and no cue is marked artifact, so there is nothing to %s; %s; "+
			"mark a cue with --mark-artifact CUE if you judge it an artifact, else the audit found nothing that needs %s",
			strings.Join(parts, " and "), strings.Join(remedies, " or "), printed, strings.Join(options, " or "))
	}
	// Cues to take out, but no mask helped.
	why := "masking the filters that read the cues acted on (or their words' word weights) did not help on the confirming half, so the audit suggests no mask"
	if len(out.Action.Cues) == 0 {
		why = "the audit acted on no cue, so it suggests no mask"
	}
	advice := "retrain without the cues instead (--retrain)"
	if out.Retrained != nil {
		advice = "the model retrained without the cues (--retrain) is the remedy the audit offers"
	}
	return fmt.Errorf("%s was not written: %s; %s", o.maskedOut, why, advice)
}

// print writes the audit to standard output, as --json asks.
func (r *auditRun) print(out *auditJSON) error {
	if r.o.asJSON {
		return writeJSON(r.env.Stdout, out)
	}
	return writeAuditText(r.env.Stdout, newAuditView(r.o, r.src, r.priors, out))
}

// stopped is the error of a run interrupted by a signal, saying what was
// kept: when the model's own audit had finished (out not nil), it is
// printed first, and the message names the work that was stopped. No file
// is written either way.
func (r *auditRun) stopped(out *auditJSON) error {
	var unwritten []string
	outputs, _ := r.o.files()
	for _, f := range outputs {
		if f.Path != "" {
			unwritten = append(unwritten, f.Path)
		}
	}
	kept := "nothing was written"
	if len(unwritten) > 0 {
		kept = "nothing was written (not " + strings.Join(unwritten, ", ") + ")"
	}
	if out == nil {
		return interrupted("the audit was stopped before it ended: nothing was printed and " + kept)
	}
	if err := r.print(out); err != nil {
		return err
	}
	return interrupted(fmt.Sprintf("the audit of %s is complete and printed above, but %s was stopped; %s", r.o.model, r.stage, kept))
}

// auditJSON is what --json prints: the audit of the model (its fields at
// the top level) with the story and what the options added.
type auditJSON struct {
	*audit.Result
	Story string `json:"story"`
	// HeldoutSplit is "test", or "all" when the held-out texts are all of
	// --data (not the model's data, or a model that does not record its
	// splits).
	HeldoutSplit string `json:"heldout_split"`
	MarksFile    string `json:"marks_file"`
	// Stability is over the model and the models of --seeds or --models.
	Stability []audit.Stable `json:"stability,omitempty"`
	StableIn  int            `json:"stable_in,omitempty"`
	// Retrained is --retrain's comparison; RetrainedModel where
	// --retrain-out wrote the model.
	Retrained      *audit.Retrained `json:"retrained,omitempty"`
	RetrainedModel string           `json:"retrained_model,omitempty"`
	MaskedModel    string           `json:"masked_model,omitempty"`
	// RetrainSkipped: --retrain found nothing to retrain without (no cue
	// acted on, none marked artifact), so it did not train; the command
	// fails after writing the audit, saying so.
	RetrainSkipped bool `json:"retrain_skipped,omitempty"`
	// Warnings are those on the held-out texts, as eval's (findTestSplit:
	// why they may not be held-out texts); absent when there are none.
	Warnings []string `json:"warnings,omitempty"`
}

// auditRun is one run of the command: the audits of the model and of the
// other models, the stability over them and the retraining.
type auditRun struct {
	o      *auditOptions
	env    *runEnv
	es     *evalSet
	marks  *audit.Marks
	bar    *progressBar
	src    auditSource // the files, for the story's commands and the messages
	priors []float64   // each label's share of the training split
	stage  string      // the work after the model's own audit under way, for the message of an interrupt
}

// all audits m (and the other models), merges the audits and retrains as
// the options ask. When a later step fails, the audit of m is returned
// with the error (nil when m's own audit failed).
func (r *auditRun) all(ctx context.Context, m *cnn.Model, others []*cnn.Model, recipe *cnn.Recipe) (*auditJSON, error) {
	res, err := r.one(ctx, m, r.marks, "")
	if err != nil {
		return nil, err
	}
	out := &auditJSON{Result: res, Story: res.Story(), HeldoutSplit: r.es.name, MarksFile: r.o.marksPath(), Warnings: r.es.warnings}
	results := []*audit.Result{res}
	if r.o.seeds > 0 {
		say(r.env.Stderr, r.o.quiet, "the audit of %s is done; training %s with its recipe (--seeds)", r.o.model, wording.Count(r.o.seeds, "more model", "more models"))
	}
	for k := range r.o.seeds {
		seed := recipe.Train.Seed + uint64(k) + 1
		r.stage = fmt.Sprintf("training model %d of the %d of --seeds", k+1, r.o.seeds)
		sm, err := r.train(ctx, *recipe, seed, fmt.Sprintf("model %d of %d (seed %d)", k+1, r.o.seeds, seed))
		if err != nil {
			return out, err
		}
		others = append(others, sm)
	}
	for k, om := range others {
		r.stage = fmt.Sprintf("the audit of model %d of %d (for the cues' stability)", k+2, len(others)+1)
		or, err := r.one(ctx, om, knownMarks(r.marks, om), fmt.Sprintf("model %d of %d: ", k+2, len(others)+1))
		if err != nil {
			return out, err
		}
		results = append(results, or)
	}
	if len(results) > 1 {
		out.StableIn = r.o.stableIn
		if out.StableIn == 0 {
			out.StableIn = len(results)/2 + 1
		}
		out.Stability = audit.Stability(results, out.StableIn)
	}
	if patterns := r.retrainPatterns(res); r.o.retrain && len(patterns) == 0 {
		// Nothing to retrain without: the audit stands, and the command
		// says so when it ends (RetrainSkipped).
		out.RetrainSkipped = true
	} else if r.o.retrain {
		r.stage = "the retraining without the cues (--retrain)"
		say(r.env.Stderr, r.o.quiet, "the audit of %s is done; retraining without the cues (--retrain)", r.o.model)
		if out.Retrained, err = r.retrain(ctx, m, res, patterns, *recipe); err != nil {
			return out, err
		}
		if r.o.retrainOut != "" {
			out.RetrainedModel = r.o.retrainOut
		}
	}
	if r.o.maskedOut != "" && res.Action.Suggested() {
		out.MaskedModel = r.o.maskedOut
	}
	return out, nil
}

// one audits model m on the splits with marks; what prefixes the progress.
func (r *auditRun) one(ctx context.Context, m *cnn.Model, marks *audit.Marks, what string) (*audit.Result, error) {
	// The errors of NewData and NewHeldout name the file and the line.
	train, err := audit.NewData(m, r.es.train, r.o.threads.N)
	if err != nil {
		return nil, err
	}
	// The test texts as eval reads them: with --chars, unseen words have
	// vectors of their own, read by mu, the model audited.
	mu, held, err := audit.NewHeldout(m, r.es.test, r.o.threads.N)
	if err != nil {
		return nil, err
	}
	if r.priors == nil {
		r.priors = make([]float64, len(m.Labels))
		for _, g := range train.Gold {
			r.priors[g] += 1 / float64(len(train.Gold))
		}
	}
	opt := audit.Options{Top: r.o.top, Measured: r.o.measure, Marks: marks, ModelFile: r.o.model, TrainFile: r.o.data, HeldoutFile: cmpOr(r.src.heldoutFile(), r.o.data),
		HeldoutShare: r.src.heldoutShare(), RetrainCommands: r.src.retrainCommands, RetrainedModel: r.o.retrainOut, Seed: r.o.seed, Workers: r.o.threads.N}
	res, err := audit.Run(ctx, mu, train, held, opt, func(stage string, done, total int) {
		r.bar.show(done, total, what+"audit: "+auditStage(stage), false)
	})
	if errors.Is(err, audit.ErrOneLabel) {
		// Test texts that do not suit the audit, which the command line
		// chose: a usage error (exit 2), with the same message.
		return nil, usagef("%s", err)
	}
	return res, err
}

// train trains one more model with recipe and seed on the model's splits,
// for --seeds: without the recipe's linear baseline, which the audit never
// reads and which is not kept (the model is audited, then dropped).
func (r *auditRun) train(ctx context.Context, recipe cnn.Recipe, seed uint64, what string) (*cnn.Model, error) {
	recipe.Train.Seed = seed
	recipe.Baseline = nil
	tr, err := cnn.TrainText(ctx, r.es.train, r.es.dev, recipe, func(p cnn.Progress) {
		if p.Phase == "train" {
			r.bar.show(p.Batch, p.Batches, fmt.Sprintf("%s: epoch %d/%d", what, p.Epoch, p.Epochs), false)
		}
	})
	if err == nil {
		err = ctx.Err()
	}
	if err == nil && tr.Result.Diverged != nil {
		err = fmt.Errorf("training %s diverged in epoch %d: the model's recipe does not train stably with this seed", what, tr.Result.Diverged.Epoch)
	}
	if err != nil {
		return nil, err
	}
	return tr.Model, nil
}

// retrainPatterns are the patterns --retrain takes out of the training
// text: those of the cues the audit res acted on, then those of the cues
// marked artifact; none when the audit acted on no cue and none is marked.
func (r *auditRun) retrainPatterns(res *audit.Result) []string {
	patterns := slices.Clone(res.Action.Patterns)
	for _, p := range r.marks.Patterns() {
		if !slices.Contains(patterns, p) {
			patterns = append(patterns, p)
		}
	}
	return patterns
}

// retrain trains without patterns (retrainPatterns, not empty) and
// compares the two models, with and without them, on the audit's
// confirming half (the choosing half chose them).
func (r *auditRun) retrain(ctx context.Context, m *cnn.Model, res *audit.Result, patterns []string, recipe cnn.Recipe) (*audit.Retrained, error) {
	rt, err := audit.Retrain(ctx, m, patterns, r.es.train, r.es.dev, r.es.test, res.Confirmation, recipe, func(p cnn.Progress) {
		if p.Phase == "train" {
			r.bar.show(p.Batch, p.Batches, fmt.Sprintf("retraining without the cues: epoch %d/%d", p.Epoch, p.Epochs), false)
		}
	})
	if err == nil {
		err = ctx.Err()
	}
	if err != nil {
		return nil, err
	}
	// The new model was trained on m's training and dev splits of the same
	// data (trainingRecipe refuses other data), so m's split record is its
	// own: eval, report, filters and audit then find its test split again.
	// It records too that the choosing half of the held-out texts chose
	// the cues, so that a later command warns of figures on those texts.
	rec := *m.Info.Splits
	rt.Model.Info.Splits = &rec
	rt.Model.Info.CuesChosenOn = m.Info.CuesChosenOn
	rt.Model.Info.ChoseCues(r.o.choice(m, r.es, res, cnn.ChoseRetrain))
	return rt, nil
}

// choice is the record (cnn.Info.ChoseCues) that the audit res of model m
// chose what (cnn.ChoseRetrain or ChoseMask) on its choosing half of the
// held-out texts of es: "test" when they are the test split m records
// (the share of --data, or its test file), else named by the absolute
// path of the file read: --test, or --data when all of it was held out
// (es.name "all": data that is not the model's, or a model with no split
// record).
func (o *auditOptions) choice(m *cnn.Model, es *evalSet, res *audit.Result, what string) cnn.CueChoice {
	heldout := "test"
	switch t := o.test; {
	case es.name == "all":
		heldout = absPath(o.data)
	case t != "" && (m.Info.Splits == nil || absPath(t) != m.Info.Splits.TestFile):
		heldout = absPath(t)
	}
	return cnn.CueChoice{Half: "selection", For: what, Heldout: heldout, Of: len(es.test.Examples),
		Fingerprint: es.test.Fingerprint(), Seed: o.seed, Texts: res.Selection}
}

// loadMarks reads the marks file (none yet is no marks, unless --marks
// names it and nothing is marked) and applies the mark options.
func (o *auditOptions) loadMarks(m *cnn.Model) (*audit.Marks, error) {
	path := o.marksPath()
	marks, err := audit.ReadMarks(path, m)
	readErr := err
	switch {
	case errors.Is(err, fs.ErrNotExist) && (o.marks == "" || o.marking()):
		marks = audit.NewMarks()
	case errors.Is(err, fs.ErrNotExist):
		return nil, fmt.Errorf("--marks %s does not exist: give a marks file the audit wrote, or mark a cue to start one", path)
	case err != nil:
		return nil, err
	}
	for _, l := range []struct {
		cues cueList
		kind string
	}{{o.markArtifact, audit.MarkArtifact}, {o.markTask, audit.MarkTask}, {o.drop, ""}} {
		for _, c := range l.cues {
			words, err := cueWords(m, c)
			if err != nil {
				return nil, err
			}
			if l.kind == "" && marks.Get(words) == "" {
				have := markedCues(marks)
				if errors.Is(readErr, fs.ErrNotExist) {
					have = "it does not exist yet"
				}
				return nil, usagef("--unmark %q: no cue of that name is marked in %s (%s); nothing was written", clip(c), path, have)
			}
			if err := marks.Set(words, l.kind); err != nil {
				return nil, err
			}
		}
	}
	return marks, nil
}

// markedCues lists the cues marked in marks, for a message.
func markedCues(marks *audit.Marks) string {
	var out []string
	for _, kind := range []string{audit.MarkArtifact, audit.MarkTask} {
		for _, ws := range marks.Cues(kind) {
			out = append(out, fmt.Sprintf("%q (%s)", strings.Join(ws, " "), kind))
		}
	}
	if len(out) == 0 {
		return "it marks no cue"
	}
	return "the marked cues: " + strings.Join(out, ", ")
}

// writeMarks writes the marks file when the marks changed, and says so.
func (o *auditOptions) writeMarks(env *runEnv, marks *audit.Marks) error {
	if !o.marking() {
		return nil
	}
	path := o.marksPath()
	if err := marks.Write(path); err != nil {
		return fmt.Errorf("writing the marks: %w", err)
	}
	if !o.quiet {
		fmt.Fprintf(env.Stderr, "marks written to %s: %s marked artifact, %d task\n", path,
			wording.Count(len(marks.Cues(audit.MarkArtifact)), "cue", "cues"), len(marks.Cues(audit.MarkTask)))
	}
	return nil
}

// cueWords are the words of a cue given on the command line, as the audit
// writes them: the words as given when the model knows each (or it is
// audit.NumberWord), else the text split by the model's tokenizer with
// every number written as audit.NumberWord.
func cueWords(m *cnn.Model, cue string) ([]string, error) {
	known := make(map[string]bool, len(m.Vocab))
	for _, w := range m.Vocab {
		known[w] = true
	}
	fields := strings.Fields(cue)
	if !slices.ContainsFunc(fields, func(w string) bool { return !known[w] && w != audit.NumberWord }) {
		return fields, nil
	}
	tok, err := corpus.NewTokenizer(m.Tokenizer)
	if err != nil {
		return nil, err
	}
	var words []string
	for _, t := range tok.Tokenize(cue) {
		w := t.Text
		if strings.Trim(w, "0123456789") == "" {
			w = audit.NumberWord
		}
		if !known[w] && w != audit.NumberWord {
			return nil, usagef("the cue %q holds %q, which the model does not know: copy the cue as the audit shows it (in quotes)", clip(cue), clip(w))
		}
		words = append(words, w)
	}
	if len(words) == 0 {
		return nil, usagef("the cue %q holds no word: copy the cue as the audit shows it (in quotes)", clip(cue))
	}
	return words, nil
}

// knownMarks are the marks whose words model m knows (another model's
// vocabulary may lack a marked word, which then marks nothing there).
func knownMarks(marks *audit.Marks, m *cnn.Model) *audit.Marks {
	known := make(map[string]bool, len(m.Vocab))
	for _, w := range m.Vocab {
		known[w] = true
	}
	out := audit.NewMarks()
	for _, kind := range []string{audit.MarkArtifact, audit.MarkTask} {
		for _, ws := range marks.Cues(kind) {
			if !slices.ContainsFunc(ws, func(w string) bool { return !known[w] && w != audit.NumberWord }) {
				out.Set(ws, kind) // the words are those of a cue already marked: Set cannot fail
			}
		}
	}
	return out
}

// openOthers loads the --models, which must have the model's labels and
// splits.
func (o *auditOptions) openOthers(m *cnn.Model) ([]*cnn.Model, error) {
	var out []*cnn.Model
	for _, p := range o.others {
		om, _, err := openModel(p)
		if err != nil {
			return nil, err
		}
		if !slices.Equal(om.Labels, m.Labels) {
			return nil, usagef("--models %s has the labels %s but --model has %s: stability needs models of the same labels", p, listed(om.Labels), listed(m.Labels))
		}
		if m.Info.Splits == nil || !sameSplits(om.Info.Splits, m.Info.Splits) {
			return nil, usagef("--models %s was not trained on the splits of --model: its training texts may be test texts of the audit; "+
				"train it with the same --data and split options (or use --seeds N)", p)
		}
		if d := recipeDifference(m, om); d != "" {
			return nil, usagef("--models %s was not trained with the recipe of --model (%s): stability compares models that differ only "+
				"in their seed; train it with the same options (or use --seeds N)", p, d)
		}
		out = append(out, om)
	}
	return out, nil
}

// recipeDifference names the first setting in which model b was made
// differently from model a ("" when none): the network (Config), the
// tokenizer and its vocabulary, the masked filters, and the training
// settings the models record, all but the seed and the thread count, which
// change only the weights; the token mask's patterns are compared as a set
// (patternSet).
func recipeDifference(a, b *cnn.Model) string {
	ta, tb := a.Tokenizer, b.Tokenizer
	ta.SubwordPieces, tb.SubwordPieces = nil, nil // compared as the vocabulary
	ta.File, tb.File = "", ""                     // where it was read from: FileJSON holds the file itself
	var ra, rb cnn.TrainConfig
	switch {
	case (a.Info.Recipe == nil) != (b.Info.Recipe == nil):
		return fmt.Sprintf("training recipe recorded: %v for --model, %v for it", a.Info.Recipe != nil, b.Info.Recipe != nil)
	case a.Info.Recipe != nil:
		ra, rb = *a.Info.Recipe, *b.Info.Recipe
		ra.Seed, rb.Seed, ra.Threads, rb.Threads = 0, 0, 0, 0
		ra.MaskTokens, rb.MaskTokens = patternSet(ra.MaskTokens), patternSet(rb.MaskTokens)
	}
	for _, c := range []struct {
		what string
		a, b any
	}{{"", a.Config, b.Config}, {"tokenizer ", ta, tb}, {"", ra, rb}} {
		if d := fieldDifference(c.what, reflect.ValueOf(c.a), reflect.ValueOf(c.b)); d != "" {
			return d
		}
	}
	switch {
	case !slices.Equal(a.Vocab, b.Vocab):
		return fmt.Sprintf("vocabulary: %d words for --model, %d for it, or other words", len(a.Vocab), len(b.Vocab))
	case !slices.Equal(a.Masked, b.Masked):
		return "masked filters: the two models mask different filters"
	}
	return ""
}

// patternSet is the token mask's patterns sorted and distinct, a new
// slice: training takes out every match of any of them, whatever their
// order, so two masks of the same patterns are one mask.
func patternSet(patterns []string) []string {
	if len(patterns) == 0 {
		return patterns
	}
	return slices.Compact(slices.Sorted(slices.Values(patterns)))
}

// fieldDifference names the first field of the structs a and b (of one
// type) whose values differ, by its JSON name after prefix, with both
// values: "epochs 8 for --model, 4 for it".
func fieldDifference(prefix string, a, b reflect.Value) string {
	for i := range a.NumField() {
		fa, fb := a.Field(i), b.Field(i)
		if reflect.DeepEqual(fa.Interface(), fb.Interface()) {
			continue
		}
		f := a.Type().Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
		name = cmpOr(name, strings.ToLower(f.Name))
		show := func(v reflect.Value) string {
			if v.Kind() == reflect.Pointer {
				if v.IsNil() {
					return "none"
				}
				v = v.Elem()
			}
			return clip(fmt.Sprintf("%v", v.Interface()))
		}
		return fmt.Sprintf("%s%s %s for --model, %s for it", prefix, name, show(fa), show(fb))
	}
	return ""
}

// trainingRecipe is the recipe that trained m, for --seeds and --retrain,
// which train on m's own training and dev splits.
func (o *auditOptions) trainingRecipe(m *cnn.Model, es *evalSet) (*cnn.Recipe, error) {
	what := map[bool]string{true: "--retrain", false: "--seeds"}[o.retrain]
	if m.Info.Recipe == nil {
		return nil, fmt.Errorf("%s: %s records no training recipe (an imported model?): %s trains with the model's recipe; train a model with telltale train", what, o.model, what)
	}
	if es.dev == nil {
		return nil, fmt.Errorf("%s: %s is not the data %s was trained on (by its split record): %s trains on the model's own training split; give that data", what, o.data, o.model, what)
	}
	if rec := m.Info.Splits; readOnce(rec.DevFile, rec.DevPipe) {
		return nil, fmt.Errorf("%s: the model's dev split was read once at training (%s, a pipe or a per-process file), and cannot be read again: %s trains on the model's own splits; train the model again with the dev split as a regular file (train --dev FILE)", what, rec.DevFile, what)
	} else if rec.DevFile != "" {
		dev, err := o.read.readHeldOut(rec.DevFile, false, io.Discard, true)
		if err != nil {
			return nil, fmt.Errorf("%s: the model's dev split is the file it was trained with (%s), which cannot be read: %w", what, rec.DevFile, err)
		}
		es.dev = dev
	}
	if o.vectors != "" {
		if _, err := os.Stat(o.vectors); err != nil {
			return nil, fmt.Errorf("--vectors: %w", err)
		}
	}
	r := cnn.Recipe{Tokenizer: m.Tokenizer, Model: m.Config, Train: *m.Info.Recipe, VectorsPath: o.vectors}
	r.Tokenizer.SubwordPieces = nil // learned again on the training text
	r.Model.VocabSize, r.Model.Classes = 0, 0
	r.Train.Threads = o.threads.N
	return &r, nil
}

// writeFiles writes the exports, the marks and the models the options ask
// for.
func (o *auditOptions) writeFiles(env *runEnv, m *cnn.Model, es *evalSet, marks *audit.Marks, out *auditJSON) error {
	if o.export != "" {
		if err := report.WriteTableFile(o.export, report.CueTable(out.Result)); err != nil {
			return err
		}
		if p := o.stabilityPath(); p != "" {
			if err := report.WriteTableFile(p, report.StabilityTable(out.Stability)); err != nil {
				return err
			}
		}
	}
	if err := o.writeMarks(env, marks); err != nil {
		return err
	}
	if o.confirmingOut != "" {
		if err := writeConfirming(o.confirmingOut, es, out.Confirmation); err != nil {
			return err
		}
		say(env.Stderr, o.quiet, "the confirming half's %d texts are written to %s", len(out.Confirmation), o.confirmingOut)
	}
	if o.retrainOut != "" && out.Retrained != nil {
		if err := out.Retrained.Model.Save(o.retrainOut); err != nil {
			return err
		}
		say(env.Stderr, o.quiet, "the retrained model is written to %s", o.retrainOut)
	}
	if o.maskedOut != "" && out.Action.Suggested() {
		masked, err := out.Action.Remedy(m)
		if err != nil {
			return err
		}
		masked.Info.ChoseCues(o.choice(m, es, out.Result, cnn.ChoseMask))
		if err := masked.Save(o.maskedOut); err != nil {
			return err
		}
		say(env.Stderr, o.quiet, "the model with %s is written to %s", maskedWhatAudit(&out.Action), o.maskedOut)
	}
	return nil
}

func cmpOr(s, def string) string {
	if s == "" {
		return def
	}
	return s
}

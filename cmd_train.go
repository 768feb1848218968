package main

import (
	"cmp"
	"context"
	"flag"
	"fmt"
	"io"
	"path/filepath"
	"time"

	"telltale/cnn"
	"telltale/internal/outguard"
	"telltale/internal/wording"
)

var cmdTrain = &command{
	Name: "train",
	UsageLine: "train --data FILE --out MODEL [--dev FILE | --dev-frac X] [--test FILE | --test-frac X]\n" +
		"               [--text-col C] [--label-col C] [--epochs N] [--batch N] [--dim N] [--widths 3,4,5] [--maps N]\n" +
		"               [--dropout P] [--optimizer adam|adadelta] [--lr X] [--max-len N] [--patience N] [--keep-from N]\n" +
		"               [--vectors FILE] [--freeze] [--min-count N] [--subword] [--class-weight none|balanced]\n" +
		"               [--word-dropout A] [--token-dropout P] [--chars [--char-maps N] [--char-width W]]\n" +
		"               [--wide=false | --wide-bigrams=false] [--wide-lr F] [--wide-fit [--wide-fit-c C]]\n" +
		"               [--baseline=false] [--mask-tokens FILE] [--seed N] [--threads N] [--force] [--json]",
	Short: "train a sentence CNN on labeled data and save the model",
	Long: `Train builds a vocabulary from the training split, trains the convolutional
classifier of Kim (2014) and saves to --out the weights of the epoch with the
best macro-F1 on the dev split (from --keep-from's epoch on). Without --dev
and --test, --dev-frac and --test-frac of --data are held out as the dev
and test splits, stratified by label and seeded by --seed; the kept model
is evaluated on the test split at the end, and the model file records how
the splits were made, so that eval, audit, report, faithfulness, compare
and mask, given the same --data, evaluate on the same test split. The
defaults are those of the one default recipe (cnn.DefaultRecipe).

Unless --baseline=false, train also fits the linear baseline every CNN is
measured against on the same training split: TF-IDF features of the
unigrams and bigrams of the tokens the CNN sees and a multinomial logistic
regression, its regularisation C chosen by macro-F1 on the dev split. The
model file keeps it, and the test split shows both: accuracy with its 95%
Wilson interval, macro-F1 with its 95% bootstrap interval over texts (an
exact bound where a class has fewer than 10 errors or 10 right texts), and
the exact McNemar test between the two (how many texts only the CNN labels
right, how many only the baseline). Where the baseline is significantly
ahead (p < 0.05), a line after the figures says what to try (--wide-fit,
--class-weight balanced). eval, compare, report and the window show the
same figures of a model file that carries a baseline.

With --vectors and no --dim the embedding dimension is the file's.
--class-weight balanced weights each training text's loss by n/(k·n_c) (n
texts, k labels, n_c texts of its label), for imbalanced labels; the
baseline is weighted the same way. --token-dropout replaces any training
token by the unknown word with that probability in every batch (Bowman et
al. 2016), --word-dropout α replaces a word seen #w times with probability
α/(#w+α) (Kiperwasser & Goldberg 2016), so that the unknown word's vector
is trained on what unknown words are like.

The default recipe has a word-weight path beside the filters: each
vocabulary word and each pair of adjacent words of the training split has
one weight per label, and the mean of those weights over the text's words
and its pairs seen in training is added to the logits (the linear part of
Wide & Deep, Cheng et al. 2016; the averaged word and bigram features of
Joulin et al. 2017), trained with the rest; in every batch each pair of a
training text is left out with the --token-dropout probability, by a draw
of its own. --wide-lr F multiplies the path's learning rate (default 100:
at the rest's rate the weights hardly move before early stopping).
--wide-bigrams=false keeps the words' weights alone; --wide=false leaves
the path out (Kim's model alone). It combines with --chars.

--keep-from N keeps no epoch before the Nth: the one with the best dev
macro-F1 from the Nth on, patience counting from there (beyond --epochs
it means the last). The first epochs are where the word weights, at
their higher rate, have learned the easiest tokens and little else,
artifacts of the collection among them (docs/default-recipe.md).

Before training it refuses data that would give a useless model: more
distinct labels than half the examples (the text and label columns swapped,
say), an empty dev split, an empty vocabulary (--min-count too high), a model
too large for the machine's memory. --force trains anyway on the first two.
A run whose loss stops being a finite number stops at once, keeps the best
epoch so far and says to lower --lr. Press Ctrl-C to stop early: the best
model so far is saved. When --out names an existing file it is replaced
whole at the end (written beside it, then renamed), never in part.

--mask-tokens FILE takes cue tokens out of the training text first, and out
of the dev text the epoch is chosen on, so no choice follows them. The file
holds one pattern per line: a plain token, matched as a whole word without
regard to case (tkref matches in "TKREF-48213" but not in "tkrefs"), or a
regular expression between slashes in Go's RE2 syntax (/TKREF-[0-9]{5}/),
matched anywhere. Blank lines and lines starting with # are skipped. A line
that looks like a regular expression but lacks the slashes is a plain token
and usually matches nothing: train warns of it. The model file records the
patterns, so that audit --seeds and --retrain take them out again when they
train the model's recipe; predict, eval and explain read texts as they are
(a masked token is a word the model never saw).

A model describes its training data, not the world: check what it learned
(telltale audit) before you act on its labels, and never use a classifier
alone for decisions about people.`,
	Options: func() options { return new(trainOptions) },
	Run:     runAs(runTrain),
}

type trainOptions struct {
	data       string
	read       readOptions
	split      splitOptions
	recipe     recipeOptions
	threads    threadsOption
	out        string
	maskTokens string
	// maskPatterns are the patterns of the --mask-tokens file, as the
	// recipe takes them out and the model records them.
	maskPatterns []string
	force        bool
	asJSON       bool
	quiet        bool
}

func (o *trainOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.data, "data", "", "labeled data: a .csv, .tsv or .jsonl file, or a folder with one sub-folder per label")
	fs.StringVar(&o.out, "out", "", "where to write the model file")
	o.split.register(fs, "random seed: the held-out shares, the initialisation, shuffling and dropout")
	o.read.register(fs, true)
	o.recipe.register(fs)
	o.threads.register(fs)
	fs.StringVar(&o.maskTokens, "mask-tokens", "", "file of tokens or /regular expressions/ to take out of the training text (see above)")
	fs.BoolVar(&o.force, "force", false, "train although the labels look like texts or the dev split is empty")
	fs.BoolVar(&o.asJSON, "json", false, "print the final metrics as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "print nothing but errors (and --json output)")
}

func (o *trainOptions) check(fs *flag.FlagSet, env *runEnv) error {
	if o.data == "" {
		return usagef("--data is required: a labeled .csv, .tsv, .jsonl file or a folder of label folders")
	}
	if o.out == "" {
		return usagef("--out is required: where to write the model file, e.g. --out model.tt")
	}
	for _, err := range []error{o.recipe.check(fs), o.split.check(fs), o.read.check(), o.threads.check(env.Stderr)} {
		if err != nil {
			return err
		}
	}
	// The sizes the options alone set (the vocabulary is not known yet).
	return o.recipe.checkSize(2, 2, max(o.recipe.MaxLen, 1), o.threads.N, 0)
}

func (o *trainOptions) files() (outputs, inputs []outguard.File) {
	return []outguard.File{{Name: "--out", Path: o.out}}, []outguard.File{
		{Name: "--data", Path: o.data}, {Name: "--dev", Path: o.split.Dev}, {Name: "--test", Path: o.split.Test},
		{Name: "--vectors", Path: o.recipe.Vectors}, {Name: "--tokenizer", Path: o.recipe.Tokenizer}, {Name: "--mask-tokens", Path: o.maskTokens}}
}

func runTrain(ctx context.Context, env *runEnv, o *trainOptions) error {
	start := time.Now()
	if err := o.recipe.readTokenizer(); err != nil {
		return err
	}
	sp, err := o.split.load(o.data, &o.read, env.Stderr, o.quiet)
	if err != nil {
		return err
	}
	for _, p := range []struct {
		opt, path, later string
		once             bool
	}{{"--dev", o.split.Dev, "audit --seeds and --retrain, which train on the model's splits, will need the model trained with --dev FILE", sp.record.DevPipe},
		{"--test", o.split.Test, "give later commands the test file with --test", sp.record.TestPipe}} {
		if p.once {
			say(env.Stderr, o.quiet, "%s %s can be read only once (a pipe or a per-process file): the model records its path, but no later command reads it again; %s", p.opt, p.path, p.later)
		}
	}
	if !o.quiet {
		printWarnings(env.Stderr, sp.all.LabelWarnings())
	}
	held := o.heldTextsInTraining(sp) // before --mask-tokens changes the training texts
	// The checks read the training split as it will be learned: with the
	// --mask-tokens patterns taken out. TrainText takes them out itself
	// (the recipe's MaskTokens, which the model file records).
	checked := sp
	if o.maskTokens != "" {
		masked, patterns, err := maskTrainingText(sp.train, sp.dev, o.maskTokens, env.Stderr, o.quiet)
		if err != nil {
			return err
		}
		o.maskPatterns = patterns
		c := *sp
		c.train, checked = masked, &c
	}
	if err := o.checkData(checked, held, env.Stderr); err != nil {
		return err
	}
	trained, err := o.fit(ctx, sp, env.Stderr)
	if err != nil {
		return err
	}
	return o.keep(ctx, env, trained, sp, held, start)
}

// fit trains the model on the splits, showing progress.
func (o *trainOptions) fit(ctx context.Context, sp *splits, w io.Writer) (*cnn.Trained, error) {
	bar := newProgressBar(w, o.quiet)
	if !o.quiet {
		bar.line("training on %s (%d labels), dev %s, test %s", wording.Texts(len(sp.train.Examples)), len(sp.train.Labels),
			wording.Texts(len(sp.dev.Examples)), wording.Texts(len(sp.test.Examples)))
	}
	rec := o.recipe.recipe(o.split.Seed, o.threads.N)
	rec.Train.MaskTokens = o.maskPatterns
	trained, err := cnn.TrainText(ctx, sp.train, sp.dev, rec, func(p cnn.Progress) {
		if o.quiet {
			return
		}
		switch p.Phase {
		case "train":
			bar.show(p.Batch, p.Batches, fmt.Sprintf("epoch %d/%d  loss %.4f  %.0f ex/s", p.Epoch, p.Epochs, p.Loss, p.ExamplesPerSec), false)
		case "epoch":
			dev := ""
			if p.Dev != nil {
				dev = fmt.Sprintf("  dev accuracy %.4f  macro-F1 %.4f", p.Dev.Accuracy, p.Dev.MacroF1)
			}
			bar.line("epoch %d/%d  loss %.4f%s  %.0f examples/s", p.Epoch, p.Epochs, p.Loss, dev, p.ExamplesPerSec)
		case cnn.PhaseBaseline:
			bar.line("fitting the linear baseline (TF-IDF n-grams + logistic regression, %s)…", chosenC(len(sp.dev.Examples)))
		case cnn.PhaseWideFit:
			bar.line("fitting the start of the word weights (logistic regression on them alone, %s)…", o.fitCWords(len(sp.dev.Examples)))
		}
	})
	bar.done()
	return trained, err
}

// fitCWords says how the fitted start's C is set: --wide-fit-c's, or
// chosen on the dev split of dev texts (chosenC).
func (o *trainOptions) fitCWords(dev int) string {
	if c := o.recipe.WideFitC; c > 0 {
		return "at C " + fmtFloat(c) + " (--wide-fit-c)"
	}
	return chosenC(dev)
}

// chosenC says how a logistic regression's C is chosen: on the dev split
// of dev texts, or, when it has none, the middle of the grid of Cs
// (linear.RowsFit), as eval and the report say of the baseline's.
func chosenC(dev int) string {
	if dev == 0 {
		return "its C the grid's middle: the dev split has no text to choose it on"
	}
	return "its C chosen on the dev split"
}

// lowerRates names the learning rates a diverged run can lower: --lr, and
// --wide-lr when the word-weight table trained at its own multiple.
func lowerRates(m *cnn.Model) string {
	r := m.Info.Recipe
	if m.Config.Wide {
		return fmt.Sprintf("lower --lr (it was %g) or --wide-lr (it was %g)", r.LR, cmp.Or(r.WideLR, 1))
	}
	return fmt.Sprintf("lower --lr (it was %g)", r.LR)
}

// keep saves the trained model (its test evaluation and split record with
// it) unless no epoch completed, prints the summary (with the warnings of
// held: dev or test files that hold training texts), and returns the error
// of a run that was interrupted or diverged.
func (o *trainOptions) keep(ctx context.Context, env *runEnv, trained *cnn.Trained, sp *splits, held heldInTraining, start time.Time) error {
	m, res := trained.Model, trained.Result
	if o.recipe.Vectors != "" && !o.quiet {
		fmt.Fprintf(env.Stderr, "vectors: %d of %d vocabulary words found in %s\n", trained.VectorsFound, len(m.Vocab)-2, o.recipe.Vectors)
	}
	if res.BestEpoch == 0 {
		what := "training stopped before the first epoch ended"
		if d := res.Diverged; d != nil {
			return fmt.Errorf("training diverged in epoch %d before it ended (%s): nothing saved to %s; %s",
				d.Epoch, divergedWhere(d), o.out, lowerRates(m))
		}
		return interrupted(what + "; nothing saved to " + o.out)
	}
	m.Info.Splits = &sp.record
	var figures *cnn.Figures
	var cmp *cnn.Comparison
	if len(sp.test.Examples) > 0 && ctx.Err() == nil {
		met, c, err := evaluateBeside(m, trained.Encoder, sp.test, o.threads.N)
		if err != nil {
			return err
		}
		m.Info.Test, cmp = &met, c
		f := cnn.FiguresOf(met, c)
		figures = &f
	}
	if err := m.Save(o.out); err != nil {
		return err
	}
	abs, _ := filepath.Abs(o.out)
	summary := trainSummary{Model: abs, BestEpoch: res.BestEpoch, Epochs: len(res.Epochs), Cancelled: res.Cancelled,
		StoppedEarly: res.StoppedEarly, Diverged: res.Diverged != nil, Divergence: res.Diverged, ExamplesPerSecond: res.ExamplesPerSec, Dev: m.Info.Dev, Test: m.Info.Test,
		Splits: m.Info.Splits, Seconds: time.Since(start).Seconds()}
	summary.TestFigures, summary.Baseline = figures, baselineOf(m, cmp)
	summary.Warnings, summary.testInTraining = held.warnings, held.test
	if m.Info.Recipe != nil {
		summary.MaskTokens = m.Info.Recipe.MaskTokens
	}
	if figures != nil {
		summary.advice = baselineAdvice(m, figures.McNemar)
		if held.test > 0 {
			summary.advice = adviceOnHeldOut(summary.advice, "a test split that holds texts of the training split, which both models learned")
		}
	}
	if m.Info.Dev != nil {
		iv := cnn.IntervalsOf(*m.Info.Dev)
		summary.DevIntervals, summary.DevNote = &iv, devNoteOf(held)
	}
	if m.Info.Test != nil {
		iv := cnn.IntervalsOf(*m.Info.Test)
		summary.TestIntervals = &iv
	}
	if o.asJSON {
		if err := writeJSON(env.Stdout, summary); err != nil {
			return err
		}
	} else if !o.quiet {
		writeTrainSummary(env.Stdout, summary)
	}
	switch {
	case res.Diverged != nil:
		return fmt.Errorf("training diverged in epoch %d (%s) and stopped; the best model so far (epoch %d) is saved in %s; %s to train on",
			res.Diverged.Epoch, divergedWhere(res.Diverged), res.BestEpoch, abs, lowerRates(m))
	case res.Cancelled:
		return interrupted(fmt.Sprintf("training stopped after epoch %d; the best model so far (epoch %d) is saved in %s", len(res.Epochs), res.BestEpoch, abs))
	case ctx.Err() != nil && o.recipe.Baseline && m.Baseline == nil:
		return interrupted(fmt.Sprintf("the linear baseline's fit was stopped; the CNN (kept epoch %d) is saved in %s without it and without test figures", res.BestEpoch, abs))
	}
	return nil
}

// divergedWhere says where a run diverged.
func divergedWhere(d *cnn.Divergence) string {
	if d.Batch == 0 {
		return "weights that are not finite numbers at the end of the epoch"
	}
	return fmt.Sprintf("the loss of batch %d was %s", d.Batch, d.Value)
}

type trainSummary struct {
	Model             string          `json:"model"`
	BestEpoch         int             `json:"best_epoch"`
	Epochs            int             `json:"epochs"`
	Cancelled         bool            `json:"cancelled"`
	StoppedEarly      bool            `json:"stopped_early"`
	Diverged          bool            `json:"diverged"`
	Divergence        *cnn.Divergence `json:"divergence,omitempty"`
	ExamplesPerSecond float64         `json:"examples_per_second"`
	Seconds           float64         `json:"seconds"`
	Dev               *cnn.Metrics    `json:"dev,omitempty"`
	// DevIntervals are those of Dev's figures (cnn.IntervalsOf); DevNote
	// says that the dev split chose the epoch and the baseline's C, so
	// that its figures flatter the model.
	DevIntervals *cnn.MetricIntervals `json:"dev_intervals,omitempty"`
	DevNote      string               `json:"dev_note,omitempty"`
	Test         *cnn.Metrics         `json:"test,omitempty"`
	// TestIntervals are those of Test's figures beside the headline's
	// (TestFigures): weighted F1, ECE with the calibration test, and every
	// class's precision, recall and F1.
	TestIntervals *cnn.MetricIntervals `json:"test_intervals,omitempty"`
	TestFigures   *cnn.Figures         `json:"test_figures,omitempty"`
	Baseline      *baselineJSON        `json:"baseline,omitempty"`
	Splits        *cnn.SplitRecord     `json:"splits,omitempty"`
	// Warnings say which of the dev and test splits (files, or shares of
	// --data) hold texts of the training split, and how many
	// (heldTextsInTraining): such test figures
	// are not held-out figures. Absent when there are none; given with
	// --quiet too.
	Warnings []string `json:"warnings,omitempty"`
	// MaskTokens are the patterns --mask-tokens took out of the training
	// text, as the model's recipe records them (info.recipe.mask_tokens).
	MaskTokens     []string `json:"mask_tokens,omitempty"`
	advice         string   // baselineAdvice, printed after the test split's figures
	testInTraining int      // the texts of the test split that are training texts
}

// devNote is train --json's dev_note, when the test split holds no
// training text.
const devNote = "the dev split chose the epoch (and the baseline's C): its figures flatter the model; the test split's do not"

// devNoteOf is train --json's dev_note: devNote, unless the test split
// holds training texts (held.test), whose figures flatter the model too.
func devNoteOf(held heldInTraining) string {
	if held.test == 0 {
		return devNote
	}
	return fmt.Sprintf("the dev split chose the epoch (and the baseline's C): its figures flatter the model; "+
		"so do the test split's, as %s of it are texts of the training split", wording.Texts(held.test))
}

func writeTrainSummary(w io.Writer, s trainSummary) {
	fmt.Fprintf(w, "model saved: %s (kept epoch %d of %d, %.0f training examples/s, %.1f s in all)\n",
		s.Model, s.BestEpoch, s.Epochs, s.ExamplesPerSecond, s.Seconds)
	if s.Dev != nil {
		writeFigures(w, fmt.Sprintf("dev split, %s, used to choose the epoch", wording.Texts(s.Dev.N)), cnn.Figures{CNN: cnn.HeadlineOf(*s.Dev)}, nil)
		writeECE(w, "", s.DevIntervals)
	}
	if s.TestFigures != nil {
		writeFigures(w, testHeading(s.TestFigures.CNN.N, s.testInTraining), *s.TestFigures, s.Baseline)
		writeECE(w, "CNN", s.TestIntervals)
		fmt.Fprint(w, s.advice)
	}
}

// testHeading names the test split train evaluated on (n texts, inTrain
// of them texts of the training split): used for nothing else, unless it
// holds training texts, whose figures are not held-out figures.
func testHeading(n, inTrain int) string {
	if inTrain > 0 {
		return fmt.Sprintf("test split, %s, %d of them texts of the training split: not held-out figures", wording.Texts(n), inTrain)
	}
	return fmt.Sprintf("test split, %s, used for nothing else", wording.Texts(n))
}

// writeECE prints the ECE of iv with its interval and calibration test as
// a line of the figures block above it, under name; nothing when the
// confidences are not known (no interval). The dev split's figures, printed
// as the test split's with the same intervals, chose the epoch, so they
// flatter the model.
func writeECE(w io.Writer, name string, iv *cnn.MetricIntervals) {
	if iv != nil && iv.ECE != nil {
		fmt.Fprintf(w, "  %-15s  ECE %s\n", name, iv.ECE)
	}
}

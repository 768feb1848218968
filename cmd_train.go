package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"telltale/cnn"
	"telltale/corpus"
)

// recipeFlags are the model and training options of train (and of the
// window's recipe form, which mirrors them).
type recipeFlags struct {
	Epochs, Batch, Dim, Filters, MaxLen, Threads, Patience, MinCount int
	Widths, Optimizer, Vectors, Tokenizer                            string
	Dropout, LR, MaxNorm                                             float64
	Freeze, Subword, Lower                                           bool
}

func (r *recipeFlags) register(fs *flag.FlagSet) {
	fs.IntVar(&r.Epochs, "epochs", 10, "passes over the training data")
	fs.IntVar(&r.Batch, "batch", 50, "mini-batch size")
	fs.IntVar(&r.Dim, "dim", 128, "embedding dimension (must match --vectors when given)")
	fs.StringVar(&r.Widths, "widths", "3,4,5", "filter widths, comma-separated")
	fs.IntVar(&r.Filters, "filters", 100, "feature maps per width")
	fs.Float64Var(&r.Dropout, "dropout", 0.5, "dropout rate on the pooled layer")
	fs.Float64Var(&r.MaxNorm, "max-norm", 0, "max L2 norm of each output-weight row (Kim used 3); 0 is off")
	fs.StringVar(&r.Optimizer, "optimizer", "adam", "adam or adadelta")
	fs.Float64Var(&r.LR, "lr", 0, "learning rate (default 0.001 for adam, 1.0 for adadelta)")
	fs.IntVar(&r.MaxLen, "max-len", 400, "cut texts to this many tokens (0 keeps them whole)")
	fs.IntVar(&r.Patience, "patience", 3, "stop after this many epochs without a better dev macro-F1 (negative: never)")
	fs.StringVar(&r.Vectors, "vectors", "", "pretrained word vectors: one word and its numbers per line (.gz accepted)")
	fs.BoolVar(&r.Freeze, "freeze", false, "keep the embeddings fixed during training")
	fs.IntVar(&r.Threads, "threads", 0, "worker goroutines (default: all cores)")
	fs.IntVar(&r.MinCount, "min-count", 1, "minimum training count for a word to enter the vocabulary")
	fs.BoolVar(&r.Subword, "subword", false, "learn subword pieces on the training split for unknown words")
	fs.BoolVar(&r.Lower, "lower", true, "lower-case tokens")
	fs.StringVar(&r.Tokenizer, "tokenizer", "", "a tokenizer file in the JSON format of github.com/sugarme/tokenizer")
}

func (r *recipeFlags) tokenizerConfig() corpus.TokenizerConfig {
	return corpus.TokenizerConfig{Lower: r.Lower, MinCount: r.MinCount, Subword: r.Subword, File: r.Tokenizer}
}

func (r *recipeFlags) modelConfig(vocabSize, classes int) (cnn.Config, error) {
	widths, err := parseInts(r.Widths, "widths")
	if err != nil {
		return cnn.Config{}, err
	}
	c := cnn.Config{VocabSize: vocabSize, Dim: r.Dim, Widths: widths, Filters: r.Filters, Classes: classes,
		Dropout: float32(r.Dropout), MaxNorm: float32(r.MaxNorm)}
	if err := c.Validate(); err != nil {
		return c, usageError{err.Error()}
	}
	return c, nil
}

func (r *recipeFlags) trainConfig(seed uint64) (cnn.TrainConfig, error) {
	// The library reads 0 as "the default"; on the command line it is a mistake.
	if r.Epochs < 1 || r.Batch < 1 {
		return cnn.TrainConfig{}, usagef("--epochs and --batch must be at least 1 (got %d and %d)", r.Epochs, r.Batch)
	}
	tc := cnn.TrainConfig{Epochs: r.Epochs, Batch: r.Batch, Optimizer: r.Optimizer, LR: r.LR, Seed: seed,
		Threads: r.Threads, Patience: r.Patience, MaxLen: r.MaxLen, FreezeEmb: r.Freeze}
	if r.Patience == 0 {
		tc.Patience = -1
	}
	tc, err := tc.WithDefaults()
	if err != nil {
		return tc, usageError{err.Error()}
	}
	return tc, nil
}

func init() {
	register(&command{
		Name: "train",
		UsageLine: "train --data FILE [--dev FILE] [--text-col C] [--label-col C] --out MODEL\n" +
			"               [--epochs N] [--batch N] [--dim N] [--widths 3,4,5] [--filters N] [--dropout P]\n" +
			"               [--optimizer adam|adadelta] [--lr X] [--max-len N] [--vectors FILE] [--freeze]\n" +
			"               [--mask-tokens FILE] [--seed N] [--threads N] [--json]",
		Short: "train a sentence CNN on labeled data and save the model",
		Long: `Train builds a vocabulary from the training data, trains the convolutional
classifier of Kim (2014) and saves the best epoch's weights (by macro-F1 on the
dev split) to --out. Without --dev, --dev-frac of --data is held out, stratified
by label, for early stopping. Press Ctrl-C to stop early: the best model so far
is saved. With --mask-tokens, the tokens or regular expressions listed in that
file (one per line) are taken out of the training text first.`,
		Setup: func(fs *flag.FlagSet) func(context.Context, *runEnv) error {
			var df dataFlags
			var rf recipeFlags
			df.register(fs, "dev file for early stopping (default: --dev-frac of --data)")
			rf.register(fs)
			out := fs.String("out", "", "where to write the model file")
			devFrac := fs.Float64("dev-frac", 0.1, "without --dev: share of --data held out for early stopping")
			maskTokens := fs.String("mask-tokens", "", "file of tokens or regular expressions to take out of the training text")
			asJSON := fs.Bool("json", false, "print the final metrics as one JSON object")
			quiet := fs.Bool("quiet", false, "print nothing but errors (and --json output)")
			return func(ctx context.Context, env *runEnv) error {
				if *out == "" {
					return usagef("--out is required: where to write the model file, e.g. --out model.tt")
				}
				df.TestFrac = *devFrac
				return runTrain(ctx, env, &df, &rf, *out, *maskTokens, *asJSON, *quiet)
			}
		},
	})
}

func runTrain(ctx context.Context, env *runEnv, df *dataFlags, rf *recipeFlags, out, maskFile string, asJSON, quiet bool) error {
	start := time.Now()
	if err := checkOutPath(out); err != nil {
		return err
	}
	train, dev, err := df.load(env.Stderr, quiet)
	if err != nil {
		return err
	}
	if maskFile != "" {
		var n int
		if train, n, err = maskTrainingText(train, maskFile); err != nil {
			return err
		}
		if !quiet {
			fmt.Fprintf(env.Stderr, "mask-tokens: %d matches of the patterns in %s taken out of the training text\n", n, maskFile)
		}
	}
	cfg, err := rf.modelConfig(2, max(2, len(train.Labels)))
	if err != nil {
		return err
	}
	tc, err := rf.trainConfig(df.Seed)
	if err != nil {
		return err
	}
	recipe := cnn.Recipe{Tokenizer: rf.tokenizerConfig(), Model: cfg, Train: tc, VectorsPath: rf.Vectors}
	bar := newProgressBar(env.Stderr, quiet)
	if !quiet {
		bar.line("training on %d texts (%d labels), dev %d texts", len(train.Examples), len(train.Labels), len(dev.Examples))
	}
	trained, err := cnn.TrainText(ctx, train, dev, recipe, func(p cnn.Progress) {
		if quiet {
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
		}
	})
	bar.done()
	if err != nil {
		return err
	}
	m, res := trained.Model, trained.Result
	if rf.Vectors != "" && !quiet {
		fmt.Fprintf(env.Stderr, "vectors: %d of %d vocabulary words found in %s\n", trained.VectorsFound, len(m.Vocab)-2, rf.Vectors)
	}
	m.Info.Notes = map[string]string{"data": df.Data, "dev": df.Dev, "seed": fmt.Sprint(df.Seed)}
	if df.Dev == "" {
		// audit and report find the same dev split again from these.
		m.Info.Notes["dev_frac"] = fmt.Sprint(df.TestFrac)
		if abs, err := filepath.Abs(df.Data); err == nil {
			m.Info.Notes["data_abs"] = abs
		}
	}
	if res != nil && res.BestEpoch == 0 {
		return fmt.Errorf("training stopped before the first epoch ended; nothing saved to %s", out)
	}
	if err := m.Save(out); err != nil {
		return err
	}
	abs, _ := filepath.Abs(out)
	summary := trainSummary{Model: abs, BestEpoch: res.BestEpoch, Epochs: len(res.Epochs), Cancelled: res.Cancelled,
		StoppedEarly: res.StoppedEarly, ExamplesPerSecond: res.ExamplesPerSec, Dev: m.Info.Dev, Seconds: time.Since(start).Seconds()}
	if asJSON {
		if err := writeJSON(env.Stdout, summary); err != nil {
			return err
		}
	} else if !quiet {
		writeTrainSummary(env.Stdout, summary)
	}
	if res.Cancelled {
		return interrupted(fmt.Sprintf("training interrupted after epoch %d; the best model so far (epoch %d) is saved in %s", len(res.Epochs), res.BestEpoch, abs))
	}
	return nil
}

// interrupted is the error of a run stopped by the user (exit code 1); its
// message says what was kept. It matches context.Canceled under errors.Is.
type interrupted string

func (e interrupted) Error() string { return string(e) }
func (e interrupted) Unwrap() error { return context.Canceled }

// checkOutPath fails, naming path, when no file can be written there (it
// is a folder, or its folder is missing or not writable), so that a long
// training run does not end with nowhere to save. It creates and removes a
// temporary file next to path; the model itself is later written atomically
// by cnn.Model.Save.
func checkOutPath(path string) error {
	if st, err := os.Stat(path); err == nil && st.IsDir() {
		return fmt.Errorf("--out %s is a folder: give a file name, e.g. %s", path, filepath.Join(path, "model.tt"))
	}
	f, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".check*")
	if err != nil {
		return fmt.Errorf("--out %s cannot be written (%v): check that its folder exists and is writable", path, err)
	}
	name := f.Name()
	f.Close()
	return os.Remove(name)
}

type trainSummary struct {
	Model             string       `json:"model"`
	BestEpoch         int          `json:"best_epoch"`
	Epochs            int          `json:"epochs"`
	Cancelled         bool         `json:"cancelled"`
	StoppedEarly      bool         `json:"stopped_early"`
	ExamplesPerSecond float64      `json:"examples_per_second"`
	Seconds           float64      `json:"seconds"`
	Dev               *cnn.Metrics `json:"dev,omitempty"`
}

func writeTrainSummary(w io.Writer, s trainSummary) {
	fmt.Fprintf(w, "model saved: %s (best epoch %d of %d, %.0f training examples/s, %.1f s in all)\n",
		s.Model, s.BestEpoch, s.Epochs, s.ExamplesPerSecond, s.Seconds)
	if s.Dev != nil {
		fmt.Fprintf(w, "dev: accuracy %.4f  macro-F1 %.4f  ECE %.4f  (%d texts)\n", s.Dev.Accuracy, s.Dev.MacroF1, s.Dev.ECE, s.Dev.N)
	}
}

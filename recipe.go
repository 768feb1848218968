package main

import (
	"flag"
	"fmt"
	"runtime"

	"telltale/cnn"
	"telltale/corpus"
)

// recipeOptions are train's model and training options; their defaults
// are cnn.DefaultRecipe's.
type recipeOptions struct {
	Epochs, Batch, Dim, Maps, MaxLen, Patience, MinCount int
	Widths, Optimizer, Vectors, Tokenizer                string
	Dropout, LR, MaxNorm                                 float64
	Freeze, Subword, Lower                               bool

	widths []int
}

func (r *recipeOptions) register(fs *flag.FlagSet) {
	def := cnn.DefaultRecipe()
	intVar(fs, &r.Epochs, "epochs", def.Train.Epochs, "passes over the training split")
	intVar(fs, &r.Batch, "batch", def.Train.Batch, "mini-batch size")
	intVar(fs, &r.Dim, "dim", def.Model.Dim, "embedding dimension (must match --vectors when given)")
	fs.StringVar(&r.Widths, "widths", joinInts(def.Model.Widths), "filter widths, comma-separated (1 to 32 each)")
	intVar(fs, &r.Maps, "maps", def.Model.Filters, "feature maps (filters) per width")
	floatVar(fs, &r.Dropout, "dropout", float64(def.Model.Dropout), "dropout rate on the pooled layer, in [0, 1)")
	floatVar(fs, &r.MaxNorm, "max-norm", float64(def.Model.MaxNorm), "max L2 norm of each output-weight row (Kim used 3); 0 is off")
	fs.StringVar(&r.Optimizer, "optimizer", def.Train.Optimizer, "adam or adadelta")
	floatVar(fs, &r.LR, "lr", def.Train.LR, "learning rate; 0 is the optimizer's default (0.001 for adam, 1.0 for adadelta)")
	intVar(fs, &r.MaxLen, "max-len", def.Train.MaxLen, "cut texts to this many tokens (0 keeps them whole)")
	intVar(fs, &r.Patience, "patience", def.Train.Patience, "stop after this many epochs without a better dev macro-F1; 0 never stops early")
	fs.StringVar(&r.Vectors, "vectors", def.VectorsPath, "pretrained word vectors: one word and its numbers per line (.gz accepted)")
	fs.BoolVar(&r.Freeze, "freeze", def.Train.FreezeEmb, "keep the embeddings fixed during training")
	intVar(fs, &r.MinCount, "min-count", def.Tokenizer.MinCount, "minimum training count for a word to enter the vocabulary")
	fs.BoolVar(&r.Subword, "subword", def.Tokenizer.Subword, "learn subword pieces on the training split for unknown words")
	fs.BoolVar(&r.Lower, "lower", def.Tokenizer.Lower, "lower-case tokens")
	fs.StringVar(&r.Tokenizer, "tokenizer", def.Tokenizer.File, "a tokenizer file in the JSON format of github.com/sugarme/tokenizer")
}

// check refuses every value that cannot train, naming the option.
func (r *recipeOptions) check() error {
	for _, c := range []struct {
		name   string
		n, lo  int
		reason string
	}{
		{"epochs", r.Epochs, 1, "passes over the training split"},
		{"batch", r.Batch, 1, "texts per mini-batch"},
		{"dim", r.Dim, 1, "numbers per word embedding"},
		{"maps", r.Maps, 1, "feature maps per width"},
		{"max-len", r.MaxLen, 0, "0 keeps texts whole"},
		{"patience", r.Patience, 0, "epochs without a better dev macro-F1 before stopping; 0 never stops early"},
		{"min-count", r.MinCount, 1, "a word enters the vocabulary once it occurs this often"},
	} {
		if err := checkAtLeast(c.name, c.n, c.lo, c.reason); err != nil {
			return err
		}
	}
	var err error
	if r.widths, err = listInts("widths", r.Widths, 1, "a filter width (1 or more)"); err != nil {
		return err
	}
	if len(r.widths) == 0 {
		return usagef("--widths is empty: give at least one filter width, e.g. --widths 3,4,5")
	}
	for _, w := range r.widths {
		if w > 32 {
			return usagef("--widths %q: %d is wider than 32 tokens", clip(r.Widths), w)
		}
	}
	switch {
	case r.Dropout < 0 || r.Dropout >= 1:
		return usagef("--dropout %g: give a rate from 0 up to (not including) 1", r.Dropout)
	case r.MaxNorm < 0:
		return usagef("--max-norm %g: give a positive norm, or 0 for none", r.MaxNorm)
	case r.LR < 0:
		return usagef("--lr %g: give a positive learning rate, or 0 for the optimizer's default", r.LR)
	case r.Optimizer != "adam" && r.Optimizer != "adadelta":
		return usagef("--optimizer %q: use adam or adadelta", clip(r.Optimizer))
	}
	return nil
}

func (r *recipeOptions) tokenizerConfig() corpus.TokenizerConfig {
	return corpus.TokenizerConfig{Lower: r.Lower, MinCount: r.MinCount, Subword: r.Subword, File: r.Tokenizer}
}

// recipe is the cnn.Recipe of the options (VocabSize and Classes are
// filled in by cnn.TrainText).
func (r *recipeOptions) recipe(seed uint64, threads int) cnn.Recipe {
	tc := cnn.TrainConfig{Epochs: r.Epochs, Batch: r.Batch, Optimizer: r.Optimizer, LR: r.LR, Seed: seed,
		Threads: threads, Patience: r.Patience, MaxLen: r.MaxLen, FreezeEmb: r.Freeze}
	if r.Patience == 0 {
		tc.Patience = -1 // the library reads 0 as its default; here it means never
	}
	cfg := cnn.Config{Dim: r.Dim, Widths: r.widths, Filters: r.Maps, Dropout: float32(r.Dropout), MaxNorm: float32(r.MaxNorm)}
	return cnn.Recipe{Tokenizer: r.tokenizerConfig(), Model: cfg, Train: tc, VectorsPath: r.Vectors}
}

// checkSize refuses a model whose training would not fit in memory, with
// vocab words, classes labels and texts of up to longest tokens.
func (r *recipeOptions) checkSize(vocab, classes, longest, threads int) error {
	if threads == 0 {
		threads = runtime.GOMAXPROCS(0)
	}
	maxLen := r.MaxLen
	if maxLen == 0 || longest < maxLen {
		maxLen = longest
	}
	cfg := cnn.Config{VocabSize: vocab, Dim: r.Dim, Widths: r.widths, Filters: r.Maps, Classes: classes}
	return checkMemory(cfg, r.Batch, maxLen, threads)
}

func joinInts(xs []int) string {
	s := ""
	for i, x := range xs {
		if i > 0 {
			s += ","
		}
		s += fmt.Sprint(x)
	}
	return s
}

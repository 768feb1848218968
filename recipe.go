package main

import (
	"bufio"
	"compress/gzip"
	"flag"
	"fmt"
	"io"
	"runtime"
	"strconv"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/inputfile"
)

// recipeOptions are train's model and training options; their defaults
// are cnn.DefaultRecipe's.
type recipeOptions struct {
	Epochs, Batch, Dim, Maps, MaxLen, Patience, MinCount int
	KeepFrom                                             int
	CharMaps, CharWidth                                  int
	Widths, Optimizer, Vectors, Tokenizer, ClassWeight   string
	Dropout, LR, MaxNorm, WordDropout, TokenDropout      float64
	WideLR, WideFitC                                     float64
	Freeze, Subword, Lower, Baseline, Chars, Wide        bool
	WideBigrams, WideFit                                 bool

	widths []int
	// dimFromVectors: no --dim was given with --vectors, so the embedding
	// dimension is the file's (Dim holds it as the file's first line says,
	// for the memory check).
	dimFromVectors bool
	// tokenizerJSON is the --tokenizer file, read once (readTokenizer):
	// training builds its tokenizer more than once, and a pipe can be read
	// only once.
	tokenizerJSON []byte
}

// decimal32 is the float64 of x's shortest decimal form, so that a
// float32 default such as 0.3 shows as 0.3 in the help text, not as
// 0.30000001192092896; converted back to float32 it is x again.
func decimal32(x float32) float64 {
	v, _ := strconv.ParseFloat(strconv.FormatFloat(float64(x), 'g', -1, 32), 64)
	return v
}

// classWeightNone is --class-weight's word for cnn.TrainConfig's "".
const classWeightNone = "none"

func (r *recipeOptions) register(fs *flag.FlagSet) {
	def := cnn.DefaultRecipe()
	intVar(fs, &r.Epochs, "epochs", def.Train.Epochs, "passes over the training split")
	intVar(fs, &r.Batch, "batch", def.Train.Batch, "mini-batch size")
	intVar(fs, &r.Dim, "dim", def.Model.Dim, "embedding dimension; with --vectors and no --dim (or --dim 0), the file's")
	fs.StringVar(&r.Widths, "widths", joinInts(def.Model.Widths), "filter widths, comma-separated (1 to 32 each)")
	intVar(fs, &r.Maps, "maps", def.Model.Filters, "feature maps (filters) per width")
	floatVar(fs, &r.Dropout, "dropout", decimal32(def.Model.Dropout), "dropout rate on the pooled layer, in [0, 1)")
	floatVar(fs, &r.MaxNorm, "max-norm", decimal32(def.Model.MaxNorm), "max L2 norm of each output-weight row (Kim used 3); 0 is off")
	fs.StringVar(&r.Optimizer, "optimizer", def.Train.Optimizer, "adam or adadelta")
	floatVar(fs, &r.LR, "lr", def.Train.LR, "learning rate; 0 is the optimizer's usual default (0.001 for adam, 1.0 for adadelta, which --optimizer adadelta without --lr also gets)")
	intVar(fs, &r.MaxLen, "max-len", def.Train.MaxLen, "cut texts to this many tokens (0 keeps them whole)")
	intVar(fs, &r.Patience, "patience", def.Train.Patience, "stop after this many epochs without a better dev macro-F1; 0 never stops early")
	intVar(fs, &r.KeepFrom, "keep-from", def.Train.KeepFrom,
		"keep no epoch before this one (the best dev macro-F1 from it on; patience counts from it); 0 keeps any, and beyond --epochs means the last")
	fs.StringVar(&r.Vectors, "vectors", def.VectorsPath, "pretrained word vectors: one word and its numbers per line (.gz accepted)")
	fs.BoolVar(&r.Freeze, "freeze", def.Train.FreezeEmb, "keep the embeddings fixed during training")
	intVar(fs, &r.MinCount, "min-count", def.Tokenizer.MinCount, "minimum training count for a word to enter the vocabulary")
	fs.BoolVar(&r.Subword, "subword", def.Tokenizer.Subword, "learn subword pieces on the training split for unknown words")
	fs.BoolVar(&r.Lower, "lower", def.Tokenizer.Lower, "lower-case tokens")
	fs.StringVar(&r.Tokenizer, "tokenizer", def.Tokenizer.File, "a tokenizer file in the JSON format of github.com/sugarme/tokenizer")
	fs.StringVar(&r.ClassWeight, "class-weight", cmpOr(def.Train.ClassWeight, classWeightNone),
		"none, or balanced: each training text's loss weighted by n/(k·n_c), for imbalanced labels (the baseline's too)")
	floatVar(fs, &r.WordDropout, "word-dropout", def.Train.WordDropout,
		"α: each training occurrence of a word seen #w times becomes the unknown word with probability α/(#w+α); 0 is off")
	floatVar(fs, &r.TokenDropout, "token-dropout", def.Train.TokenDropout,
		"probability that any training token becomes the unknown word, in every batch, in [0, 1); 0 is off")
	fs.BoolVar(&r.Chars, "chars", def.Model.Chars != nil,
		"character-aware word vectors: a character CNN per word, its output beside the word's table vector, so unseen and misspelled words get vectors of their own")
	intVar(fs, &r.CharMaps, "char-maps", cnn.DefaultCharFilters, "with --chars: feature maps (filters) of the character layer, the numbers each word vector gains")
	intVar(fs, &r.CharWidth, "char-width", cnn.DefaultCharWidth, "with --chars: characters per character filter window (1 to 32)")
	fs.BoolVar(&r.Wide, "wide", def.Model.Wide,
		"a word-weight path beside the filters: the mean over the text's words of a weight per word and label, added to the logits and trained with them")
	fs.BoolVar(&r.WideBigrams, "wide-bigrams", def.Model.WideBigrams,
		"with --wide: the training split's pairs of adjacent words get weights too, the mean running over the text's words and its pairs seen in training")
	fs.BoolVar(&r.WideFit, "wide-fit", def.Train.WideFit,
		"with --wide: start the word (and bigram) weights at the logistic regression fitted on them alone, its C chosen on dev (or --wide-fit-c's), and the filters' output weights at zero")
	floatVar(fs, &r.WideFitC, "wide-fit-c", def.Train.WideFitC,
		"with --wide-fit: the fitted start's C (inverse regularisation strength); 0 chooses it on dev")
	floatVar(fs, &r.WideLR, "wide-lr", cnn.DefaultWideLR,
		"with --wide: factor on the learning rate of the word-weight table; 0 means 1, the rest's rate")
	fs.BoolVar(&r.Baseline, "baseline", def.Baseline != nil,
		"also fit the linear baseline (TF-IDF n-grams + logistic regression) and show it beside the CNN; --baseline=false leaves it out")
}

// check refuses every value that cannot train, naming the option; fs tells
// whether --dim was given.
func (r *recipeOptions) check(fs *flag.FlagSet) error {
	if r.Optimizer != cnn.DefaultRecipe().Train.Optimizer && !isSet(fs, "lr") {
		r.LR = 0 // the default recipe's rate is Adam's: another optimizer gets its own default
	}
	if r.Vectors != "" && (!isSet(fs, "dim") || r.Dim == 0) {
		if inputfile.IsPipe(r.Vectors) {
			return usagef("--vectors %s is a pipe, which can be read only once, and without --dim it is read twice (its first line for the dimension, then the vectors): give --dim with the file's dimension, or a regular file", clip(r.Vectors))
		}
		r.dimFromVectors = true
		if d := vectorsDim(r.Vectors); d > 0 {
			r.Dim = d
		} else if r.Dim == 0 {
			r.Dim = cnn.DefaultRecipe().Model.Dim // for the memory check; training reads the file and says what is wrong
		}
	}
	if err := r.checkVectorsDim(fs); err != nil {
		return err
	}
	dimWhat := "numbers per word embedding"
	if r.Vectors == "" {
		dimWhat += "; 0 only with --vectors, for the file's"
	}
	for _, c := range []struct {
		name   string
		n, lo  int
		reason string
	}{
		{"epochs", r.Epochs, 1, "passes over the training split"},
		{"batch", r.Batch, 1, "texts per mini-batch"},
		{"dim", r.Dim, 1, dimWhat},
		{"maps", r.Maps, 1, "feature maps per width"},
		{"max-len", r.MaxLen, 0, "0 keeps texts whole"},
		{"patience", r.Patience, 0, "epochs without a better dev macro-F1 before stopping; 0 never stops early"},
		{"keep-from", r.KeepFrom, 0, "the first epoch training may keep; 0 keeps any"},
		{"min-count", r.MinCount, 1, "a word enters the vocabulary once it occurs this often"},
		{"char-maps", r.CharMaps, 1, "feature maps of the character layer (with --chars)"},
		{"char-width", r.CharWidth, 1, "characters per character filter window (with --chars)"},
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
	case r.ClassWeight != classWeightNone && r.ClassWeight != "balanced":
		return usagef("--class-weight %q: use none or balanced", clip(r.ClassWeight))
	case r.WordDropout < 0:
		return usagef("--word-dropout %g: give α of 0 (off) or more", r.WordDropout)
	case r.TokenDropout < 0 || r.TokenDropout >= 1:
		return usagef("--token-dropout %g: give a probability from 0 up to (not including) 1", r.TokenDropout)
	case r.CharWidth > 32:
		return usagef("--char-width %d: give at most 32 characters", r.CharWidth)
	case r.CharMaps > 4096:
		return usagef("--char-maps %d: give at most 4096", r.CharMaps)
	case !r.Chars && (isSet(fs, "char-maps") || isSet(fs, "char-width")):
		return usagef("--char-maps and --char-width shape the character layer: add --chars")
	}
	return r.checkWide(fs)
}

// checkWide refuses word-weight options that --wide=false contradicts,
// and turns the path's parts off with it when they were not given.
func (r *recipeOptions) checkWide(fs *flag.FlagSet) error {
	if !r.Wide && !isSet(fs, "wide-bigrams") {
		r.WideBigrams = false // --wide=false turns the whole word-weight path off
	}
	if !r.Wide && !isSet(fs, "wide-fit") {
		r.WideFit = false
	}
	if !r.WideFit && !isSet(fs, "wide-fit-c") {
		r.WideFitC = 0 // no fitted start, so no C of one
	}
	switch {
	case r.WideLR < 0:
		return usagef("--wide-lr %g: give a positive factor, or 0 for the rest's learning rate", r.WideLR)
	case !r.Wide && isSet(fs, "wide-lr"):
		return usagef("--wide-lr sets the learning rate of the word-weight table, which --wide=false leaves out: drop one of the two")
	case r.WideBigrams && !r.Wide:
		return usagef("--wide-bigrams gives bigrams weights in the word-weight path, which --wide=false leaves out: drop one of the two")
	case r.WideFit && !r.Wide:
		return usagef("--wide-fit starts the word-weight path at a fitted linear model, and --wide=false leaves the path out: drop one of the two")
	case r.WideFitC < 0:
		return usagef("--wide-fit-c %g: give a positive C, or 0 to choose it on dev", r.WideFitC)
	case !r.Wide && isSet(fs, "wide-fit-c"):
		return usagef("--wide-fit-c sets the C of the word-weight path's fitted start, which --wide=false leaves out: drop one of the two")
	case !r.WideFit && isSet(fs, "wide-fit-c") && isSet(fs, "wide-fit"):
		return usagef("--wide-fit-c sets the C of the fitted start, which --wide-fit=false leaves out: drop one of the two")
	case !r.WideFit && isSet(fs, "wide-fit-c"):
		return usagef("--wide-fit-c sets the C of the fitted start: add --wide-fit")
	}
	return nil
}

// charConfig is the character layer the options ask for, or nil.
func (r *recipeOptions) charConfig() *cnn.CharConfig {
	if !r.Chars {
		return nil
	}
	return &cnn.CharConfig{Filters: r.CharMaps, Width: r.CharWidth, Dim: cnn.DefaultCharDim, MaxChars: cnn.DefaultMaxChars}
}

// checkVectorsDim refuses a --dim that the first line of --vectors
// contradicts, before any work (training would find it only after
// reading the data). A pipe is not read here (it can be read only once),
// and a first line that cannot be read is left to training, which says
// what is wrong with the file.
func (r *recipeOptions) checkVectorsDim(fs *flag.FlagSet) error {
	if r.Vectors == "" || r.dimFromVectors || !isSet(fs, "dim") || inputfile.IsPipe(r.Vectors) {
		return nil
	}
	if d := vectorsDim(r.Vectors); d > 0 && d != r.Dim {
		return usagef("--vectors %s line 1: the file's vectors have %d numbers each, but --dim is %d: give --dim %d, or leave --dim out to take the file's",
			clip(r.Vectors), d, r.Dim, d)
	}
	return nil
}

// vectorsDim is the dimension the first line of the word-vector file at
// path gives (a "COUNT DIM" header, or a word and its numbers), as
// corpus.ReadVectors reads it, or 0 when that line cannot be read: training
// then reads the file and reports what is wrong with it. Only the memory
// check before training uses it; training takes the dimension from
// corpus.ReadVectors itself (cnn.Recipe.DimFromVectors).
func vectorsDim(path string) int {
	f, err := inputfile.Open(path)
	if err != nil {
		return 0
	}
	defer f.Close()
	var r io.Reader = f
	if strings.HasSuffix(path, ".gz") {
		gz, err := gzip.NewReader(f)
		if err != nil {
			return 0
		}
		defer gz.Close()
		r = gz
	}
	line, err := bufio.NewReaderSize(r, 1<<20).ReadSlice('\n')
	if err != nil && err != io.EOF {
		return 0
	}
	fields := strings.Fields(string(line))
	if len(fields) == 2 {
		count, err1 := strconv.ParseUint(fields[0], 10, 31)
		dim, err2 := strconv.ParseUint(fields[1], 10, 31)
		if err1 == nil && err2 == nil && count > 0 {
			return int(dim)
		}
	}
	return max(0, len(fields)-1)
}

func (r *recipeOptions) tokenizerConfig() corpus.TokenizerConfig {
	return corpus.TokenizerConfig{Lower: r.Lower, MinCount: r.MinCount, Subword: r.Subword, File: r.Tokenizer, FileJSON: r.tokenizerJSON}
}

// readTokenizer reads the --tokenizer file, if any, into tokenizerJSON,
// refusing an empty one. A file that cannot be read is left to the
// tokenizer, which names the problem. It runs after the options and paths
// are checked: a pipe waits for its writer.
func (r *recipeOptions) readTokenizer() error {
	if r.Tokenizer == "" || r.tokenizerJSON != nil {
		return nil
	}
	b, err := inputfile.ReadFile(r.Tokenizer)
	switch {
	case err != nil:
		return nil
	case len(b) == 0:
		return usagef("--tokenizer %s is empty: give a tokenizer file in the JSON format of github.com/sugarme/tokenizer", clip(r.Tokenizer))
	}
	r.tokenizerJSON = b
	return nil
}

// recipe is cnn.DefaultRecipe with the options' values (VocabSize and
// Classes are filled in by cnn.TrainText).
func (r *recipeOptions) recipe(seed uint64, threads int) cnn.Recipe {
	rec := cnn.DefaultRecipe()
	tc := &rec.Train
	tc.Epochs, tc.Batch, tc.Optimizer, tc.LR, tc.Seed = r.Epochs, r.Batch, r.Optimizer, r.LR, seed
	tc.Threads, tc.Patience, tc.MaxLen, tc.FreezeEmb = threads, r.Patience, r.MaxLen, r.Freeze
	tc.KeepFrom = r.KeepFrom
	tc.WordDropout, tc.TokenDropout, tc.ClassWeight = r.WordDropout, r.TokenDropout, r.ClassWeight
	tc.WideFit, tc.WideFitC = r.WideFit, r.WideFitC // false and 0 with --wide=false
	if r.Wide {
		tc.WideLR = r.WideLR
	}
	if r.ClassWeight == classWeightNone {
		tc.ClassWeight = ""
	}
	if r.Patience == 0 {
		tc.Patience = -1 // the library reads 0 as its default; here it means never
	}
	cfg := &rec.Model
	cfg.Dim, cfg.Widths, cfg.Filters, cfg.Dropout, cfg.MaxNorm = r.Dim, r.widths, r.Maps, float32(r.Dropout), float32(r.MaxNorm)
	cfg.Wide, cfg.WideBigrams = r.Wide, r.WideBigrams
	if cfg.Chars = r.charConfig(); cfg.Chars != nil {
		cfg.Dim += cfg.Chars.Filters // --dim is the word table's; the character part comes beside it
	}
	rec.Tokenizer, rec.VectorsPath, rec.DimFromVectors = r.tokenizerConfig(), r.Vectors, r.dimFromVectors
	if !r.Baseline {
		rec.Baseline = nil
	}
	return rec
}

// checkSize refuses a model whose training would not fit in memory, with
// vocab words, classes labels, texts of up to longest tokens and, with
// --wide-bigrams, at most pairs bigrams.
func (r *recipeOptions) checkSize(vocab, classes, longest, threads, pairs int) error {
	if threads == 0 {
		threads = runtime.GOMAXPROCS(0)
	}
	maxLen := r.MaxLen
	if maxLen == 0 || longest < maxLen {
		maxLen = longest
	}
	dim := r.Dim
	if r.Chars {
		dim += r.CharMaps // the word vectors' width with the character part
	}
	cfg := cnn.Config{VocabSize: vocab, Dim: dim, Widths: r.widths, Filters: r.Maps, Classes: classes, Wide: r.Wide, WideBigrams: r.WideBigrams}
	return checkMemory(cfg, r.Batch, maxLen, threads, pairs)
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

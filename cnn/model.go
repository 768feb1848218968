package cnn

import (
	"fmt"

	"telltale/corpus"
	"telltale/linear"
)

// Config is the architecture of a sentence CNN (Kim 2014, "Convolutional
// Neural Networks for Sentence Classification", EMNLP).
type Config struct {
	VocabSize int     `json:"vocab_size"` // rows of the embedding table, reserved ids included
	Dim       int     `json:"dim"`        // embedding dimension
	Widths    []int   `json:"widths"`     // filter widths, e.g. 3, 4, 5
	Filters   int     `json:"filters"`    // feature maps per width
	Classes   int     `json:"classes"`    // number of labels, at least 2
	Dropout   float32 `json:"dropout"`    // dropout rate on the pooled layer during training
	MaxNorm   float32 `json:"max_norm"`   // max L2 norm of each output-weight row; 0 turns it off
	// Chars, when not nil, makes the last Chars.Filters of the Dim columns
	// of every word vector its character part (charcnn.go); nil: none.
	Chars *CharConfig `json:"chars,omitempty"`
	// Wide adds a word-weight path beside the pooled filters (Model.Wide):
	// the linear part of Wide & Deep (Cheng et al. 2016, "Wide & Deep
	// Learning for Recommender Systems"), a mean of word weights as in
	// Joulin et al. (2017, "Bag of Tricks for Efficient Text
	// Classification"), trained jointly with the rest.
	Wide bool `json:"wide,omitempty"`
	// WideBigrams, only with Wide, gives the training split's pairs of
	// adjacent words weights beside the words' (Model.Bigrams,
	// Model.WideBigram; bigram.go): the wide term is the mean over a
	// text's words and its pairs found in the set.
	WideBigrams bool `json:"wide_bigrams,omitempty"`
}

// Validate reports the first problem with c, or nil.
func (c Config) Validate() error {
	switch {
	case c.VocabSize < 2:
		return fmt.Errorf("cnn: vocabulary size %d: need at least the two reserved ids", c.VocabSize)
	case c.Dim < 1:
		return fmt.Errorf("cnn: embedding dimension %d: must be at least 1", c.Dim)
	case len(c.Widths) == 0:
		return fmt.Errorf("cnn: no filter widths: give at least one, e.g. --widths 3,4,5")
	case c.Filters < 1:
		return fmt.Errorf("cnn: %d feature maps per width: must be at least 1", c.Filters)
	case c.Classes < 2:
		return fmt.Errorf("cnn: %d classes: need at least 2 labels", c.Classes)
	case c.Dropout < 0 || c.Dropout >= 1:
		return fmt.Errorf("cnn: dropout %g: must be in [0, 1)", c.Dropout)
	case c.MaxNorm < 0:
		return fmt.Errorf("cnn: max-norm %g: must be 0 (off) or positive", c.MaxNorm)
	case c.WideBigrams && !c.Wide:
		return fmt.Errorf("cnn: bigram weights belong to the wide word-weight path: turn Wide on too (train --wide --wide-bigrams)")
	}
	for _, w := range c.Widths {
		if w < 1 || w > 32 {
			return fmt.Errorf("cnn: filter width %d: must be between 1 and 32", w)
		}
	}
	if c.Chars != nil {
		return c.Chars.validate(c.Dim)
	}
	return nil
}

// NumFilters is the total number of filters over all widths.
func (c Config) NumFilters() int { return len(c.Widths) * c.Filters }

// MaxWidth is the widest filter; shorter texts are padded with PAD up to it.
func (c Config) MaxWidth() int {
	m := 0
	for _, w := range c.Widths {
		m = max(m, w)
	}
	return m
}

// Conv is one bank of filters of the same width.
//
// W is laid out [filter][slot][dim]: the weight of filter f at window position
// (slot) s for embedding component d is W[(f*Width+s)*Dim+d].
type Conv struct {
	Width int
	W     []float32 // Filters*Width*Dim
	B     []float32 // Filters
}

// Model is a trained (or initialised) sentence CNN with everything needed to
// tokenize and label new text.
//
// Filters are numbered globally in the order of Config.Widths: filter g lives
// in Convs[g/Filters] as local filter g%Filters. Pooled unit g feeds column g
// of OutW.
//
// The forward pass for one text of ids x (length L, padded with PAD on the
// right to at least MaxWidth tokens, giving L'):
//
//	a[g][t] = B[f] + Σ_s Σ_d W[f][s][d]·Emb[x[t+s]][d]   for t = 0 … L'−w
//	h[g]    = max_t relu(a[g][t])   (0 when filter g is masked)
//	logit[c] = OutB[c] + Σ_g OutW[c][g]·h[g]
//	         + (1/N) Σ_{t: x[t] ≠ PAD} Wide[x[t]][c]   (Config.Wide only; N > 0)
//	         + Wide[UNK][c]                             (Config.Wide only; N = 0)
//
// where N is the number of ids of the text, before padding, that are not
// PAD; so token t's share of logit c is exactly Wide[x[t]][c]/N. Both cases
// are one formula, Wide[UNK][c] + Σ_t (Wide[x[t]][c] − Wide[UNK][c])/N, the
// sum empty when N is 0: adding a vector to every row of Wide but PAD's
// and subtracting it from OutB changes no logit of any text, so a text with
// no word left is scored by the unknown word's row, not by OutB alone.
// Filter masking does not touch the wide term.
//
// With Config.WideBigrams the mean also runs over the M pairs p of
// adjacent ids (x[t], x[t+1]) of the text found in Bigrams:
//
//	Wide[UNK][c] + (Σ_t (Wide[x[t]][c] − Wide[UNK][c]) + Σ_p (WideBigram[p][c] − Wide[UNK][c]))/(N+M)
//
// that is (Σ_t Wide[x[t]][c] + Σ_p WideBigram[p][c])/(N+M) when N > 0;
// the shift of every word row by a vector is then undone by shifting every
// bigram row by it too and OutB by its opposite.
//
// Windows never reach past L', so a text's logits do not depend on how it was
// batched.
type Model struct {
	Config Config
	Labels []string // class names, by class index
	Vocab  []string // words by id; Vocab[0] is PAD, Vocab[1] is UNK

	Emb   []float32 // VocabSize*Dim, row-major; row 0 (PAD) is always zero
	Convs []Conv    // one per entry of Config.Widths
	OutW  []float32 // Classes*NumFilters, row-major [class][filter]
	OutB  []float32 // Classes

	// Wide is the word-weight table of the wide path, VocabSize*Classes
	// laid out [word][class], when Config.Wide is set, else nil. Row 0
	// (PAD) is always zero.
	Wide []float32

	// Bigrams are the keys (BigramKey) of the pairs of adjacent word ids
	// that have bigram weights, sorted and distinct, when
	// Config.WideBigrams is set, else nil; WideBigram is their weight
	// table, len(Bigrams)*Classes laid out [bigram][class]. bigramIx finds
	// a pair's row (bigram.go); it is built once and shared by clones.
	Bigrams    []uint64
	WideBigram []float32
	bigramIx   *bigramIndex

	// Char is the character layer when Config.Chars is set, else nil.
	Char *CharLayer

	// Masked[g] true removes filter g: its pooled unit is held at zero.
	// Nil means no filter is masked.
	Masked []bool

	// Tokenizer is how texts were split into the words of Vocab.
	Tokenizer corpus.TokenizerConfig

	// Info records how the model was trained and how well it did; it is
	// stored in the model file and never affects predictions.
	Info Info

	// Baseline, when not nil, is the linear baseline trained on the same
	// training and dev splits (TrainText with Recipe.Baseline); it is
	// stored in the model file and never affects the CNN's predictions.
	// Clones share it; it is not changed after fitting.
	Baseline *linear.Model

	version uint64     // bumped by Invalidate; guarded by cacheMu
	cache   *slotCache // the persistent slot table (cache.go); guarded by cacheMu
}

// Info is the training record kept with a model.
type Info struct {
	Created        string        `json:"created,omitempty"` // RFC 3339 time of training
	Recipe         *TrainConfig  `json:"recipe,omitempty"`  // the training settings used
	Epochs         []EpochResult `json:"epochs,omitempty"`  // per-epoch loss and dev metrics
	BestEpoch      int           `json:"best_epoch,omitempty"`
	ExamplesPerSec float64       `json:"examples_per_second,omitempty"`
	Dev            *Metrics      `json:"dev,omitempty"`  // dev metrics of the kept weights
	Test           *Metrics      `json:"test,omitempty"` // filled by callers that hold out a test split
	// Splits records how the training, dev and test splits were made, so
	// that a later run given the same data finds the same test split; nil
	// when the trainer did not record it.
	Splits *SplitRecord `json:"splits,omitempty"`
	// Version is the telltale version that wrote the file (set by Save).
	Version string `json:"version,omitempty"`
	// Notes holds free-form facts callers want kept with the model.
	Notes map[string]string `json:"notes,omitempty"`
	// BaselineStopped records that training was stopped (its context
	// cancelled) before the linear baseline its recipe asked for was
	// fitted (TrainText): the model carries none, although it was not
	// trained without one. False in model files written before it was
	// recorded.
	BaselineStopped bool `json:"baseline_stopped,omitempty"`
	// CuesChosenOn, on a model retrained without cues (audit
	// --retrain-out, the window's retraining) or masked as an audit
	// suggested (audit --masked-out, the window's masked copy), are the
	// halves of held-out texts whose audits chose those cues or that mask (one for each set of held-out
	// texts: a model retrained from a retrained model keeps its
	// predecessor's); nil on any other model, and in model files written
	// before they were recorded. Kept beside Splits, not in it, so that a
	// SplitRecord stays a comparable value.
	CuesChosenOn []CueChoice `json:"cues_chosen_on,omitempty"`
}

// SplitRecord is how a model's three splits were made from its labeled
// data: training, dev (early stopping) and test (the final evaluation).
// Without a dev or test file, that split is a share of Data held out by
// corpus.Dataset.SplitThree with DevFrac, TestFrac and Seed; the same data
// (same Fingerprint) split the same way gives the same splits again.
type SplitRecord struct {
	Data     string `json:"data"`     // the data as given to the trainer
	DataAbs  string `json:"data_abs"` // its absolute path
	DevFile  string `json:"dev_file,omitempty"`
	TestFile string `json:"test_file,omitempty"` // absolute paths of separate files
	// DevFrac and TestFrac are the shares of Data held out (0 for a split
	// given as a file).
	DevFrac  float64 `json:"dev_frac,omitempty"`
	TestFrac float64 `json:"test_frac,omitempty"`
	Seed     uint64  `json:"seed"`
	// Examples and Fingerprint identify the data as read (after any
	// relabeling): corpus.Dataset.Fingerprint.
	Examples    int    `json:"examples"`
	Fingerprint string `json:"fingerprint"`
	// DevFingerprint and TestFingerprint identify the examples of DevFile
	// and TestFile as read, the same way, so that a later command can tell
	// a file that changed since training; empty without such a file, and
	// in model files written before they were recorded.
	DevFingerprint  string `json:"dev_fingerprint,omitempty"`
	TestFingerprint string `json:"test_fingerprint,omitempty"`
	// DevPipe and TestPipe say that DevFile or TestFile could be read only
	// once at training: a pipe (named, or /dev/fd/N) or a per-process name
	// such as /dev/stdin. No later command reads it again; the path is
	// kept to say where the split came from.
	DevPipe  bool `json:"dev_pipe,omitempty"`
	TestPipe bool `json:"test_pipe,omitempty"`
	// Train, Dev and Test are the sizes of the three splits.
	Train int `json:"train"`
	Dev   int `json:"dev"`
	Test  int `json:"test"`
}

// FilterConv returns the bank index and local index of global filter g.
func (m *Model) FilterConv(g int) (bank, local int) {
	return g / m.Config.Filters, g % m.Config.Filters
}

// FilterWidth is the width of global filter g.
func (m *Model) FilterWidth(g int) int { return m.Config.Widths[g/m.Config.Filters] }

// FilterSlot returns the weights of global filter g at slot s (Dim values).
func (m *Model) FilterSlot(g, s int) []float32 {
	b, f := m.FilterConv(g)
	c := &m.Convs[b]
	d := m.Config.Dim
	off := (f*c.Width + s) * d
	return c.W[off : off+d]
}

// FilterBias is the bias of global filter g.
func (m *Model) FilterBias(g int) float32 {
	b, f := m.FilterConv(g)
	return m.Convs[b].B[f]
}

// IsMasked reports whether filter g is masked.
func (m *Model) IsMasked(g int) bool { return m.Masked != nil && m.Masked[g] }

// Row returns the embedding of word id.
func (m *Model) Row(id int32) []float32 {
	d := m.Config.Dim
	return m.Emb[int(id)*d : int(id)*d+d]
}

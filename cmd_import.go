package main

import (
	"bytes"
	"context"
	"flag"
	"fmt"
	"path/filepath"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/inputfile"
	"telltale/internal/outguard"
	"telltale/internal/wording"
	"telltale/torchmodel"
	"telltale/torchmodel/npy"
)

var cmdImport = &command{
	Name:      "import",
	UsageLine: importUsage,
	Short:     importShort,
	Long:      importLong,
	Options:   func() options { return new(importOptions) },
	Run:       runAs(runImport),
}

// Help of import, for its entry in the command table.
const (
	importUsage = "import --state-dict FILE --vocab FILE (--labels a,b | --labels-file FILE) --out MODEL\n" +
		"               [--entry NAME] [--pad-id N] [--unk-id N] [--zero-pad] [--lower] [--keep-form] [--tokenizer FILE]\n" +
		"               [--embedding-keys K[,K]] [--conv-keys K,K,…] [--output-key K]\n" +
		"               [--check-texts FILE --check-logits FILE.npy] [--json] [--quiet]"
	importShort = "bring in a sentence CNN trained in PyTorch (its state_dict) as a telltale model"
	importLong  = `Import reads the state_dict of a sentence CNN that torch.save wrote (or a
checkpoint holding it), with the vocabulary it was trained with and its label
names in output order, and writes a telltale model file that every command
and the window open. The file's pickle is read by telltale's own reader,
which builds tensors only and refuses anything else by name; nothing in the
file is run.

Supported: one embedding table (two for the multichannel variant), one
Conv1d(d, m, k) or Conv2d(1, m, (k, d)) per filter width with the same m,
ReLU, max over time, dropout, one linear layer or one sigmoid unit, and
optionally word weights beside the filters: an nn.EmbeddingBag(vocab,
classes, mode="mean", padding_idx=PAD) whose output adds to the logits (for a
text without words telltale adds the unknown word's row, where a plain bag
gives zero), under the key "wide.weight" or found by its shape (vocabulary
× outputs, no bias, not the embedding; when two tables fit, the error names
both: rename the word weights' key to wide.weight), with the bigram weights
export writes for a model trained with --wide-bigrams (keys
wide_bigram.weight and bigram_keys); and the character layer that export
writes for a model trained with --chars (keys chars.*). The parts
are found by shape and file order; --embedding-keys, --conv-keys and
--output-key name them when that is ambiguous. Any other parameter is refused
naming its key and shape. A state_dict does not record the activation, the
pooling or the padding: with --check-texts and --check-logits (your model's
logits on those texts) the import is checked against your model and stops,
writing nothing, unless they agree to 1e-4. The check runs the imported
model on vocabulary ids only: a word outside the vocabulary is read as the
unknown word, whose character part is zero (the other commands give such a
word the character part of its own spelling). For a model with a character
layer, give check texts whose words are all in the vocabulary, or logits
your model computed on the unknown word's id in their place.

The padding and unknown tokens are found by name or given with --pad-id and
--unk-id; the padding row must be zero unless --zero-pad sets it to zero
(texts shorter than the widest filter then get other logits).`
)

// importOptions are the options of `telltale import`.
type importOptions struct {
	StateDict   string // torch.save file or .npz
	Entry       string // checkpoint entry holding the state_dict
	Vocab       string // vocabulary: .json token → id, or one token per line
	PadID       int    // -1: detect
	UnkID       int    // -1: detect
	ZeroPad     bool
	Labels      string // comma-separated label names in output order
	LabelsFile  string // or one label per line
	Lower       bool
	KeepForm    bool
	Tokenizer   string // tokenizer file in github.com/sugarme/tokenizer's JSON format
	Embeddings  string // layout: embedding table key(s), comma-separated
	Convs       string // layout: convolution weight keys in order
	Output      string // layout: output layer weight key
	CheckTexts  string // texts, one per line, whose reference logits are in CheckLogits
	CheckLogits string // .npy of the original model's logits on CheckTexts
	Out         string // the telltale model file to write
	JSON        bool
	Quiet       bool

	layout torchmodel.Layout // from Embeddings, Convs and Output
	labels []string          // from Labels
}

func (o *importOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.StateDict, "state-dict", "", "the file torch.save wrote (model.state_dict(), or a checkpoint holding it), or an .npz of named arrays")
	fs.StringVar(&o.Entry, "entry", "", "the checkpoint entry that holds the state_dict, e.g. model_state_dict (default: found)")
	fs.StringVar(&o.Vocab, "vocab", "", "the vocabulary: a .json object of token → id, or a file with one token per line (id = line number from 0)")
	fs.IntVar(&o.PadID, "pad-id", -1, "id of the padding token (default: found by name, e.g. <pad> or [PAD])")
	fs.IntVar(&o.UnkID, "unk-id", -1, "id of the unknown-word token (default: found by name, e.g. <unk> or [UNK])")
	fs.BoolVar(&o.ZeroPad, "zero-pad", false, "accept a non-zero padding row by setting it to zero (texts shorter than the widest filter then get other logits)")
	fs.StringVar(&o.Labels, "labels", "", "label names in the order of the model's outputs, comma-separated")
	fs.StringVar(&o.LabelsFile, "labels-file", "", "or a file with one label name per line, in output order")
	fs.BoolVar(&o.Lower, "lower", true, "texts were lower-cased before tokenizing")
	fs.BoolVar(&o.KeepForm, "keep-form", false, "texts were not NFKC-normalized")
	fs.StringVar(&o.Tokenizer, "tokenizer", "", "a tokenizer file in the JSON format of github.com/sugarme/tokenizer (replaces the built-in rule)")
	fs.StringVar(&o.Embeddings, "embedding-keys", "", "layout: the key of the embedding table, or the two of the multichannel variant in channel order")
	fs.StringVar(&o.Convs, "conv-keys", "", "layout: the weight keys of the convolutions, in the order their outputs enter the output layer")
	fs.StringVar(&o.Output, "output-key", "", "layout: the weight key of the output layer")
	fs.StringVar(&o.CheckTexts, "check-texts", "", "texts, one per line, on which the original model's logits are in --check-logits")
	fs.StringVar(&o.CheckLogits, "check-logits", "", "a .npy file of the original model's logits on --check-texts (one row per text): the import is refused unless telltale's agree to 1e-4")
	fs.StringVar(&o.Out, "out", "", "the telltale model file to write")
	fs.BoolVar(&o.JSON, "json", false, "print a summary as one JSON object")
	fs.BoolVar(&o.Quiet, "quiet", false, "print nothing but errors (and --json output)")
}

// check refuses missing or contradictory options before any work.
func (o *importOptions) check(*flag.FlagSet, *runEnv) error {
	switch {
	case o.StateDict == "":
		return usagef("--state-dict is required: the file torch.save wrote, e.g. --state-dict model.pt")
	case o.Vocab == "":
		return usagef("--vocab is required: the vocabulary the model was trained with (JSON token → id, or one token per line)")
	case o.Out == "":
		return usagef("--out is required: where to write the telltale model, e.g. --out model.tt")
	case (o.Labels == "") == (o.LabelsFile == ""):
		return usagef("give the label names in output order with exactly one of --labels a,b or --labels-file FILE")
	case o.PadID < -1 || o.UnkID < -1:
		return usagef("--pad-id and --unk-id are ids (0 or more), or -1 to find them by name")
	case (o.CheckTexts == "") != (o.CheckLogits == ""):
		return usagef("--check-texts and --check-logits go together: the texts and the original model's logits on them")
	case o.Tokenizer != "" && (o.KeepForm || !o.Lower):
		return usagef("--tokenizer replaces the built-in rule: --lower and --keep-form do not apply to it")
	case inputfile.IsPipe(o.StateDict):
		return usagef("--state-dict %s is a pipe: the import reads the archive by position and its size, and a pipe has neither: give a regular file", clip(o.StateDict))
	}
	var err error
	o.layout.Output = strings.TrimSpace(o.Output)
	if o.layout.Embeddings, err = listItems("embedding-keys", o.Embeddings); err != nil {
		return err
	}
	if o.layout.Convs, err = listItems("conv-keys", o.Convs); err != nil {
		return err
	}
	if !o.layout.IsZero() && !o.layout.Complete() {
		return usagef("a layout names all parts: give --embedding-keys, --conv-keys and --output-key together")
	}
	if o.labels, err = listItems("labels", o.Labels); err != nil {
		return err
	}
	_, inputs := o.files()
	return requireInputs(inputs)
}

// requireInputs fails (exit 2), naming the option, when a given input
// file cannot be read, so that nothing starts without it (checkInputs).
func requireInputs(inputs []outguard.File) error { return checkInputs(inputs) }

func (o *importOptions) files() (outputs, inputs []outguard.File) {
	return []outguard.File{{Name: "--out", Path: o.Out}},
		[]outguard.File{{Name: "--state-dict", Path: o.StateDict}, {Name: "--vocab", Path: o.Vocab},
			{Name: "--labels-file", Path: o.LabelsFile}, {Name: "--tokenizer", Path: o.Tokenizer},
			{Name: "--check-texts", Path: o.CheckTexts}, {Name: "--check-logits", Path: o.CheckLogits}}
}

// importSummary is what import prints.
type importSummary struct {
	Model     string   `json:"model"`
	From      string   `json:"from"`
	Format    string   `json:"format"`
	Layout    string   `json:"layout"`
	Vocab     int      `json:"vocabulary"`
	Dim       int      `json:"dim"`
	Widths    []int    `json:"widths"`
	Maps      int      `json:"maps"`
	Labels    []string `json:"labels"`
	Warnings  []string `json:"warnings,omitempty"`
	Tokenizer string   `json:"tokenizer"`
	Check     string   `json:"check,omitempty"`
}

// runImport reads a sentence CNN trained in PyTorch and writes it as a
// telltale model file. Every path is checked before any work: the inputs
// must be readable, the output writable and no output may be an input.
func runImport(ctx context.Context, env *runEnv, o *importOptions) error {
	labels := o.labels
	if o.LabelsFile != "" {
		var err error
		if labels, err = torchmodel.ReadLabels(o.LabelsFile); err != nil {
			return err
		}
	}
	tcfg := corpus.TokenizerConfig{Lower: o.Lower, KeepForm: o.KeepForm, File: o.Tokenizer}
	if o.Tokenizer != "" {
		tcfg.Lower = false
	}
	bar := newProgressBar(env.Stderr, o.Quiet || o.JSON)
	res, err := torchmodel.Import(ctx, torchmodel.Options{StateDict: o.StateDict, Entry: o.Entry, Layout: o.layout,
		Vocab: o.Vocab, PadID: o.PadID, UnkID: o.UnkID, ZeroPad: o.ZeroPad, Labels: labels, Tokenizer: tcfg,
		Progress: func(done, total int64) { bar.show(int(done>>20), int(total>>20), "reading tensors (MiB)", false) }})
	bar.done()
	if err != nil {
		return err
	}
	m := res.Model
	if o.CheckTexts != "" {
		if err := checkImported(m, o); err != nil {
			return err
		}
	}
	if err := m.Save(o.Out); err != nil {
		return err
	}
	abs, _ := filepath.Abs(o.Out)
	s := importSummary{Model: abs, From: m.Info.Notes["origin_file"], Format: res.Format, Layout: res.Layout.String(),
		Vocab: m.Config.VocabSize, Dim: m.Config.Dim, Widths: m.Config.Widths, Maps: m.Config.Filters, Labels: m.Labels,
		Warnings: res.Warnings, Tokenizer: describeTokenizer(tcfg), Check: m.Info.Notes["origin_check"]}
	if o.JSON {
		return writeJSON(env.Stdout, s)
	}
	if o.Quiet {
		return nil
	}
	for _, w := range res.Warnings {
		fmt.Fprintf(env.Stderr, "warning: %s\n", w)
	}
	fmt.Fprintf(env.Stdout, "model saved: %s\nfrom %s (%s)\nlayout: %s\n%s of dimension %d; widths %v, %s each; labels %s\ntokenizer: %s\n",
		s.Model, s.From, s.Format, s.Layout, wording.Count(s.Vocab, "word", "words"), s.Dim, s.Widths, wording.Count(s.Maps, "map", "maps"), strings.Join(s.Labels, ", "), s.Tokenizer)
	if s.Check != "" {
		fmt.Fprintf(env.Stdout, "checked: %s\n", s.Check)
	}
	return nil
}

// checkImported compares the imported model's logits with the original
// model's on the texts of --check-texts and records the result in the
// model's notes; a mismatch is an error (nothing is written).
func checkImported(m *cnn.Model, o *importOptions) error {
	raw, err := inputfile.ReadFile(o.CheckTexts)
	if err != nil {
		return fmt.Errorf("--check-texts: %w", err)
	}
	texts := strings.Split(strings.TrimSuffix(strings.ReplaceAll(string(raw), "\r\n", "\n"), "\n"), "\n")
	// Read whole first: a pipe has no size to give the reader.
	b, err := inputfile.ReadFile(o.CheckLogits)
	if err != nil {
		return fmt.Errorf("--check-logits: %w", err)
	}
	a, err := npy.ReadNPY(bytes.NewReader(b), int64(len(b)))
	if err != nil {
		return fmt.Errorf("--check-logits %s: %w", o.CheckLogits, err)
	}
	if len(a.Shape) != 2 || a.Shape[0] != len(texts) || a.Shape[1] < 1 {
		return fmt.Errorf("--check-logits %s has shape %v: need one row per line of %s (%d) and one column per output", o.CheckLogits, a.Shape, o.CheckTexts, len(texts))
	}
	want := make([][]float32, len(texts))
	for i := range want {
		want[i] = a.Data[i*a.Shape[1] : (i+1)*a.Shape[1]]
	}
	worst, err := torchmodel.CheckLogits(m, texts, want, o.CheckTexts)
	if err != nil {
		return err
	}
	m.Info.Notes["origin_check"] = fmt.Sprintf("logits of %s (%s) agree with %s to %.2g (tolerance %g)", wording.Count(len(texts), "text", "texts"), absOrSame(o.CheckTexts), absOrSame(o.CheckLogits), worst, torchmodel.CheckTolerance)
	return nil
}

func absOrSame(p string) string {
	if a, err := filepath.Abs(p); err == nil {
		return a
	}
	return p
}

func describeTokenizer(c corpus.TokenizerConfig) string {
	if c.File != "" {
		return "the tokenizer file " + c.File
	}
	var parts []string
	parts = append(parts, "telltale's rule (split at white space and around punctuation)")
	if c.Lower {
		parts = append(parts, "lower-cased")
	}
	if !c.KeepForm {
		parts = append(parts, "NFKC-normalized")
	}
	return strings.Join(parts, ", ")
}

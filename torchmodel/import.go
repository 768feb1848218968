package torchmodel

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strings"
	"time"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/inputfile"
	"telltale/torchmodel/npy"
	"telltale/torchmodel/statedict"
)

// Sentinel errors; every error of Import wraps one of them or one of
// statedict's, and names the file and the key or line.
var (
	// ErrLayout: the state_dict is not a sentence CNN telltale can hold, or
	// the layout named does not fit it.
	ErrLayout = errors.New("torchmodel: unsupported model")
	// ErrVocab: the vocabulary or labels file is malformed or does not
	// match the weights.
	ErrVocab = errors.New("torchmodel: vocabulary or labels do not fit")
	// ErrPadRow: the padding token's embedding is not zero.
	ErrPadRow = errors.New("torchmodel: the padding row is not zero")
)

// Options says what to import.
type Options struct {
	// StateDict is the file torch.save wrote (zip or legacy format), or an
	// .npz file of named arrays (as Export writes).
	StateDict string
	// Entry names the checkpoint entry holding the state_dict (see
	// statedict.Options).
	Entry string
	// Layout names the parts; the zero Layout detects them (DetectLayout).
	// A Layout that names some parts must name all.
	Layout Layout
	// Vocab is the vocabulary file (see ReadVocab).
	Vocab string
	// PadID and UnkID are the ids of the padding and unknown tokens in
	// Vocab; -1 detects them by name (<pad>, [PAD], <unk>, [UNK], …).
	PadID, UnkID int
	// ZeroPad sets a non-zero padding row to zero instead of refusing the
	// model (see Import).
	ZeroPad bool
	// Labels are the class names in the order of the model's outputs.
	Labels []string
	// Tokenizer is how texts were split into the vocabulary's tokens:
	// telltale's rule with its options, or a tokenizer file (File).
	Tokenizer corpus.TokenizerConfig
	// Progress, when set, is called as tensor data is read.
	Progress func(done, total int64)
}

// Imported is the result of Import.
type Imported struct {
	Model  *cnn.Model
	Layout Layout // the layout used
	Format string // "zip", "legacy" or "npz"
	// Warnings are facts the user must know (a padding row set to zero).
	Warnings []string
}

// Import reads a sentence CNN trained elsewhere and returns it as a
// telltale model, its origin recorded in Info.Notes (keys origin_*).
//
// The forward pass is the one of cnn.Model: ReLU after each convolution,
// max over time, one linear layer, no padding inside the convolutions, and
// texts shorter than the widest filter padded on the right with the padding
// token. A state_dict does not record the activation, the pooling, the
// convolutions' padding or the order in which the forward code concatenates
// the pooled outputs: these are assumed, and the channel and convolution
// order is that of the file unless Layout says otherwise.
//
// A wide word-weight table (Layout.Wide) is read as the wide path of
// cnn.Model: the mean of the table's rows over a text's non-padding ids is
// added to the logits, as nn.EmbeddingBag(mode="mean", padding_idx=pad)
// computes it; a text with no non-padding id gets the unknown token's row,
// where the bag alone gives zero, so a module's logits for such texts agree
// only if it does the same. Its padding row must be zero like the
// embedding's (or is zeroed with ZeroPad): a bag without padding_idx would
// count the padding ids of a batch in the mean.
//
// The vocabulary is reordered so that the padding token has id 0 and the
// unknown token id 1, as telltale's models require, moving their rows of the
// embedding table (and of the wide table) with them; the other tokens keep
// their order. telltale
// holds the padding row at zero. A state_dict whose padding row is not zero
// (an nn.Embedding without padding_idx) is refused unless ZeroPad is set;
// then the row is zeroed and a warning says which texts change: those
// shorter than the widest filter, the only ones telltale pads. Longer texts
// get exactly the logits they had.
//
// Bigram weights of the wide path (Layout.Bigrams, WideBigramKey with its
// int64 keys BigramKeysKey, as Export writes them) are read as cnn.Model's
// (cnn.Config.WideBigrams): the keys' ids move with the vocabulary's
// reordering and the pairs are sorted again with their rows; a key holding
// the padding or unknown token is refused.
//
// A character layer (Layout.Chars) is read as cnn.Model's: the table holds
// the words' own columns, the character part of every word is computed
// from the layer (cnn.Model.FillChars), and the words' character ids of the
// file must be the ones the layer gives the vocabulary's words, or the
// vocabulary is refused as not the model's.
//
// A model with one output unit (a sigmoid classifier) becomes a model of
// two classes whose logits are 0 and the unit's value; their softmax is
// the sigmoid's probabilities. Labels then names the class of probability
// 1−σ first.
//
// Nothing is written. Errors name the file and the key, line or token.
func Import(ctx context.Context, o Options) (_ *Imported, err error) {
	defer func() { err = plain(err) }()
	sd, err := readWeights(ctx, o)
	if err != nil {
		return nil, err
	}
	l := o.Layout
	switch {
	case l.IsZero():
		if l, err = DetectLayout(sd, o.StateDict); err != nil {
			return nil, err
		}
	case !l.Complete():
		return nil, fmt.Errorf("torchmodel: the layout names only some parts (%s): name the embedding table(s), the convolutions and the output layer: %w", l, ErrLayout)
	}
	if _, ok := sd.Tensors[charsConv]; ok && l.Chars == "" {
		l.Chars = CharsPrefix // found by name, as DetectLayout finds it
	}
	if _, ok := sd.Tensors[WideBigramKey]; ok && l.Bigrams == "" {
		l.Bigrams = WideBigramKey
	}
	w, err := mapWeights(sd, l, o.StateDict)
	if err != nil {
		return nil, err
	}
	vocab, err := ReadVocab(o.Vocab)
	if err != nil {
		return nil, err
	}
	if len(vocab) != w.vocab {
		return nil, fmt.Errorf("torchmodel: %s has %d tokens but %s in %s has %d rows: give the vocabulary the model was trained with: %w",
			o.Vocab, len(vocab), l.Embeddings[0], o.StateDict, w.vocab, ErrVocab)
	}
	if err := checkLabels(o.Labels, w, l, o.StateDict); err != nil {
		return nil, err
	}
	tok, err := corpus.NewTokenizer(o.Tokenizer)
	if err != nil {
		return nil, err
	}
	res := &Imported{Layout: l, Format: sd.Format}
	words, emb, notes, err := reorder(vocab, w, o, l, res)
	if err != nil {
		return nil, err
	}
	if err := wideZeroPad(w, o, l, res, notes); err != nil {
		return nil, err
	}
	cfg := cnn.Config{VocabSize: w.vocab, Dim: w.dim, Widths: w.widths, Filters: w.filters, Classes: w.classes, Wide: w.wide != nil}
	if w.chars != nil {
		cfg.Chars = &w.chars.cfg
	}
	if err := cfg.Validate(); err != nil {
		return nil, fmt.Errorf("torchmodel: %s: %v: %w", o.StateDict, err, ErrLayout)
	}
	m := &cnn.Model{Config: cfg, Labels: append([]string(nil), o.Labels...), Vocab: words, Emb: emb,
		OutW: w.outW, OutB: w.outB, Wide: w.wide, Tokenizer: tok.Config()}
	for b, width := range w.widths {
		m.Convs = append(m.Convs, cnn.Conv{Width: width, W: w.convW[b], B: w.convB[b]})
	}
	if err := setChars(m, vocab, w.chars, o); err != nil {
		return nil, err
	}
	if w.bigrams != nil {
		pad, unk, _ := reservedIDs(vocab, o) // as reorder found them
		if err := setBigrams(m, w.bigrams, newIDs(len(vocab), pad, unk), o.StateDict); err != nil {
			return nil, err
		}
	}
	if err := originNotes(notes, sd, l, w, o); err != nil {
		return nil, err
	}
	m.Info.Notes = notes
	res.Model = m
	return res, nil
}

// originNotes records in notes where an imported model came from: the
// state dict's file, format, checksum and entry, the layout, the
// vocabulary file, the time of the import and a sigmoid output's reading.
func originNotes(notes map[string]string, sd *statedict.StateDict, l Layout, w *weights, o Options) error {
	sum, err := fileSHA256(o.StateDict)
	if err != nil {
		return err
	}
	notes["origin"] = "imported from PyTorch (" + formatName(sd.Format) + ")"
	notes["origin_file"] = absPath(o.StateDict)
	notes["origin_sha256"] = sum
	notes["origin_layout"] = l.String()
	notes["origin_vocabulary"] = absPath(o.Vocab)
	notes["origin_imported"] = time.Now().UTC().Format(time.RFC3339)
	if sd.Entry != "" {
		notes["origin_entry"] = sd.Entry
	}
	if w.sigmoidOutput {
		notes["origin_output"] = fmt.Sprintf("one sigmoid unit (%s), held as two classes with logits 0 and its value", l.Output)
	}
	return nil
}

func formatName(f string) string {
	switch f {
	case "zip":
		return "torch.save, zip format"
	case "legacy":
		return "torch.save, legacy format"
	}
	return "NumPy .npz"
}

// readWeights reads the named tensors of a torch.save file or an .npz file.
func readWeights(ctx context.Context, o Options) (*statedict.StateDict, error) {
	if !strings.EqualFold(filepath.Ext(o.StateDict), ".npz") {
		return statedict.Read(ctx, o.StateDict, statedict.Options{Entry: o.Entry, Progress: o.Progress})
	}
	f, err := inputfile.Open(o.StateDict)
	if err != nil {
		return nil, fmt.Errorf("torchmodel: %w", err)
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, fmt.Errorf("torchmodel: %w", err)
	}
	arrays, err := npy.ReadNPZ(f, st.Size(), o.StateDict)
	if err != nil {
		return nil, err
	}
	sd := &statedict.StateDict{Tensors: map[string]*statedict.Tensor{}, Format: "npz"}
	for _, a := range arrays {
		sd.Keys = append(sd.Keys, a.Name)
		t := &statedict.Tensor{Shape: a.Shape, Dtype: statedict.Float32, Data: a.Data}
		if a.Ints != nil {
			t.Dtype, t.Ints = statedict.Int64, a.Ints
		}
		sd.Tensors[a.Name] = t
	}
	return sd, nil
}

func checkLabels(labels []string, w *weights, l Layout, file string) error {
	if len(labels) != w.classes {
		extra := ""
		if w.sigmoidOutput {
			extra = " (one sigmoid unit: name the class of low scores, then the class of high scores)"
		}
		return fmt.Errorf("torchmodel: %d labels given but %s in %s has %d outputs: give the %d label names in output order%s: %w",
			len(labels), l.Output, file, map[bool]int{true: 1, false: w.classes}[w.sigmoidOutput], w.classes, extra, ErrVocab)
	}
	seen := map[string]bool{}
	for _, s := range labels {
		if strings.TrimSpace(s) == "" || seen[s] {
			return fmt.Errorf("torchmodel: label %q is empty or given twice: each output needs its own name: %w", s, ErrVocab)
		}
		seen[s] = true
	}
	return nil
}

// reorder moves the padding and unknown tokens to ids 0 and 1 with their
// rows and checks the padding row.
func reorder(vocab []string, w *weights, o Options, l Layout, res *Imported) ([]string, []float32, map[string]string, error) {
	pad, unk, err := reservedIDs(vocab, o)
	if err != nil {
		return nil, nil, nil, err
	}
	order := make([]int, 0, len(vocab))
	order = append(order, pad, unk)
	for i := range vocab {
		if i != pad && i != unk {
			order = append(order, i)
		}
	}
	d := w.dim
	words := make([]string, len(vocab))
	emb := permuteRows(w.emb, d, order)
	if w.wide != nil {
		w.wide = permuteRows(w.wide, w.classes, order)
	}
	for to, from := range order {
		words[to] = vocab[from]
		if to >= 2 && (words[to] == corpus.PADWord || words[to] == corpus.UNKWord) {
			return nil, nil, nil, fmt.Errorf("torchmodel: %s: the token %q has id %d, but the %s token is id %d: telltale names its reserved tokens %s and %s; give the right --pad-id and --unk-id: %w",
				o.Vocab, words[to], from, map[bool]string{true: "padding", false: "unknown"}[words[to] == corpus.PADWord],
				map[bool]int{true: pad, false: unk}[words[to] == corpus.PADWord], corpus.PADWord, corpus.UNKWord, ErrVocab)
		}
	}
	notes := map[string]string{
		"origin_pad_token": fmt.Sprintf("%q (id %d)", vocab[pad], pad),
		"origin_unk_token": fmt.Sprintf("%q (id %d)", vocab[unk], unk),
	}
	words[0], words[1] = corpus.PADWord, corpus.UNKWord
	var big float64
	for _, v := range emb[:d] {
		big = max(big, math.Abs(float64(v)))
	}
	switch {
	case big == 0:
		notes["origin_padding_row"] = "zero in the file"
	case !o.ZeroPad:
		return nil, nil, nil, fmt.Errorf("torchmodel: %s: row %d of %s (the padding token %q) is not zero (largest |value| %.4g): telltale pads texts shorter than the widest filter (%d tokens) with a zero row, so those texts would get other logits than in PyTorch; train with nn.Embedding(..., padding_idx=%d), or accept the change with --zero-pad: %w",
			o.StateDict, pad, strings.Join(l.Embeddings, " + "), vocab[pad], big, maxOf(w.widths), pad, ErrPadRow)
	default:
		clear(emb[:d])
		msg := fmt.Sprintf("the padding row (token %q, id %d) of %s was not zero (largest |value| %.4g) and is now zero: texts of at least %d tokens (the widest filter) get the same logits as in PyTorch; shorter texts, which telltale pads with that row, get different ones",
			vocab[pad], pad, strings.Join(l.Embeddings, " + "), big, maxOf(w.widths))
		res.Warnings = append(res.Warnings, msg)
		notes["origin_padding_row"] = msg
	}
	return words, emb, notes, nil
}

// permuteRows returns the rows (of width values each) of src in the
// order given: row i of the result is row order[i] of src.
func permuteRows(src []float32, width int, order []int) []float32 {
	dst := make([]float32, len(order)*width)
	for to, from := range order {
		copy(dst[to*width:(to+1)*width], src[from*width:(from+1)*width])
	}
	return dst
}

// wideZeroPad checks the padding row (row 0 after reorder) of the wide
// table, if any: a non-zero row is refused unless o.ZeroPad, which zeroes
// it and says so.
func wideZeroPad(w *weights, o Options, l Layout, res *Imported, notes map[string]string) error {
	if w.wide == nil {
		return nil
	}
	var big float64
	for _, v := range w.wide[:w.classes] {
		big = max(big, math.Abs(float64(v)))
	}
	switch {
	case big == 0:
		return nil
	case !o.ZeroPad:
		return fmt.Errorf("torchmodel: %s: the padding token's row of %s is not zero (largest |value| %.4g): telltale leaves padding out of the wide path's mean, PyTorch counts it unless the bag has padding_idx; train with nn.EmbeddingBag(..., mode=\"mean\", padding_idx=pad), or accept the change with --zero-pad: %w",
			o.StateDict, l.Wide, big, ErrPadRow)
	}
	clear(w.wide[:w.classes])
	msg := fmt.Sprintf("the padding row of %s was not zero (largest |value| %.4g) and is now zero: telltale leaves padding out of the wide path's mean, so texts PyTorch ran without padding ids get the same logits, texts it padded in a batch different ones",
		l.Wide, big)
	res.Warnings = append(res.Warnings, msg)
	notes["origin_wide_padding_row"] = msg
	return nil
}

// reservedIDs returns the given or detected ids of the padding and unknown
// tokens.
func reservedIDs(vocab []string, o Options) (pad, unk int, err error) {
	pick := func(given int, names []string, what, flag string) (int, error) {
		if given >= 0 {
			if given >= len(vocab) {
				return 0, fmt.Errorf("torchmodel: %s: the %s id %d is outside the vocabulary of %d tokens: %w", o.Vocab, what, given, len(vocab), ErrVocab)
			}
			return given, nil
		}
		id, found := detectID(vocab, names)
		if id < 0 {
			if len(found) == 0 {
				return 0, fmt.Errorf("torchmodel: %s: no %s token found (looked for %s): give its id with %s: %w", o.Vocab, what, strings.Join(names, " "), flag, ErrVocab)
			}
			return 0, fmt.Errorf("torchmodel: %s: several %s tokens (%s): give the one used with %s: %w", o.Vocab, what, strings.Join(found, ", "), flag, ErrVocab)
		}
		return id, nil
	}
	if pad, err = pick(o.PadID, padNames, "padding", "--pad-id"); err != nil {
		return 0, 0, err
	}
	if unk, err = pick(o.UnkID, unkNames, "unknown-word", "--unk-id"); err != nil {
		return 0, 0, err
	}
	if pad == unk {
		return 0, 0, fmt.Errorf("torchmodel: %s: padding and unknown tokens are both id %d: telltale needs two different ids: %w", o.Vocab, pad, ErrVocab)
	}
	return pad, unk, nil
}

func maxOf(xs []int) int {
	m := 0
	for _, x := range xs {
		m = max(m, x)
	}
	return m
}

func absPath(p string) string {
	if a, err := filepath.Abs(p); err == nil {
		return a
	}
	return p
}

func fileSHA256(path string) (string, error) {
	f, err := inputfile.Open(path)
	if err != nil {
		return "", fmt.Errorf("torchmodel: %w", err)
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", fmt.Errorf("torchmodel: %s: %w", path, err)
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

package main

import (
	"context"
	"flag"
	"fmt"
	"slices"
	"strconv"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/outguard"
)

var cmdMask = &command{
	Name:      "mask",
	UsageLine: "mask --model MODEL [--filters 12,40,77] [--words w1,w2] [--words-file FILE] --out MODEL2 [--data FILE | --test FILE] [--json]",
	Short:     "write a copy of a model with some filters or word weights masked (the original is kept)",
	Long: `Mask writes a new model file in which the listed filters (indexes from 0)
are switched off: their pooled units held at zero. On a model with word
weights (train --wide), --words makes the word-weight path read the listed
words of the model's vocabulary as the unknown word: their rows become the
unknown word's, so their word part is exactly 0, while the filters still
read them; on a model with bigram weights (train --wide-bigrams) so do the
rows of the word pairs that hold them. --words-file FILE gives such words
one a line, read as train's --mask-tokens files are (a UTF-8 byte order
mark, blank lines and lines starting with # skipped, white space around a
word trimmed): the way to give a word that holds a comma. Give --filters,
--words, --words-file or several. The original model file is never
overwritten. With --data or --test, both models are evaluated side by side
on the texts eval would use, as compare does: each beside the linear
baseline its file carries (the masked copy keeps the original's, since
masking changes the CNN alone), with the exact McNemar tests of the two
models and of each against its baseline.`,
	Options: func() options { return new(maskOptions) },
	Run:     runAs(runMask),
}

type maskOptions struct {
	model, filters, words, wordsFile, out, data, test string
	read                                              readOptions
	asJSON, quiet                                     bool

	indexes []int
	names   []maskWord
}

// maskWord is a word to mask and where it was given, for messages:
// `--words "a,b"` or "--words-file FILE line N".
type maskWord struct{ word, where string }

func (o *maskOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	fs.StringVar(&o.filters, "filters", "", "the filters to mask: indexes from 0, comma-separated")
	fs.StringVar(&o.words, "words", "", "words of the model's vocabulary its word weights read as the unknown word, comma-separated (a model trained with --wide)")
	fs.StringVar(&o.wordsFile, "words-file", "", "a file of such words, one a line (# starts a comment line): for words that hold a comma")
	fs.StringVar(&o.out, "out", "", "where to write the masked model (never --model itself)")
	registerEvalData(fs, &o.data, &o.test)
	o.read.register(fs, true)
	fs.BoolVar(&o.asJSON, "json", false, "print the comparison as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "print nothing but errors (and --json output)")
}

func (o *maskOptions) check(fs *flag.FlagSet, env *runEnv) error {
	if o.out == "" {
		return usagef("--out is required: where to write the masked model")
	}
	var err error
	if o.indexes, err = filterIndexes(o.filters); err != nil {
		return err
	}
	names, err := listItems("words", o.words)
	if err != nil {
		return err
	}
	for _, w := range names {
		o.names = append(o.names, maskWord{w, fmt.Sprintf("--words %q", clip(o.words))})
	}
	if len(o.indexes) == 0 && len(o.names) == 0 && o.wordsFile == "" {
		return usagef("--filters, --words or --words-file is required: e.g. --filters 12,40 (the indexes shown by 'telltale audit' or 'telltale filters'), " +
			"or --words on a model with word weights (the words the audit's mask names)")
	}
	if err := requireModel(o.model); err != nil {
		return err
	}
	return o.read.check()
}

// readWordsFile adds the words of --words-file to the words to mask; a
// file without a word is refused.
func (o *maskOptions) readWordsFile() error {
	if o.wordsFile == "" {
		return nil
	}
	entries, err := corpus.ReadListFile(o.wordsFile)
	if err != nil {
		return err
	}
	if len(entries) == 0 {
		return usagef("--words-file %s holds no word: give one word a line (blank lines and lines starting with # are skipped)", o.wordsFile)
	}
	for _, e := range entries {
		o.names = append(o.names, maskWord{e.Text, fmt.Sprintf("--words-file %s line %d", o.wordsFile, e.Line)})
	}
	return nil
}

func (o *maskOptions) files() (outputs, inputs []outguard.File) {
	return []outguard.File{{Name: "--out", Path: o.out}},
		[]outguard.File{{Name: "--model", Path: o.model}, {Name: "--data", Path: o.data}, {Name: "--test", Path: o.test}, {Name: "--words-file", Path: o.wordsFile}}
}

// maskWordIDs are the ids in m's vocabulary of the words given to --words
// and --words-file (nil for none). Each must be a word of the vocabulary
// other than the padding and the unknown word, on a model with word
// weights: masking words of a model without them would change nothing.
func maskWordIDs(m *cnn.Model, path string, words []maskWord) ([]int32, error) {
	if len(words) == 0 {
		return nil, nil
	}
	if !m.Config.Wide {
		return nil, usagef("%s: %s has no word weights (it was trained without --wide), so reading words as the unknown word there "+
			"would change nothing; mask filters with --filters, or train with --wide", strings.Fields(words[0].where)[0], path)
	}
	var ids []int32
	for _, mw := range words {
		w := mw.word
		id := slices.Index(m.Vocab, w)
		switch {
		case w == corpus.PADWord || w == corpus.UNKWord:
			return nil, usagef("%s: %s is the %s itself, which has no word weights of its own to mask: give words of the text",
				mw.where, w, map[bool]string{true: "padding", false: "unknown word"}[w == corpus.PADWord])
		case id < 0 && m.Tokenizer.Lower && strings.ToLower(w) != w && slices.Contains(m.Vocab, strings.ToLower(w)):
			return nil, usagef("%s: %s's vocabulary does not contain %q: the model lower-cases its texts, so give %q",
				mw.where, path, clip(w), clip(strings.ToLower(w)))
		case id < 0:
			return nil, usagef("%s: %s's vocabulary does not contain %q; 'telltale export --model %s --out DIR' writes the vocabulary "+
				"to DIR/vocab.txt, one word a line, written as the model's tokenizer writes them", mw.where, path, clip(w), path)
		}
		if !slices.Contains(ids, int32(id)) {
			ids = append(ids, int32(id))
		}
	}
	return ids, nil
}

func runMask(ctx context.Context, env *runEnv, o *maskOptions) error {
	if err := o.readWordsFile(); err != nil {
		return err
	}
	m, enc, err := openModel(o.model)
	if err != nil {
		return err
	}
	words, err := maskWordIDs(m, o.model, o.names)
	if err != nil {
		return err
	}
	masked, err := m.MaskedWordsCopy(o.indexes, words)
	if err != nil {
		return usageError{err.Error()}
	}
	// The held-out texts are found (and an empty split refused) before the
	// masked model is written, so a refusal leaves no file behind.
	var es *evalSet
	if o.data != "" || o.test != "" {
		if es, err = findTestSplit(m, o.data, o.test, &o.read, env.Stderr, o.quiet); err != nil {
			return err
		}
	}
	if err := masked.Save(o.out); err != nil {
		return err
	}
	if !o.quiet {
		fmt.Fprintf(env.Stderr, "%s; model written to %s (%s unchanged)\n", maskedWhat(o.indexes, o.wordList()), o.out, o.model)
	}
	if es == nil {
		if o.asJSON {
			out := map[string]any{"model": o.out, "masked": o.indexes}
			if len(o.names) > 0 {
				out["masked_words"] = o.wordList()
			}
			return writeJSON(env.Stdout, out)
		}
		return nil
	}
	data, err := encodeFor(m, enc, es.test, 0)
	if err != nil {
		return err
	}
	return compareMasked(env, data, es, []string{o.model, o.out}, []*cnn.Model{m, masked}, o.asJSON)
}

// compareMasked evaluates the model and its masked copy, which share one
// encoder, on data, the test texts of es, each beside the linear baseline
// its file carries (the masked copy keeps the original's: masking changes
// the CNN alone), as compare does: the rows of compare --json, and its
// tables and figures; es.warnings go into every row.
func compareMasked(env *runEnv, data cnn.Data, es *evalSet, names []string, ms []*cnn.Model, asJSON bool) error {
	rows := make([]compareRow, len(ms))
	var first []int
	for i, m := range ms {
		met, pred, err := cnn.Evaluate(m, data, 0)
		if err != nil {
			return err
		}
		c, err := compareWithBaseline(m, es.test, 0)
		if err != nil {
			return fmt.Errorf("%s: %w", names[i], err)
		}
		rows[i] = compareRow{Model: names[i], Metrics: met, Figures: cnn.FiguresOf(met, c), Intervals: cnn.IntervalsOf(met),
			Baseline: baselineOf(m, c), Warnings: es.warnings}
		if i == 0 {
			first = pred
			continue
		}
		rows[i].setVsFirst(data.Labels, first, pred)
	}
	return writeComparison(env, rows, splitHeading(es.name, len(es.test.Examples)), asJSON)
}

// wordList is the words to mask, as given.
func (o *maskOptions) wordList() []string {
	out := make([]string, len(o.names))
	for i, w := range o.names {
		out[i] = w.word
	}
	return out
}

// maskedWhat says what mask did: "masked filters 3, 7", "words 'a', 'b'
// read as the unknown word by the word weights", or both.
func maskedWhat(filters []int, words []string) string {
	var parts []string
	if len(filters) > 0 {
		ns := make([]string, len(filters))
		for i, f := range filters {
			ns[i] = strconv.Itoa(f)
		}
		parts = append(parts, "masked filters "+strings.Join(ns, ", "))
	}
	if len(words) > 0 {
		q := make([]string, len(words))
		for i, w := range words {
			q[i] = "'" + w + "'"
		}
		parts = append(parts, "words "+strings.Join(q, ", ")+" read as the unknown word by the word weights")
	}
	return strings.Join(parts, " and ")
}

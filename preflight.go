package main

import (
	"os"
	"slices"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/outguard"
)

// corpusReader is a command's options that read data files (--data, --dev,
// --test) with reading options: read returns them, and whether the files
// are texts to label (predict, explain), which need no label column.
type corpusReader interface {
	corpusRead() (r *readOptions, unlabeled bool)
}

func (o *trainOptions) corpusRead() (*readOptions, bool)   { return &o.read, false }
func (o *dataOptions) corpusRead() (*readOptions, bool)    { return &o.read, false }
func (o *evalOptions) corpusRead() (*readOptions, bool)    { return &o.read, false }
func (o *compareOptions) corpusRead() (*readOptions, bool) { return &o.read, false }
func (o *reportOptions) corpusRead() (*readOptions, bool)  { return &o.read, false }
func (o *faithOptions) corpusRead() (*readOptions, bool)   { return &o.read, false }
func (o *filtersOptions) corpusRead() (*readOptions, bool) { return &o.read, false }
func (o *maskOptions) corpusRead() (*readOptions, bool)    { return &o.read, false }
func (o *auditOptions) corpusRead() (*readOptions, bool)   { return &o.read, false }
func (o *predictOptions) corpusRead() (*readOptions, bool) { return &o.texts.read, true }
func (o *explainOptions) corpusRead() (*readOptions, bool) { return &o.texts.read, true }

// checkCorpora refuses (exit 2), before any work, a data file among inputs
// (--data, --dev, --test) whose start shows that it cannot be read as asked
// (corpus.Check): its format is not told by its name or --format, its
// header does not fit the format, it lacks the column --text-col or
// --label-col names (or none can be chosen), or it holds no example (a
// header alone). The message is the reader's, naming the file, the line
// and the fix. Options that read no data file check nothing.
func checkCorpora(o options, inputs []outguard.File) error {
	cr, ok := o.(corpusReader)
	if !ok {
		return nil
	}
	r, unlabeled := cr.corpusRead()
	for _, in := range inputs {
		if in.Path == "" || !slices.Contains(corpusOptions, in.Name) {
			continue
		}
		if err := corpus.Check(in.Path, r.corpusOptions(unlabeled)); err != nil {
			return usageError{err.Error()}
		}
	}
	return nil
}

// preflighter is a command's options with checks of their own that read
// the start of an input file, run once every input is known to be readable
// (guardFiles) and before any work. A problem is a usage error (exit 2).
type preflighter interface {
	preflight() error
}

// preflight refuses --seeds and --retrain on a model that records no
// training recipe (an imported one), found from its header before the
// data is read: both train again with the model's recipe. A model that is
// not a regular file (a named pipe, read once) or whose header cannot be
// read is left to loading, which says what is wrong.
func (o *auditOptions) preflight() error {
	if !o.retrain && o.seeds == 0 {
		return nil
	}
	if st, err := os.Stat(o.model); err != nil || !st.Mode().IsRegular() {
		return nil
	}
	has, err := cnn.RecordsRecipe(o.model)
	if err != nil || has {
		return nil
	}
	what := map[bool]string{true: "--retrain", false: "--seeds"}[o.retrain]
	return usagef("%s: %s records no training recipe (an imported model?): %s trains with the model's recipe; train a model with telltale train, or leave out %s",
		what, o.model, what, what)
}

package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"telltale/cnn"
	"telltale/internal/outguard"
	"telltale/internal/wording"
	"telltale/torchmodel"
)

var cmdExport = &command{
	Name:      "export",
	UsageLine: exportUsage,
	Short:     exportShort,
	Long:      exportLong,
	Options:   func() options { return new(exportOptions) },
	Run:       runAs(runExport),
}

// Help of export, for its entry in the command table.
const (
	exportUsage = "export --model MODEL --out FOLDER [--json] [--quiet]"
	exportShort = "hand a model to PyTorch: its state_dict as NumPy arrays, with its vocabulary and labels"
	exportLong  = `Export writes a telltale model (masked filters included) into a folder:
state_dict.npz (NumPy arrays, read without pickle), vocab.txt (one token per
line, id = line number; 0 is padding, 1 unknown), labels.txt (the class names
in output order) and, for a model with a tokenizer file, tokenizer.json. The
PyTorch module in the README ("Bring your own model") loads the folder and
gives telltale's logits. A masked filter's output weights are exported as
zero, which gives the masked model's logits exactly. A model trained with
--chars is exported with its character layer (keys chars.*), from which the
module computes each word's character part, for words outside the
vocabulary too when given the tokens' characters.

The folder is made if missing; one that exists must be empty or hold an
earlier export alone, which the new one replaces whole (written beside it,
then put in its place); a folder with any other file is refused before the
work.`
)

// exportOptions are the options of `telltale export`.
type exportOptions struct {
	Model string // the telltale model file
	Out   string // the folder to write into
	JSON  bool
	Quiet bool
}

func (o *exportOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.Model, "model", "", "model file written by train or import")
	fs.StringVar(&o.Out, "out", "", "folder to write state_dict.npz, vocab.txt and labels.txt into (made if missing; or an earlier export's, replaced whole)")
	fs.BoolVar(&o.JSON, "json", false, "print a summary as one JSON object")
	fs.BoolVar(&o.Quiet, "quiet", false, "print nothing but errors (and --json output)")
}

func (o *exportOptions) check(*flag.FlagSet, *runEnv) error {
	switch {
	case o.Model == "":
		return usagef("--model is required: the telltale model file to export")
	case o.Out == "":
		return usagef("--out is required: the folder to write the files into, e.g. --out exported")
	}
	o.Out = filepath.Clean(o.Out) // "exported/" is the folder exported
	if st, err := os.Stat(o.Out); err == nil && !st.IsDir() {
		// Said first when the file is the model: the worse mistake.
		if err := outguard.Check([]outguard.File{{Name: "--out", Path: o.Out}}, []outguard.File{{Name: "--model", Path: o.Model}}); err != nil {
			return usageError{err.Error()}
		}
		return usagef("--out %s is a file: give a folder (it is made if missing)", o.Out)
	}
	if err := torchmodel.CheckExportDir(o.Out); errors.Is(err, torchmodel.ErrExportDir) {
		return usageError{"--out: " + strings.TrimPrefix(err.Error(), "torchmodel: ")}
	}
	return requireInputs([]outguard.File{{Name: "--model", Path: o.Model}})
}

// files lists the files export writes inside --out, or --out itself while
// that folder does not exist yet (then its own folder must be writable).
func (o *exportOptions) files() (outputs, inputs []outguard.File) {
	inputs = []outguard.File{{Name: "--model", Path: o.Model}}
	if st, err := os.Stat(o.Out); err != nil || !st.IsDir() {
		return []outguard.File{{Name: "--out", Path: o.Out}}, inputs
	}
	for _, f := range []string{torchmodel.WeightsFile, torchmodel.VocabFile, torchmodel.LabelsFile, torchmodel.TokenizerFile} {
		outputs = append(outputs, outguard.File{Name: "--out's " + f, Path: filepath.Join(o.Out, f)})
	}
	return outputs, inputs
}

// exportSummary is what export prints.
type exportSummary struct {
	Files     []string `json:"files"`
	Masked    int      `json:"masked_filters"`
	Lower     bool     `json:"lower"`
	MaxTokens int      `json:"max_tokens"`
	Tokenizer string   `json:"tokenizer"`
}

// runExport writes a telltale model as a state_dict of NumPy arrays for
// the PyTorch module of the README, with its vocabulary and labels. The
// paths are checked before any work: the model must be readable, the
// folder writable, and no file written may be the model file.
func runExport(ctx context.Context, env *runEnv, o *exportOptions) error {
	m, err := cnn.Load(o.Model)
	if err != nil {
		return err
	}
	if err := torchmodel.CanExport(m); err != nil {
		return fmt.Errorf("%s: %w", o.Model, err)
	}
	// The folder's own folder is made if missing; the folder itself is
	// made whole by Export, in place of an earlier export if any.
	if err := os.MkdirAll(filepath.Dir(o.Out), 0o755); err != nil {
		return fmt.Errorf("--out %s: %w", o.Out, err)
	}
	if err := torchmodel.ExportContext(ctx, m, o.Out); err != nil {
		return err
	}
	s := exportSummary{Files: torchmodel.ExportFiles(m, o.Out), Lower: m.Tokenizer.Lower, Tokenizer: describeTokenizer(m.Tokenizer)}
	if m.Info.Recipe != nil {
		s.MaxTokens = m.Info.Recipe.MaxLen
	}
	for g := range m.Config.NumFilters() {
		if m.IsMasked(g) {
			s.Masked++
		}
	}
	if o.JSON {
		return writeJSON(env.Stdout, s)
	}
	if o.Quiet {
		return nil
	}
	fmt.Fprintf(env.Stdout, "exported: %s\n", strings.Join(s.Files, ", "))
	if s.Masked > 0 {
		fmt.Fprintf(env.Stdout, "%d masked filters exported with zero output weights (same logits)\n", s.Masked)
	}
	if m.Config.Chars != nil {
		fmt.Fprintf(env.Stdout, "character layer exported (keys %s.*): words outside %s get their own character part when the module is given the tokens' characters (encode(..., chars=True))\n", torchmodel.CharsPrefix, torchmodel.VocabFile)
	}
	cut := "texts are kept whole"
	if s.MaxTokens > 0 {
		cut = "texts are cut to " + wording.Count(s.MaxTokens, "token", "tokens")
	}
	fmt.Fprintf(env.Stdout, "tokenizer: %s; %s; ids are the line numbers of %s (0 padding, 1 unknown)\n", s.Tokenizer, cut, torchmodel.VocabFile)
	return nil
}

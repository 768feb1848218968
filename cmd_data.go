package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
)

// maxTextBytesFlag is the largest --max-text-bytes (1 GiB): one record may
// then hold up to 8 GiB in memory while it is read.
const maxTextBytesFlag = 1 << 30

// dataFlags are the options of every command that reads labeled data.
type dataFlags struct {
	Data, Dev         string
	TextCol, LabelCol string
	Format            string
	TestFrac          float64
	Seed              uint64
	Relabel           string
	Mail              string
	MaxTextBytes      int
}

func (d *dataFlags) register(fs *flag.FlagSet, devHelp string) {
	fs.StringVar(&d.Data, "data", "", "labeled data: a .csv, .tsv or .jsonl file, or a folder with one sub-folder per label")
	fs.StringVar(&d.Dev, "dev", "", devHelp)
	fs.StringVar(&d.TextCol, "text-col", "", "name of the text column or field (default: text, or auto-detected)")
	fs.StringVar(&d.LabelCol, "label-col", "", "name of the label column or field (default: label, or auto-detected)")
	fs.StringVar(&d.Format, "format", "", "force the input format: csv, tsv, jsonl or dir")
	fs.Float64Var(&d.TestFrac, "test-frac", 0.2, "without --dev: share of --data held out, stratified by label")
	fs.Uint64Var(&d.Seed, "seed", 1, "random seed (splits, initialisation, shuffling)")
	fs.IntVar(&d.MaxTextBytes, "max-text-bytes", corpus.DefaultMaxTextBytes, "longest text kept, in bytes: longer ones are cut with a warning; a record over 8 times this is an error")
	fs.StringVar(&d.Mail, "mail", "", "e-mail texts: 'subject-body' keeps the Subject header and the body and drops the other headers")
	fs.StringVar(&d.Relabel, "relabel", "", "map labels before use, e.g. 'easy-ham-1=ham,spam-1=spam' (an empty target drops the label)")
}

func (d *dataFlags) options() corpus.Options {
	return corpus.Options{TextCol: d.TextCol, LabelCol: d.LabelCol, Format: d.Format, MaxTextBytes: d.MaxTextBytes, ReplaceInvalidUTF8: true}
}

// load reads --data (and --dev) and returns the training and held-out sets.
// Without --dev, --data is split. Warnings go to warn.
func (d *dataFlags) load(warn io.Writer, quiet bool) (train, test *corpus.Dataset, err error) {
	if d.Data == "" {
		return nil, nil, usagef("--data is required: a labeled .csv, .tsv, .jsonl file or a folder of label folders")
	}
	all, err := d.read(d.Data, warn, quiet)
	if err != nil {
		return nil, nil, err
	}
	if d.Dev == "" {
		if d.TestFrac <= 0 || d.TestFrac >= 1 {
			return nil, nil, usagef("--test-frac %g: must be between 0 and 1 (exclusive)", d.TestFrac)
		}
		train, test = all.Split(d.TestFrac, d.Seed)
		return train, test, nil
	}
	test, err = d.read(d.Dev, warn, quiet)
	return all, test, err
}

// read reads one labeled file with --relabel and --mail applied.
func (d *dataFlags) read(path string, warn io.Writer, quiet bool) (*corpus.Dataset, error) {
	prepare, err := d.preparer()
	if err != nil {
		return nil, err
	}
	ds, warnings, err := corpus.Load(path, d.options())
	if err != nil {
		return nil, err
	}
	if !quiet {
		printWarnings(warn, warnings)
	}
	return prepare(ds)
}

// preparer returns what --relabel and --mail do to a dataset.
func (d *dataFlags) preparer() (func(*corpus.Dataset) (*corpus.Dataset, error), error) {
	relabel, err := parseRelabel(d.Relabel)
	if err != nil {
		return nil, err
	}
	var text func(string) string
	switch d.Mail {
	case "":
	case "subject-body":
		text = corpus.SubjectAndBody
	default:
		return nil, usagef("--mail %q: the one choice is subject-body", d.Mail)
	}
	return func(ds *corpus.Dataset) (*corpus.Dataset, error) {
		if relabel != nil {
			for from := range relabel {
				// Checked on --data only: a held-out file may lack some labels.
				if ds.Path == d.Data && !slices.Contains(ds.Labels, from) {
					return nil, usagef("--relabel: %s has no label %q; its labels are %s", ds.Path, from, strings.Join(ds.Labels, ", "))
				}
			}
			ds = ds.Relabel(relabel)
		}
		if text != nil {
			ds = ds.MapTexts(text)
		}
		return ds, nil
	}, nil
}

// example applies --relabel and --mail to one streamed example; ok is false
// for an example whose label --relabel drops.
func (d *dataFlags) example() (func(corpus.Example) (corpus.Example, bool), error) {
	relabel, err := parseRelabel(d.Relabel)
	if err != nil {
		return nil, err
	}
	if d.Mail != "" && d.Mail != "subject-body" {
		return nil, usagef("--mail %q: the one choice is subject-body", d.Mail)
	}
	return func(e corpus.Example) (corpus.Example, bool) {
		if to, ok := relabel[e.Label]; ok {
			if to == "" {
				return e, false
			}
			e.Label = to
		}
		if d.Mail == "subject-body" {
			e.Text = corpus.SubjectAndBody(e.Text)
		}
		return e, true
	}, nil
}

// printWarnings prints the first warnings and a count of the rest.
func printWarnings(w io.Writer, warnings []corpus.Warning) {
	const most = 10
	for i, x := range warnings {
		if i == most {
			fmt.Fprintf(w, "warning: … and %d more warnings\n", len(warnings)-most)
			break
		}
		fmt.Fprintf(w, "warning: %s\n", x)
	}
}

func parseRelabel(s string) (map[string]string, error) {
	if s == "" {
		return nil, nil
	}
	m := map[string]string{}
	for _, part := range splitList(s) {
		from, to, ok := cutEq(part)
		if !ok {
			return nil, usagef("--relabel %q: each entry is FROM=TO, separated by commas", s)
		}
		m[from] = to
	}
	return m, nil
}

func writeJSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}

func init() {
	register(&command{
		Name:      "data",
		UsageLine: "data --data FILE [--dev FILE] [--text-col C] [--label-col C] [--json]",
		Short:     "summarize a labeled dataset: labels, balance, vocabulary, lengths, duplicates and leaks",
		Long: `Data reads a labeled dataset and prints its summary: examples per label in the
training and held-out splits, class balance, vocabulary size, token-length
percentiles, exact and near-exact duplicate texts, and texts that occur in both
splits (train/test leaks). Bad input stops with a message naming the file, the
line and what to do.`,
		Setup: func(fs *flag.FlagSet) func(context.Context, *runEnv) error {
			var df dataFlags
			df.register(fs, "separate held-out file (default: a stratified split of --data)")
			asJSON := fs.Bool("json", false, "print the summary as one JSON object")
			lower := fs.Bool("lower", true, "lower-case tokens")
			minCount := fs.Int("min-count", 1, "minimum training count for a word to enter the vocabulary")
			quiet := fs.Bool("quiet", false, "print no warnings")
			return func(ctx context.Context, env *runEnv) error {
				train, test, err := df.load(env.Stderr, *quiet)
				if err != nil {
					return err
				}
				tok, err := corpus.NewTokenizer(corpus.TokenizerConfig{Lower: *lower, MinCount: *minCount})
				if err != nil {
					return err
				}
				s := corpus.Summarize(train, test, tok)
				if *asJSON {
					return writeJSON(env.Stdout, s)
				}
				return s.WriteText(env.Stdout)
			}
		},
	})
}

// loadForModel reads the training and held-out splits for a model's audit
// or report, with a note on where the held-out texts come from. With --dev,
// that file is held out. Without it, when --data is the file the model was
// trained on, the held-out texts are the dev split train kept out of it
// (used to choose the epoch, never trained on); otherwise --data is split
// with --test-frac and a warning says the held-out share may hold training
// texts.
func (d *dataFlags) loadForModel(m *cnn.Model, warn io.Writer, quiet bool) (train, held *corpus.Dataset, name, note string, err error) {
	if d.Dev != "" {
		train, held, err = d.load(warn, quiet)
		return train, held, "test", "a separate file, none of them used for training", err
	}
	notes := m.Info.Notes
	frac, ferr := strconv.ParseFloat(notes["dev_frac"], 64)
	seed, serr := strconv.ParseUint(notes["seed"], 10, 64)
	abs, _ := filepath.Abs(d.Data)
	if ferr == nil && serr == nil && frac > 0 && frac < 1 && notes["data_abs"] != "" && abs == notes["data_abs"] {
		all, err := d.read(d.Data, warn, quiet)
		if err != nil {
			return nil, nil, "", "", err
		}
		train, held = all.Split(frac, seed)
		return train, held, "dev", fmt.Sprintf("the %.0f%% that train held out of this file: used to choose the epoch, never trained on", 100*frac), nil
	}
	train, held, err = d.load(warn, quiet)
	if err == nil && !quiet {
		fmt.Fprintf(warn, "warning: no --dev: holding out %.0f%% of %s, which may include texts the model was trained on; pass --dev FILE for a fair held-out split\n", 100*d.TestFrac, d.Data)
	}
	return train, held, "held-out", fmt.Sprintf("a %.0f%% share of the data file that may include texts the model was trained on", 100*d.TestFrac), err
}

package main

import (
	"flag"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"
	"sync"

	"telltale/corpus"
)

// maxTextBytesFlag is the largest --max-text-bytes (1 GiB): one record may
// then hold up to 8 GiB in memory while it is read.
const maxTextBytesFlag = 1 << 30

// readOptions are how a command reads a data file: the columns, the format,
// the length limit, and what --mail and --relabel do to the examples.
// Commands that read texts to label (predict, explain) have no label
// options.
type readOptions struct {
	TextCol, LabelCol string
	Format            string
	MaxTextBytes      int
	Mail              string
	Relabel           string

	relabel map[string]string
	// streamed holds the labels of the examples example has seen, for
	// unknownRelabel.
	streamed struct {
		sync.Mutex
		labels map[string]bool
	}
}

// register adds the reading options; labeled adds --label-col and
// --relabel.
func (r *readOptions) register(fs *flag.FlagSet, labeled bool) {
	fs.StringVar(&r.TextCol, "text-col", "", "name of the text column or field (default: text, or auto-detected)")
	if labeled {
		fs.StringVar(&r.LabelCol, "label-col", "", "name of the label column or field (default: label, or auto-detected)")
	}
	fs.StringVar(&r.Format, "format", "", "force the input format: csv, tsv, jsonl or dir")
	intVar(fs, &r.MaxTextBytes, "max-text-bytes", corpus.DefaultMaxTextBytes, "longest text kept, in bytes: longer ones are cut with a warning; a record over 8 times this is an error")
	fs.StringVar(&r.Mail, "mail", "", "e-mail texts: 'subject-body' keeps the Subject header and the body and drops the other headers")
	if labeled {
		fs.StringVar(&r.Relabel, "relabel", "", "map labels before use, e.g. 'easy-ham-1=ham,spam-1=spam' (an empty target drops the label)")
	}
}

// args are the reading options as command-line arguments, those set away
// from their defaults, for a command the user is told to run on the same
// file (r may be nil: none).
func (r *readOptions) args() []string {
	if r == nil {
		return nil
	}
	var args []string
	for _, o := range []struct{ name, value string }{{"text-col", r.TextCol}, {"label-col", r.LabelCol}, {"format", r.Format},
		{"mail", r.Mail}, {"relabel", r.Relabel}} {
		if o.value != "" {
			args = append(args, "--"+o.name, o.value)
		}
	}
	if r.MaxTextBytes != 0 && r.MaxTextBytes != corpus.DefaultMaxTextBytes {
		args = append(args, "--max-text-bytes", strconv.Itoa(r.MaxTextBytes))
	}
	return args
}

// check refuses reading options that cannot work.
func (r *readOptions) check() error {
	switch r.Format {
	case "", "csv", "tsv", "jsonl", "dir":
	default:
		return usagef("--format %q: use csv, tsv, jsonl or dir", clip(r.Format))
	}
	if r.MaxTextBytes < 1 || r.MaxTextBytes > maxTextBytesFlag {
		return usagef("--max-text-bytes %d: give 1 to %d", r.MaxTextBytes, maxTextBytesFlag)
	}
	if r.Mail != "" && r.Mail != "subject-body" {
		return usagef("--mail %q: the one choice is subject-body", clip(r.Mail))
	}
	var err error
	r.relabel, err = parseRelabel(r.Relabel)
	return err
}

func (r *readOptions) corpusOptions(unlabeled bool) corpus.Options {
	return corpus.Options{TextCol: r.TextCol, LabelCol: r.LabelCol, Format: r.Format, MaxTextBytes: r.MaxTextBytes,
		ReplaceInvalidUTF8: true, Unlabeled: unlabeled}
}

// read reads the labeled file at path with --relabel and --mail applied,
// printing its warnings on warn unless quiet. With strict, every label
// --relabel names must occur in the file (held-out files may lack some).
func (r *readOptions) read(path string, strict bool, warn io.Writer, quiet bool) (*corpus.Dataset, error) {
	ds, warnings, err := corpus.Load(path, r.corpusOptions(false))
	if !quiet {
		printWarnings(warn, warnings)
	}
	if err != nil {
		return nil, err
	}
	return r.prepare(ds, strict)
}

// readHeldOut reads a labeled dev or test file at path like read, but one
// label is enough: the file is evaluated against the labels of a model or
// of --data (a label outside them is refused where they are matched,
// naming the file, the line and the fix). A command that needs two labels
// among its held-out texts says so itself.
func (r *readOptions) readHeldOut(path string, strict bool, warn io.Writer, quiet bool) (*corpus.Dataset, error) {
	opt := r.corpusOptions(false)
	opt.HeldOut = true
	ds, warnings, err := corpus.Load(path, opt)
	if !quiet {
		printWarnings(warn, warnings)
	}
	if err != nil {
		return nil, err
	}
	return r.prepare(ds, strict)
}

// readTexts reads the texts to label at path (labels are kept where the
// file has them), with --mail applied.
func (r *readOptions) readTexts(path string, warn io.Writer, quiet bool) (*corpus.Dataset, error) {
	ds, warnings, err := corpus.Load(path, r.corpusOptions(true))
	if !quiet {
		printWarnings(warn, warnings)
	}
	if err != nil {
		return nil, err
	}
	return r.prepare(ds, false)
}

// prepare applies --relabel and --mail to a dataset.
func (r *readOptions) prepare(ds *corpus.Dataset, strict bool) (*corpus.Dataset, error) {
	if r.relabel != nil {
		if strict {
			if msg := relabelMissing(r.relabel, ds.Path, ds.Labels); msg != "" {
				return nil, usageError{msg}
			}
		}
		ds = ds.Relabel(r.relabel)
	}
	if r.Mail == "subject-body" {
		ds = ds.MapTexts(corpus.SubjectAndBody)
	}
	return ds, nil
}

// example applies --relabel and --mail to one streamed example; keep is
// false for an example whose label --relabel drops.
func (r *readOptions) example(e corpus.Example) (out corpus.Example, keep bool) {
	if r.relabel != nil {
		r.streamed.Lock()
		if r.streamed.labels == nil {
			r.streamed.labels = map[string]bool{}
		}
		r.streamed.labels[e.Label] = true
		r.streamed.Unlock()
	}
	if to, ok := r.relabel[e.Label]; ok {
		if to == "" {
			return e, false
		}
		e.Label = to
	}
	if r.Mail == "subject-body" {
		e.Text = corpus.SubjectAndBody(e.Text)
	}
	return e, true
}

// unknownRelabel is the warning for a --relabel label that none of the
// examples example has seen from the file at path had (checked once the
// whole file has been streamed), or "" (also when example saw nothing).
func (r *readOptions) unknownRelabel(path string) string {
	r.streamed.Lock()
	defer r.streamed.Unlock()
	if r.streamed.labels == nil {
		return ""
	}
	labels := make([]string, 0, len(r.streamed.labels))
	for l := range r.streamed.labels {
		labels = append(labels, l)
	}
	slices.Sort(labels)
	return relabelMissing(r.relabel, path, labels)
}

// relabelMissing says which label of relabel the file at path, with the
// labels given, does not have, or "" when it has them all. Of several,
// the first in order is named.
func relabelMissing(relabel map[string]string, path string, labels []string) string {
	from := make([]string, 0, len(relabel))
	for l := range relabel {
		from = append(from, l)
	}
	slices.Sort(from)
	for _, l := range from {
		if !slices.Contains(labels, l) {
			return fmt.Sprintf("--relabel: %s has no label %q; its labels are %s", path, clip(l), listed(labels))
		}
	}
	return ""
}

func parseRelabel(s string) (map[string]string, error) {
	items, err := listItems("relabel", s)
	if err != nil || items == nil {
		return nil, err
	}
	m := map[string]string{}
	for _, part := range items {
		from, to, ok := strings.Cut(part, "=")
		if !ok || strings.TrimSpace(from) == "" {
			return nil, usagef("--relabel %q: each entry is FROM=TO, separated by commas", clip(s))
		}
		from, to = strings.TrimSpace(from), strings.TrimSpace(to)
		if prev, seen := m[from]; seen && prev != to {
			return nil, usagef("--relabel %q: label %q is mapped twice, to %q and to %q: map each label once", clip(s), clip(from), clip(prev), clip(to))
		}
		m[from] = to
	}
	return m, nil
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

// listed is a list of names for a message: at most ten, each clipped.
func listed(names []string) string {
	const most = 10
	parts := make([]string, 0, min(len(names), most)+1)
	for i, n := range names {
		if i == most {
			parts = append(parts, fmt.Sprintf("and %d more", len(names)-most))
			break
		}
		parts = append(parts, clip(n))
	}
	return strings.Join(parts, ", ")
}

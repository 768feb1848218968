package main

import (
	"bufio"
	"bytes"
	"cmp"
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"runtime"
	"slices"
	"strings"
	"sync/atomic"

	"golang.org/x/term"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
	"telltale/internal/inorder"
	"telltale/internal/outguard"
	"telltale/internal/wording"
	"telltale/report"
)

var cmdExplain = &command{
	Name:      "explain",
	UsageLine: "explain --model MODEL [--text \"...\" | --data FILE] [--method exact|occlusion|ig] [--class LABEL] [--json]",
	Short:     "explain why a text got its label: exact token shares, occlusion, integrated gradients, windows kept down",
	Long: `Explain labels --text (or each text of --data, or each line of standard
input) and splits the decision over its tokens. By default the decision is the
log-odds of the predicted label against the runner-up, log p(label)/p(runner-up);
with --class it is that label's centred logit (its logit minus the mean over
labels). exact: the output bias, the biases of the filters that fired and one
share per token add up to it exactly. occlusion: the drop in the predicted
label's probability when the token is replaced by padding, measured by
re-running the model. ig: integrated gradients over the embeddings from an
all-padding baseline, in closed form. A label's own logit, or a token's share
of it, is never shown: training does not pin it down. Windows kept down are
windows that would have won their filter but for the tokens that kept them
down; removing those tokens checks each one. In a terminal the text is
painted by the chosen method; --json gives every number.

Each text of --data or of standard input is named by its input line
("line N:", or its file in a folder of texts); a blank line of standard
input gives "line N: blank" (with --json, {"line":N,"blank":true}, as
predict does), so outputs pair with input lines.

The explanation describes the model, not the world: check it before you act
on it, and never use a classifier alone for decisions about people.`,
	Options: func() options { return new(explainOptions) },
	Run:     runAs(runExplain),
}

type explainOptions struct {
	model, method, class, windows, color, export string
	texts                                        textSource
	keptDown                                     int
	threads                                      threadsOption
	asJSON                                       bool

	widths []int
}

func (o *explainOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	o.texts.register(fs, "explain")
	fs.StringVar(&o.method, "method", explain.MethodExact, "attribution painted in the terminal: exact, occlusion or ig")
	fs.StringVar(&o.class, "class", "", "paint the shares of this label's centred logit (default: the log-odds of the predicted label against the runner-up)")
	fs.StringVar(&o.windows, "windows", "", "also occlude every n-gram window of these widths, e.g. 2,3 (in the text output and --json)")
	intVar(fs, &o.keptDown, "kept-down", 3, "windows kept down to list per text (0: none)")
	fs.BoolVar(&o.asJSON, "json", false, "print one JSON object per text")
	fs.StringVar(&o.color, "color", "auto", "paint with colours: auto (when standard output is a terminal), always or never")
	fs.StringVar(&o.export, "export", "", "also write every token's attributions to this .csv or .jsonl file")
	o.threads.register(fs)
}

func (o *explainOptions) check(fs *flag.FlagSet, env *runEnv) error {
	switch o.method {
	case explain.MethodExact, explain.MethodOcclusion, explain.MethodIG:
	default:
		return usagef("--method %q: use exact, occlusion or ig", clip(o.method))
	}
	switch o.color {
	case "auto", "always", "never":
	default:
		return usagef("--color %q: use auto, always or never", clip(o.color))
	}
	if o.method == explain.MethodOcclusion && o.class != "" {
		return usagef("--class with --method occlusion: occlusion measures the predicted class only; use --method exact or ig to choose a class")
	}
	var err error
	if o.widths, err = listInts("windows", o.windows, 1, "a window width (widths are 1 or more)"); err != nil {
		return err
	}
	for _, err := range []error{requireModel(o.model), checkExport(o.export), o.texts.check(fs),
		checkAtLeast("kept-down", o.keptDown, 0, "windows kept down to list"), o.threads.check(env.Stderr)} {
		if err != nil {
			return err
		}
	}
	return nil
}

func (o *explainOptions) files() (outputs, inputs []outguard.File) {
	return []outguard.File{{Name: "--export", Path: o.export}},
		[]outguard.File{{Name: "--model", Path: o.model}, {Name: "--data", Path: o.texts.data}}
}

// classIndex is the index of the label named class among m's labels, or
// -1 for "" (the predicted label); another name is a usage error.
func classIndex(m *cnn.Model, class string) (int, error) {
	if class == "" {
		return -1, nil
	}
	if c := slices.Index(m.Labels, class); c >= 0 {
		return c, nil
	}
	return -1, usagef("--class %q: the model's labels are %s", clip(class), listed(m.Labels))
}

// workerTables gives each of the workers a word-slot table of its own,
// filled text by text: each distinct word's slot scores are computed once
// per worker, and only for the words the texts use; the workers share the
// memory bound.
func workerTables(m *cnn.Model, workers int) ([]*explain.GrowingTable, error) {
	tables := make([]*explain.GrowingTable, workers)
	for w := range tables {
		var err error
		if tables[w], err = explain.NewGrowingTable(m, explain.DefaultTableBytes/int64(workers)); err != nil {
			return nil, err
		}
	}
	return tables, nil
}

func runExplain(ctx context.Context, env *runEnv, o *explainOptions) error {
	m, enc, err := openCNN(o.model)
	if err != nil {
		return err
	}
	cls, err := classIndex(m, o.class)
	if err != nil {
		return err
	}
	paint := o.color == "always"
	if f, ok := env.Stdout.(*os.File); ok && o.color == "auto" {
		paint = term.IsTerminal(int(f.Fd()))
	}
	opt := explain.ExplainOptions{Occlusion: true, OcclusionWidths: o.widths, KeptDown: o.keptDown,
		IG: o.method == explain.MethodIG || o.asJSON || o.export != ""}
	// The texts are explained on several goroutines and written in their
	// order.
	workers := cmp.Or(o.threads.N, runtime.GOMAXPROCS(0))
	tables, err := workerTables(m, workers)
	if err != nil {
		return err
	}
	var all []*explain.Explanation
	var origins []text
	out := bufio.NewWriterSize(env.Stdout, 64<<10)
	// The feed stops with the pool's context, which ends at the first error,
	// even while it waits for a line of standard input.
	var total atomic.Int64 // set by the feed before its first text
	feed := func(ctx context.Context, put func(text) error) error {
		return o.texts.each(ctx, env, func(n int) { total.Store(int64(n)) }, put)
	}
	work := func(w int, t text) (explainedText, error) {
		if t.Blank {
			return explainedText{out: blankExplanation(t, o.asJSON)}, nil
		}
		e, cut, err := explainText(m, enc, t.Text, opt, tables[w])
		if err != nil {
			return explainedText{}, err
		}
		var b bytes.Buffer
		switch {
		case o.asJSON:
			err = writeExplanationJSON(&b, e, t, cut)
		default:
			writeOrigin(&b, t)
			if cut > 0 {
				fmt.Fprintf(&b, "(the model reads the first %s; the last %d %s not explained)\n", wording.Count(len(e.Tokens), "token", "tokens"), cut,
					map[bool]string{true: "is", false: "are"}[cut == 1])
			}
			err = writeExplanation(&b, t.Text, e, o.method, cls, paint)
		}
		return explainedText{e, b.Bytes()}, err
	}
	bar := newProgressBar(env.Stderr, o.texts.quiet || o.texts.given)
	written := 0
	emit := func(t text, x explainedText) error {
		if o.export != "" && !t.Blank {
			all = append(all, x.e)
			origins = append(origins, text{Line: t.Line, File: t.File})
		}
		// One write per text: a reader of the output sees whole texts.
		if _, err := out.Write(x.out); err != nil {
			return err
		}
		if err := out.Flush(); err != nil {
			return err
		}
		written++
		bar.progress("explaining", written, int(total.Load()))
		return nil
	}
	err = inorder.Run(ctx, workers, feed, work, emit)
	bar.done()
	if err != nil && ctx.Err() != nil {
		return interrupted(stoppedNote("explanations", written, o.texts.stdin(), o.export))
	}
	if err != nil || o.export == "" {
		return err
	}
	return report.WriteTableFile(o.export, withOrigins(report.AttributionTable(all), origins))
}

// withOrigins puts after the attribution table's text_index the line each
// text came from (of --data, where its record starts, or of standard
// input; empty for --text) and, when a text came from a folder, its file,
// as predict's --export does, so that a row can be traced back to its
// input. origins[i] is the origin of text_index i.
func withOrigins(t *report.Table, origins []text) *report.Table {
	files := slices.ContainsFunc(origins, func(o text) bool { return o.File != "" })
	cols := []string{"line"}
	if files {
		cols = append(cols, "file")
	}
	t.Columns = slices.Insert(t.Columns, 1, cols...)
	for r, row := range t.Rows {
		o := origins[row[0].(int)]
		cells := []any{lineCell(o.Line)}
		if files {
			cells = append(cells, o.File)
		}
		t.Rows[r] = slices.Insert(row, 1, cells...)
	}
	return t
}

// writeOrigin names, in the text output, where a text came from: its line
// of --data or of standard input, and its file of a folder of texts
// (nothing for --text).
func writeOrigin(w io.Writer, t text) {
	switch {
	case t.File != "":
		fmt.Fprintf(w, "file %s:\n", t.File)
	case t.Line != 0:
		fmt.Fprintf(w, "line %d:\n", t.Line)
	}
}

// blankExplanation is the output of a blank line of standard input, which
// has nothing to explain: in the text output its line named as blank, with
// asJSON {"line":N,"blank":true} (as predict writes it).
func blankExplanation(t text, asJSON bool) []byte {
	if asJSON {
		return fmt.Appendf(nil, `{"line":%d,"blank":true}`+"\n", t.Line)
	}
	return fmt.Appendf(nil, "line %d: blank\n", t.Line)
}

// explainedText is one text's explanation and its output, written by a
// worker of runExplain.
type explainedText struct {
	e   *explain.Explanation
	out []byte
}

// explainText explains one text and says how many of its tokens are past
// the length the model reads. Tables, when not nil, is filled with the
// text's words and used.
func explainText(m *cnn.Model, enc *corpus.Encoder, t string, opt explain.ExplainOptions, tables *explain.GrowingTable) (*explain.Explanation, int, error) {
	if m.Config.Chars != nil {
		// The text's unseen words get rows of their own
		// (cnn.Model.WithUnseen), which the vocabulary's table does not hold.
		mu, encU, err := m.WithUnseen(enc, []string{t})
		if err != nil {
			return nil, 0, err
		}
		if mu != m {
			m, enc, tables = mu, encU, nil
		}
	}
	// Tokenized once, as enc.Encode would; the tokens past the limit are
	// only counted.
	toks := enc.Tok.TokenizeFor(enc.Vocab, t)
	cut := 0
	if enc.MaxTokens > 0 {
		cut = max(0, len(toks)-enc.MaxTokens)
		toks = toks[: len(toks)-cut : len(toks)-cut]
	}
	ids := enc.Vocab.Encode(toks)
	opt.Table = nil
	if tables != nil {
		opt.Table = tables.Add(ids)
	}
	e, err := explain.Explain(m, toks, ids, opt)
	return e, cut, err
}

func writeExplanationJSON(w io.Writer, e *explain.Explanation, t text, cut int) error {
	b, err := jsonLine(struct {
		*explain.Explanation
		CutTokens int    `json:"cut_tokens"`
		Line      int    `json:"line,omitempty"`
		File      string `json:"file,omitempty"`
	}{e, cut, t.Line, t.File})
	if err != nil {
		return err
	}
	_, err = w.Write(b)
	return err
}

// writeExplanation writes one explanation for a reader: the label and the
// probabilities, the text painted by the method for the log-odds (class
// −1) or class's centred logit, the identity or check of the method, the
// windows whose removal matters most, the filters that fired and the
// windows kept down.
func writeExplanation(w io.Writer, text string, e *explain.Explanation, method string, class int, paint bool) error {
	fmt.Fprintf(w, "label: %s", e.Label)
	for c, l := range e.Labels {
		fmt.Fprintf(w, "  %s=%.3f", l, e.Probabilities[c])
	}
	fmt.Fprintf(w, "  (runner-up: %s)\n", e.Labels[e.RunnerUp])
	if method == explain.MethodOcclusion {
		class = -1
	}
	if err := explain.Paint(w, text, e, method, class, paint); err != nil {
		return err
	}
	writeIdentity(w, e, method, class)
	fmt.Fprintln(w)
	writeWindows(w, e)
	writeFiredFilters(w, e, class)
	writeKeptDown(w, e)
	return nil
}

// quantity names the split quantity: the log-odds (class −1) or class's
// centred logit.
func quantity(e *explain.Explanation, class int) string {
	if class < 0 {
		return fmt.Sprintf("log p(%s)/p(%s)", e.Label, e.Labels[e.RunnerUp])
	}
	return fmt.Sprintf("the centred logit of %s", e.Labels[class])
}

// sharesOf is the split of the log-odds (class −1) or of class's centred logit.
func sharesOf(e *explain.Explanation, class int) *explain.Shares {
	if class < 0 {
		return &e.LogOdds
	}
	return &e.Centred[class]
}

// writeIdentity writes what the painted numbers add up to: the exact
// split, or integrated gradients' completeness; on a model with the wide
// path it names the unknown word's weight in the output bias (the
// baseline) and the word weights in the token shares (scores).
func writeIdentity(w io.Writer, e *explain.Explanation, method string, class int) {
	switch method {
	case explain.MethodExact:
		s := sharesOf(e, class)
		var fb, tok float64
		for _, v := range s.FilterBias {
			fb += v
		}
		for _, v := range s.Tokens {
			tok += v
		}
		bias, words := "output bias", ""
		if s.Words != nil {
			bias, words = "output bias with the unknown word's weight", fmt.Sprintf(" (word weights %+.3f)", sumOf(s.Words))
		}
		fmt.Fprintf(w, "%s = %+.3f = %s %+.3f + filter biases %+.3f + token shares %+.3f%s\n",
			quantity(e, class), s.Value, bias, s.OutputBias, fb, tok, words)
	case explain.MethodIG:
		ig := e.Integrated.LogOdds
		if class >= 0 {
			ig = e.Integrated.Centred[class]
		}
		base, words := "with every word vector zero", ""
		if ig.Words != nil {
			base, words = "with every word vector zero and the unknown word's weight", fmt.Sprintf(" (word weights %+.3f)", sumOf(ig.Words))
		}
		fmt.Fprintf(w, "%s = %+.3f, %s %+.3f: the token scores%s add up to the difference (gap %.1g)\n",
			quantity(e, class), ig.Value, base, ig.Baseline, words, ig.Gap)
	}
}

// sumOf is the sum of v.
func sumOf(v []float64) float64 {
	var s float64
	for _, x := range v {
		s += x
	}
	return s
}

// writeWindows lists the n-gram windows whose removal lowers the predicted
// probability most.
func writeWindows(w io.Writer, e *explain.Explanation) {
	ws := e.Attributions.Windows
	if len(ws) == 0 {
		return
	}
	order := make([]int, len(ws))
	for i := range order {
		order[i] = i
	}
	sortBy(order, func(i int) float64 { return -ws[i].Drop })
	fmt.Fprintf(w, "n-gram windows whose removal lowers p(%s) most:\n", e.Label)
	for _, i := range order[:min(5, len(order))] {
		fmt.Fprintf(w, "  %+.3f  %q\n", ws[i].Drop, strings.Join(tokenTexts(e, ws[i].Start, ws[i].End-ws[i].Start, nil), " "))
	}
}

// writeFiredFilters lists the filters that fired by their part of the
// log-odds (class −1) or of class's centred logit, with the part their
// bias carries.
func writeFiredFilters(w io.Writer, e *explain.Explanation, class int) {
	if len(e.Filters) == 0 {
		return
	}
	s := sharesOf(e, class)
	fmt.Fprintf(w, "filters that fired, by their part of %s (of it, the filter's bias):\n", quantity(e, class))
	for _, i := range largestAbs(s.Filters, 8) {
		f := e.Filters[i]
		fmt.Fprintf(w, "  filter %-4d width %d  %+.3f (%+.3f)  window %q\n", f.Filter, f.Width, s.Filters[i], s.FilterBias[i],
			strings.Join(tokenTexts(e, f.Start, f.Width, nil), " "))
	}
}

// largestAbs returns the indices of the k values of v largest in absolute
// value, largest first, the lower index first among equals (the order a
// stable sort by −|v| gives), by insertion into the k kept.
func largestAbs(v []float64, k int) []int {
	out := make([]int, 0, min(k, len(v))+1)
	for i, x := range v {
		a := math.Abs(x)
		j := len(out)
		for j > 0 && math.Abs(v[out[j-1]]) < a {
			j--
		}
		if j < k {
			out = slices.Insert(out, j, i)
			out = out[:min(len(out), k)]
		}
	}
	return out
}

// writeKeptDown lists the windows that would have won their filter but for
// the tokens in brackets: the estimated change of the log-odds had the
// window won without them, then the change measured with those tokens
// replaced by padding, split exactly (explain.KeptDownWindow.Parts) into
// the filter's own part (the estimate's quantity), the other filters' and,
// on a model with word weights, the word weights'.
func writeKeptDown(w io.Writer, e *explain.Explanation) {
	if len(e.KeptDown) == 0 {
		return
	}
	wide := e.LogOdds.Words != nil
	fmt.Fprintf(w, "windows kept down by the [tokens] in them (change of log p(%s)/p(%s): estimated had the window won without them; measured with them replaced by padding, split exactly):\n",
		e.Label, e.Labels[e.RunnerUp])
	for _, kd := range e.KeptDown {
		own, others, words, whole := kd.Parts(e.LogOdds.Value)
		split := fmt.Sprintf("this filter %+.3f, other filters %+.3f", own, others)
		if wide {
			split += fmt.Sprintf(", word weights %+.3f", words)
		}
		fmt.Fprintf(w, "  filter %-4d width %d  %q  estimated %+.3f; measured: %s, whole %+.3f (p(%s) %s)\n", kd.Filter, kd.Width,
			strings.Join(tokenTexts(e, kd.Start, kd.Width, kd.By), " "), kd.Effect, split, whole, e.Label, change(kd.Drop))
	}
}

// tokenTexts are the texts of the width tokens from start (none past the
// text's end), those at the positions in marked in brackets.
func tokenTexts(e *explain.Explanation, start, width int, marked []int) []string {
	out := make([]string, 0, width)
	for t := start; t < start+width && t < len(e.Tokens); t++ {
		s := e.Tokens[t].Text
		if slices.Contains(marked, t) {
			s = "[" + s + "]"
		}
		out = append(out, s)
	}
	return out
}

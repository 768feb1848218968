package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	"golang.org/x/term"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
	"telltale/internal/outguard"
	"telltale/report"
)

var cmdExplain = &command{
	Name:      "explain",
	UsageLine: "explain --model MODEL [--text \"...\" | --data FILE] [--method exact|occlusion|ig] [--class LABEL] [--json]",
	Short:     "explain why a text got its label: exact token shares, occlusion, integrated gradients",
	Long: `Explain labels --text (or each text of --data, or each line of standard
input) and splits the decision over its tokens. exact: each class logit is the
bias part plus one exact share per token (they add up to the logit).
occlusion: the drop in the predicted class's probability when the token is
replaced by padding, measured by re-running the model. ig: integrated gradients
over the embeddings with a padding baseline, with its completeness gap. In a
terminal the text is painted by the chosen method; --json gives every number.

The explanation describes the model, not the world: check it before you act
on it, and never use a classifier alone for decisions about people.`,
	Options: func() options { return new(explainOptions) },
	Run:     runAs(runExplain),
}

type explainOptions struct {
	model, method, class, windows, color, export string
	texts                                        textSource
	asJSON                                       bool

	widths []int
}

func (o *explainOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	o.texts.register(fs, "explain")
	fs.StringVar(&o.method, "method", explain.MethodExact, "attribution painted in the terminal: exact, occlusion or ig")
	fs.StringVar(&o.class, "class", "", "class whose attribution is painted (default: the predicted one)")
	fs.StringVar(&o.windows, "windows", "", "also occlude every n-gram window of these widths, e.g. 2,3 (in the text output and --json)")
	fs.BoolVar(&o.asJSON, "json", false, "print one JSON object per text")
	fs.StringVar(&o.color, "color", "auto", "paint with colours: auto (when standard output is a terminal), always or never")
	fs.StringVar(&o.export, "export", "", "also write every token's attributions to this .csv or .jsonl file")
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
	for _, err := range []error{requireModel(o.model), checkExport(o.export), o.texts.check(fs)} {
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

func runExplain(ctx context.Context, env *runEnv, o *explainOptions) error {
	m, enc, err := openModel(o.model)
	if err != nil {
		return err
	}
	cls := -1
	if o.class != "" {
		for c, l := range m.Labels {
			if l == o.class {
				cls = c
			}
		}
		if cls < 0 {
			return usagef("--class %q: the model's labels are %s", clip(o.class), listed(m.Labels))
		}
	}
	paint := o.color == "always"
	if f, ok := env.Stdout.(*os.File); ok && o.color == "auto" {
		paint = term.IsTerminal(int(f.Fd()))
	}
	opt := explain.ExplainOptions{Occlusion: true, OcclusionWidths: o.widths, IG: o.method == explain.MethodIG || o.asJSON || o.export != ""}
	var all []*explain.Explanation
	err = o.texts.each(ctx, env, func(t text) error {
		e, cut, err := explainText(m, enc, t.Text, opt)
		if err != nil {
			return err
		}
		if o.export != "" {
			all = append(all, e)
		}
		if o.asJSON {
			return writeExplanationJSON(env.Stdout, e, t, cut)
		}
		if cut > 0 {
			fmt.Fprintf(env.Stdout, "(the model reads the first %d tokens; the last %d are not explained)\n", len(e.Tokens), cut)
		}
		return writeExplanation(env.Stdout, t.Text, e, o.method, cls, paint)
	})
	if err != nil || o.export == "" {
		return err
	}
	return report.WriteTableFile(o.export, report.AttributionTable(all))
}

// explainText explains one text and says how many of its tokens are past
// the length the model reads.
func explainText(m *cnn.Model, enc *corpus.Encoder, t string, opt explain.ExplainOptions) (*explain.Explanation, int, error) {
	toks, ids := enc.Encode(t)
	cut := 0
	if enc.MaxTokens > 0 {
		cut = max(0, len(enc.Tok.TokenizeFor(enc.Vocab, t))-len(toks))
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

func writeExplanation(w io.Writer, text string, e *explain.Explanation, method string, class int, paint bool) error {
	if class < 0 {
		class = e.Class
	}
	fmt.Fprintf(w, "label: %s", e.Label)
	for c, l := range e.Labels {
		fmt.Fprintf(w, "  %s=%.3f", l, e.Probabilities[c])
	}
	fmt.Fprintln(w)
	what := map[string]string{
		explain.MethodExact:     fmt.Sprintf("exact share of the %q logit (bias part %+.3f, logit %+.3f)", e.Labels[class], e.Bias[class], e.Logits[class]),
		explain.MethodOcclusion: fmt.Sprintf("drop in p(%s) when the token is replaced by padding", e.Label),
		explain.MethodIG:        fmt.Sprintf("integrated gradients for the %q logit", e.Labels[class]),
	}[method]
	if method == explain.MethodOcclusion {
		class = e.Class
	}
	fmt.Fprintf(w, "%s:\n", what)
	if err := explain.WriteColored(w, text, e, method, class, paint); err != nil {
		return err
	}
	fmt.Fprintln(w)
	writeWindows(w, e)
	writeFiredFilters(w, e, class)
	return nil
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
		toks := make([]string, 0, ws[i].End-ws[i].Start)
		for t := ws[i].Start; t < ws[i].End && t < len(e.Tokens); t++ {
			toks = append(toks, e.Tokens[t].Text)
		}
		fmt.Fprintf(w, "  %+.3f  %q\n", ws[i].Drop, strings.Join(toks, " "))
	}
}

// writeFiredFilters lists the filters that fired by their part of class's logit.
func writeFiredFilters(w io.Writer, e *explain.Explanation, class int) {
	if len(e.Filters) == 0 {
		return
	}
	fmt.Fprintf(w, "filters that fired, by their part of the %q logit:\n", e.Labels[class])
	order := make([]int, len(e.Filters))
	for i := range order {
		order[i] = i
	}
	sortBy(order, func(i int) float64 { return -math.Abs(e.Filters[i].Contribution[class]) })
	for _, i := range order[:min(8, len(order))] {
		f := e.Filters[i]
		toks := make([]string, 0, f.Width)
		for t := f.Start; t < f.Start+f.Width && t < len(e.Tokens); t++ {
			toks = append(toks, e.Tokens[t].Text)
		}
		fmt.Fprintf(w, "  filter %-4d width %d  %+.3f  window %q\n", f.Filter, f.Width, f.Contribution[class], strings.Join(toks, " "))
	}
}

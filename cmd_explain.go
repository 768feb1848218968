package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"strings"
	"sync"

	"golang.org/x/term"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
	"telltale/report"
)

func init() {
	register(&command{
		Name:      "filters",
		UsageLine: "filters --model MODEL --data FILE [--top K] [--filter N] [--json]",
		Short:     "profile every filter over a corpus: top n-grams, slot words, families, purity threshold",
		Long: `Filters runs the model once over every text of --data and describes each
filter: the class it votes for, the n-grams that win its max pooling most
strongly (with the score of every slot), the words that switch each slot on
(triggers) and off (suppressors), the families its strong n-grams fall into,
its activation histogram and the purity threshold of Jacovi, Sar Shalom and
Goldberg (2018). Filters with almost nothing above that threshold are marked
idle.`,
		Setup: func(fs *flag.FlagSet) func(context.Context, *runEnv) error {
			var df dataFlags
			df.register(fs, "not used by filters")
			modelPath := fs.String("model", "", "model file written by train")
			top := fs.Int("top", 10, "n-grams shown per filter")
			only := fs.Int("filter", -1, "show only this filter (default: all)")
			purity := fs.Float64("purity", 0.5, "share of the purity threshold")
			asJSON := fs.Bool("json", false, "print the profiles as one JSON object")
			threads := fs.Int("threads", 0, "worker goroutines (default: all cores)")
			quiet := fs.Bool("quiet", false, "no progress bar or warnings")
			export := fs.String("export", "", "also write the top n-grams of every filter to this .csv or .jsonl file")
			return func(ctx context.Context, env *runEnv) error {
				if err := checkExport(*export); err != nil {
					return err
				}
				if *purity <= 0 || *purity > 1 {
					return usagef("--purity %g: a share between 0 (exclusive) and 1", *purity)
				}
				if *only < -1 || *top < 1 {
					return usagef("--filter is a filter number (0 or more) and --top at least 1")
				}
				m, enc, err := openModel(*modelPath)
				if err != nil {
					return err
				}
				if df.Data == "" {
					return usagef("--data is required: the corpus to profile the filters on (usually the training file)")
				}
				// The corpus is streamed: only a few texts are held at once.
				prepare, err := df.example()
				if err != nil {
					return err
				}
				next, stop := streamTexts(ctx, df.Data, df.options(), prepare, enc, m.Labels)
				defer stop()
				bar := newProgressBar(env.Stderr, *quiet)
				prof, err := explain.ProfileStream(ctx, m, next, explain.ProfileOptions{
					TopK: *top, Purity: *purity, Workers: *threads,
					Progress: func(done, _ int) { bar.note(fmt.Sprintf("profiling filters: %d texts", done)) },
				})
				bar.done()
				if err != nil {
					return err
				}
				if *only >= 0 {
					if *only >= len(prof.Filters) {
						return usagef("--filter %d: the model has filters 0 to %d", *only, len(prof.Filters)-1)
					}
					prof.Filters = prof.Filters[*only : *only+1]
				}
				if *export != "" {
					if err := report.WriteTableFile(*export, report.ProfileTable(prof)); err != nil {
						return err
					}
				}
				if *asJSON {
					return writeJSON(env.Stdout, prof)
				}
				return prof.WriteText(env.Stdout, *top)
			}
		},
	})
	register(&command{
		Name:      "explain",
		UsageLine: "explain --model MODEL [--text \"...\"] [--method exact|occlusion|ig] [--class LABEL] [--json]",
		Short:     "explain why a text got its label: exact token shares, occlusion, integrated gradients",
		Long: `Explain labels --text (or each line of standard input) and splits the
decision over its tokens. exact: each class logit is the bias part plus one
exact share per token (they add up to the logit). occlusion: the drop in the
predicted class's probability when the token is replaced by padding, measured
by re-running the model. ig: integrated gradients over the embeddings with a
padding baseline, with its completeness gap. In a terminal the text is painted
by the chosen method; --json gives every number.

The explanation describes the model, not the world: check it before you act
on it, and never use a classifier alone for decisions about people.`,
		Setup: func(fs *flag.FlagSet) func(context.Context, *runEnv) error {
			modelPath := fs.String("model", "", "model file written by train")
			text := fs.String("text", "", "the text to explain (default: one text per line of standard input)")
			method := fs.String("method", "exact", "attribution painted in the terminal: exact, occlusion or ig")
			class := fs.String("class", "", "class whose attribution is painted (default: the predicted one)")
			windows := fs.String("windows", "", "also occlude every n-gram window of these widths, e.g. 2,3 (in the text output and --json)")
			asJSON := fs.Bool("json", false, "print one JSON object per text")
			color := fs.String("color", "auto", "paint with colours: auto (when standard output is a terminal), always or never")
			export := fs.String("export", "", "also write every token's attributions to this .csv or .jsonl file")
			fs.Bool("quiet", false, "accepted for symmetry: explain prints no progress or warnings")
			return func(ctx context.Context, env *runEnv) error {
				if err := checkExport(*export); err != nil {
					return err
				}
				switch *method {
				case explain.MethodExact, explain.MethodOcclusion, explain.MethodIG:
				default:
					return usagef("--method %q: use exact, occlusion or ig", *method)
				}
				ws, err := parseInts(*windows, "windows")
				if err != nil {
					return err
				}
				for _, w := range ws {
					if w < 1 {
						return usagef("--windows %q: widths are 1 or more", *windows)
					}
				}
				if *method == explain.MethodOcclusion && *class != "" {
					return usagef("--class with --method occlusion: occlusion measures the predicted class only; use --method exact or ig to choose a class")
				}
				m, enc, err := openModel(*modelPath)
				if err != nil {
					return err
				}
				cls := -1
				if *class != "" {
					for c, l := range m.Labels {
						if l == *class {
							cls = c
						}
					}
					if cls < 0 {
						return usagef("--class %q: the model's labels are %s", *class, strings.Join(m.Labels, ", "))
					}
				}
				paint := *color == "always"
				if *color == "auto" {
					if f, ok := env.Stdout.(*os.File); ok {
						paint = term.IsTerminal(int(f.Fd()))
					}
				}
				opt := explain.ExplainOptions{Occlusion: true, OcclusionWidths: ws, IG: *method == explain.MethodIG || *asJSON || *export != ""}
				var all []*explain.Explanation
				one := func(t string) error {
					toks, ids := enc.Encode(t)
					cut := 0
					if enc.MaxTokens > 0 {
						cut = max(0, len(enc.Tok.TokenizeFor(enc.Vocab, t))-len(toks))
					}
					e, err := explain.Explain(m, toks, ids, opt)
					if err != nil {
						return err
					}
					if *export != "" {
						all = append(all, e)
					}
					if *asJSON {
						b, err := jsonLine(struct {
							*explain.Explanation
							CutTokens int `json:"cut_tokens"`
						}{e, cut})
						if err != nil {
							return err
						}
						_, err = env.Stdout.Write(b)
						return err
					}
					if cut > 0 {
						fmt.Fprintf(env.Stdout, "(the model reads the first %d tokens; the last %d are not explained)\n", len(toks), cut)
					}
					return writeExplanation(env.Stdout, t, e, *method, cls, paint)
				}
				if isSet(fs, "text") {
					if strings.TrimSpace(*text) == "" {
						return usagef("--text is empty: give a text, or leave --text out to read one text per line of standard input")
					}
					err = one(*text)
				} else {
					err = eachLine(ctx, env.Stdin, one)
				}
				if err != nil || *export == "" {
					return err
				}
				return report.WriteTableFile(*export, report.AttributionTable(all))
			}
		},
	})
	register(&command{
		Name:      "faithfulness",
		UsageLine: "faithfulness --model MODEL --data FILE [--json]",
		Short:     "measure how faithful each attribution method is on this model (comprehensiveness, sufficiency, AOPC)",
		Long: `Faithfulness removes each text's most important tokens by every attribution
method (and by a random ranking, as a control) and measures what the model then
does: comprehensiveness and sufficiency (DeYoung et al. 2020) at several shares
of tokens, and the area over the deletion curve (Samek et al. 2017). Higher
comprehensiveness and AOPC and lower sufficiency mean a method you can trust
more on this model.`,
		Setup: func(fs *flag.FlagSet) func(context.Context, *runEnv) error {
			var df dataFlags
			df.register(fs, "not used by faithfulness")
			modelPath := fs.String("model", "", "model file written by train")
			limit := fs.Int("limit", 2000, "score a seeded, stratified sample of at most this many texts (0: all)")
			asJSON := fs.Bool("json", false, "print the scores as one JSON object")
			threads := fs.Int("threads", 0, "worker goroutines (default: all cores)")
			quiet := fs.Bool("quiet", false, "no progress bar or warnings")
			return func(ctx context.Context, env *runEnv) error {
				m, enc, err := openModel(*modelPath)
				if err != nil {
					return err
				}
				if df.Data == "" {
					return usagef("--data is required: labeled texts to score the methods on")
				}
				ds, err := df.read(df.Data, env.Stderr, *quiet)
				if err != nil {
					return err
				}
				data, err := cnn.EncodeDataset(enc, ds, m.Labels, *threads)
				if err != nil {
					return err
				}
				if *limit < 0 {
					return usagef("--limit %d: 0 (all texts) or more", *limit)
				}
				if *limit > 0 && data.Len() > *limit {
					// A seeded, stratified sample, not the first texts of the file.
					sample, _ := ds.Split(1-float64(*limit)/float64(data.Len()), df.Seed)
					if data, err = cnn.EncodeDataset(enc, sample, m.Labels, *threads); err != nil {
						return err
					}
				}
				bar := newProgressBar(env.Stderr, *quiet)
				r, err := explain.Faithfulness(ctx, m, data.IDs, data.Labels, explain.FaithOptions{Workers: *threads, Seed: df.Seed,
					Progress: func(done, total int) { bar.show(done, total, "scoring attribution methods", false) }})
				bar.done()
				if err != nil {
					return err
				}
				if *asJSON {
					return writeJSON(env.Stdout, r)
				}
				writeFaith(env.Stdout, r)
				return nil
			}
		},
	})
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
	if ws := e.Attributions.Windows; len(ws) > 0 {
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
	if len(e.Filters) > 0 {
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
	return nil
}

func writeFaith(w io.Writer, r *explain.FaithReport) {
	fmt.Fprintf(w, "faithfulness over %d texts (model accuracy %.4f)\n", r.Texts, r.Accuracy)
	fmt.Fprintln(w, "higher comprehensiveness and AOPC, lower sufficiency: the more faithful method")
	fmt.Fprintf(w, "\n%-10s  %8s  %8s  %8s\n", "method", "compr.", "suff.", "AOPC")
	for _, mf := range r.Methods {
		fmt.Fprintf(w, "%-10s  %8.4f  %8.4f  %8.4f\n", mf.Method, mf.Comp, mf.Suff, mf.AOPC)
	}
	fmt.Fprintf(w, "\nby share of tokens removed (%%): %v\n", r.Percents)
	for _, mf := range r.Methods {
		fmt.Fprintf(w, "%-10s  compr. %s\n%-10s  suff.  %s\n", mf.Method, floats(mf.Comprehensiveness), "", floats(mf.Sufficiency))
	}
}

func floats(xs []float64) string {
	parts := make([]string, len(xs))
	for i, x := range xs {
		parts[i] = fmt.Sprintf("%.4f", x)
	}
	return strings.Join(parts, " ")
}

// streamTexts reads a labeled file one example at a time (corpus.Stream) on
// a goroutine and hands each text's ids and gold class (−1 for a label the
// model does not know) to the caller's pulls. Stop ends the reading early.
func streamTexts(ctx context.Context, path string, opt corpus.Options, prepare func(corpus.Example) (corpus.Example, bool),
	enc *corpus.Encoder, labels []string) (explain.TextSource, func()) {
	type item struct {
		ids  []int32
		gold int
	}
	class := make(map[string]int, len(labels))
	for i, l := range labels {
		class[l] = i
	}
	items := make(chan item, 256)
	done := make(chan struct{})
	var readErr error
	go func() {
		defer close(items)
		_, readErr = corpus.Stream(path, opt, func(e corpus.Example) error {
			e, keep := prepare(e)
			if !keep {
				return nil
			}
			_, ids := enc.Encode(e.Text)
			g, ok := class[e.Label]
			if !ok {
				g = -1
			}
			select {
			case items <- item{ids, g}:
				return nil
			case <-done:
				return context.Canceled
			case <-ctx.Done():
				return ctx.Err()
			}
		})
	}()
	next := func() ([]int32, int, bool, error) {
		it, ok := <-items
		if !ok {
			return nil, 0, false, readErr
		}
		return it.ids, it.gold, true, nil
	}
	var once sync.Once
	return next, func() { once.Do(func() { close(done) }) }
}

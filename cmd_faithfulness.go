package main

import (
	"bytes"
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"math"
	"slices"
	"strings"

	"telltale/cnn"
	"telltale/explain"
	"telltale/internal/outguard"
)

var cmdFaithfulness = &command{
	Name:      "faithfulness",
	UsageLine: "faithfulness --model MODEL (--data FILE | --test FILE) [--limit N] [--json]",
	Short:     "measure how faithful each attribution method is on this model (comprehensiveness, sufficiency, AOPC), with intervals and paired tests",
	Long: `Faithfulness removes each text's most important tokens by every attribution
method (and by a random ranking averaged over several draws, as a control) and
measures what the model then does: comprehensiveness and sufficiency (DeYoung
et al. 2020) at several shares of tokens, and the area over the deletion curve
(Samek et al. 2017). Each method ranks the tokens by an identified score (the
exact share or integrated gradients of the log-odds of the predicted label
against the runner-up, or occlusion), ties broken at random. Higher
comprehensiveness and AOPC and lower sufficiency mean a method you can trust
more on this model. Every figure has a 95% bootstrap interval over the texts,
and every two methods are compared text by text: the mean difference with
its bootstrap interval and a sign-flip permutation test of that mean (Good
2005), its p-values adjusted by Holm's method across the comparisons (Holm
1979) and its intervals simultaneous over them, 95% together (Bonferroni).
Removing one token is what occlusion measures, so it is best there by
construction: those removals are reported apart and left out of the
aggregates. The texts are found as eval finds them: --test FILE, or the test
split of the model's own --data, or all of other data.`,
	Options: func() options { return new(faithOptions) },
	Run:     runAs(runFaithfulness),
}

type faithOptions struct {
	model, data, test string
	read              readOptions
	limit             int
	seed              uint64
	threads           threadsOption
	asJSON, quiet     bool
}

func (o *faithOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	registerEvalData(fs, &o.data, &o.test)
	o.read.register(fs, true)
	intVar(fs, &o.limit, "limit", 2000, "score a seeded, stratified sample of at most this many texts (0: all)")
	seedVar(fs, &o.seed, "seed", cnn.DefaultRecipe().Train.Seed, "random seed of the sample and of the random ranking")
	o.threads.register(fs)
	fs.BoolVar(&o.asJSON, "json", false, "print the scores as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "no progress bar, notes or warnings")
}

func (o *faithOptions) check(fs *flag.FlagSet, env *runEnv) error {
	if o.limit < 0 {
		return usagef("--limit %d: 0 (all texts) or more", o.limit)
	}
	for _, err := range []error{requireModel(o.model), requireEvalData(o.data, o.test), o.read.check(), o.threads.check(env.Stderr)} {
		if err != nil {
			return err
		}
	}
	return nil
}

func (o *faithOptions) files() (outputs, inputs []outguard.File) {
	return nil, []outguard.File{{Name: "--model", Path: o.model}, {Name: "--data", Path: o.data}, {Name: "--test", Path: o.test}}
}

func runFaithfulness(ctx context.Context, env *runEnv, o *faithOptions) error {
	m, enc, err := openCNN(o.model)
	if err != nil {
		return err
	}
	es, err := findTestSplit(m, o.data, o.test, &o.read, env.Stderr, o.quiet)
	if err != nil {
		return err
	}
	ds := es.test
	if o.limit > 0 && len(ds.Examples) > o.limit {
		// A seeded, stratified sample, not the first texts of the file.
		ds, _ = ds.Split(1-float64(o.limit)/float64(len(ds.Examples)), o.seed)
	}
	if m, enc, err = m.WithUnseen(enc, ds.Texts()); err != nil { // unseen words' own rows, with --chars
		return err
	}
	data, err := encodeFor(m, enc, ds, o.threads.N)
	if err != nil {
		return err
	}
	bar := newProgressBar(env.Stderr, o.quiet)
	r, err := explain.Faithfulness(ctx, m, data.IDs, data.Labels, explain.FaithOptions{Workers: o.threads.N, Seed: o.seed,
		Progress: func(done, total int) { bar.show(done, total, "scoring attribution methods", false) }})
	bar.done()
	if err != nil {
		return err
	}
	if o.asJSON {
		return writeJSON(env.Stdout, faithOutput{r, es.warnings})
	}
	writeFaith(env.Stdout, r)
	return nil
}

// faithOutput is faithfulness --json: the report's object with, when there
// are any, the warnings on its texts (evalSet.warnings) as "warnings", as
// eval writes them.
type faithOutput struct {
	report   *explain.FaithReport
	warnings []string
}

// MarshalJSON writes the report's own object (explain.FaithReport's
// MarshalJSON) with "warnings" added as its last key.
func (f faithOutput) MarshalJSON() ([]byte, error) {
	b, err := json.Marshal(f.report)
	if err != nil || len(f.warnings) == 0 {
		return b, err
	}
	w, err := json.Marshal(f.warnings)
	if err != nil {
		return nil, err
	}
	b = bytes.TrimSpace(b)
	if len(b) < 2 || b[len(b)-1] != '}' {
		return nil, fmt.Errorf("faithfulness report: not a JSON object")
	}
	sep := `,"warnings":`
	if len(bytes.TrimSpace(b[1:len(b)-1])) == 0 {
		sep = sep[1:]
	}
	out := append(b[:len(b)-1:len(b)-1], sep...)
	return append(append(out, w...), '}'), nil
}

func writeFaith(w io.Writer, r *explain.FaithReport) {
	acc := "no gold labels"
	if r.AccuracyInterval != nil {
		acc = fmt.Sprintf("model accuracy %s, 95%% Wilson interval", r.AccuracyInterval)
	}
	fmt.Fprintf(w, "faithfulness over %d texts (%s); 95%% bootstrap intervals of each method's figures over the texts (%d resamples;\n"+
		"the comparisons' at the end are simultaneous); the random ranking averaged over %d draws\n",
		r.Texts, acc, r.Resamples, r.Draws)
	fmt.Fprintln(w, "higher comprehensiveness and AOPC, lower sufficiency: the more faithful method")
	fmt.Fprintf(w, "\nremovals of two or more tokens (texts: %s)\n", aggregateTexts(r))
	fmt.Fprintf(w, "%-10s  %-26s  %-26s  %s\n", "method", "compr.", "suff.", "AOPC")
	for _, mf := range r.Methods {
		fmt.Fprintf(w, "%-10s  %-26s  %-26s  %s\n", mf.Method, withCI(mf.Comp, mf.CompCI), withCI(mf.Suff, mf.SuffCI), withCI(mf.AOPC, mf.AOPCCI))
	}
	fmt.Fprintf(w, "\nthe top token alone (all texts; occlusion is best here by construction)\n%-10s  %-26s  %s\n", "method", "compr.", "suff.")
	for _, mf := range r.Methods {
		fmt.Fprintf(w, "%-10s  %-26s  %s\n", mf.Method, withCI(mf.Top1Comp, mf.Top1CompCI), withCI(mf.Top1Suff, mf.Top1SuffCI))
	}
	fmt.Fprintf(w, "\nby share of tokens removed (texts where it is one token are left out), with 95%% bootstrap intervals over those texts\n")
	fmt.Fprintf(w, "%-10s  %6s  %6s  %-26s  %s\n", "method", "share", "texts", "compr.", "suff.")
	for _, mf := range r.Methods {
		for pi, pct := range r.Percents {
			fmt.Fprintf(w, "%-10s  %5g%%  %6d  %-26s  %s\n", mf.Method, pct, mf.PercentTexts[pi],
				withCI(mf.Comprehensiveness[pi], mf.ComprehensivenessCI[pi]), withCI(mf.Sufficiency[pi], mf.SufficiencyCI[pi]))
		}
	}
	if i := slices.IndexFunc(r.Pairs, func(pr explain.MethodPair) bool { return pr.Texts > 0 }); i >= 0 {
		fmt.Fprintf(w, "\nmethods compared text by text: mean of A − B with its bootstrap interval over the texts; p of the sign-flip\n"+
			"permutation test of that mean (Good 2005), and Holm p, adjusted by Holm's method across the %d comparisons\n"+
			"with a p (Holm 1979); the intervals are simultaneous over those comparisons, 95%% together (Bonferroni:\n"+
			"each at %.4g%%, from %d resamples)", r.Compared(), 100*r.Pairs[i].DiffCILevel, r.Pairs[i].DiffCIResamples)
		if r.AnyPAtFloor() {
			fmt.Fprintf(w, "; p ≤ %.2g: no sign pattern of the %d drawn\nreached the observed mean",
				1/float64(explain.SignFlipDraws+1), explain.SignFlipDraws)
		}
		fmt.Fprintln(w)
	} else if len(r.Pairs) > 0 {
		fmt.Fprintln(w, "\nmethods compared text by text: no text has a figure of both methods of any pair")
	}
	for _, pr := range r.Pairs {
		p, holm := pEquals(pr.P), pEquals(pr.PHolm)
		if pr.PAtFloor() {
			p, holm = "≤ "+pvalue(pr.P), "≤ "+pvalue(pr.PHolm)
		}
		fmt.Fprintf(w, "%-10s − %-10s %-5s %-26s p %s  Holm p %s  (%d texts)\n", pr.A, pr.B, pr.Measure, withCI(pr.Diff, pr.DiffCI), p, holm, pr.Texts)
	}
}

// aggregateTexts lists each method's texts behind the aggregates (the
// same for all methods but the random control's, which ranks the same
// texts).
func aggregateTexts(r *explain.FaithReport) string {
	parts := make([]string, len(r.Methods))
	for i, mf := range r.Methods {
		parts[i] = fmt.Sprint(mf.AggregateTexts)
	}
	return strings.Join(slices.Compact(parts), ", ")
}

// pEquals is "= p" or "< bound".
func pEquals(p float64) string {
	s := pvalue(p)
	if strings.HasPrefix(s, "<") {
		return s
	}
	return "= " + s
}

// withCI writes a figure and its interval, "–" when there is none.
func withCI(v float64, ci explain.Interval) string {
	if math.IsNaN(v) {
		return "–"
	}
	return fmt.Sprintf("%+.4f (%+.4f–%+.4f)", v, ci.Low, ci.High)
}

// pvalue writes a p-value with two significant digits; one below float64's
// range (the normal tail beyond |z| ≈ 38) is written as a bound.
func pvalue(p float64) string {
	switch {
	case math.IsNaN(p):
		return "–"
	case p == 0:
		return "< 1e-300"
	}
	return fmt.Sprintf("%.2g", p)
}

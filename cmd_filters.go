package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"runtime"
	"slices"
	"strings"
	"sync"
	"sync/atomic"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
	"telltale/internal/inputfile"
	"telltale/internal/outguard"
	"telltale/internal/wording"
	"telltale/report"
)

var cmdFilters = &command{
	Name:      "filters",
	UsageLine: "filters --model MODEL --data FILE [--top K] [--filters 3,17] [--json]",
	Short:     "profile every filter over a corpus: selectivity, top and negative n-grams, families, slot words",
	Long: `Filters runs the model over the texts it was trained on and describes each
filter. When --data is the data the model was trained on (by the split record
in the model file), those are its training split, as in the report; otherwise
all of --data, with a note. Every activation and score is shown in log-odds
units: times the filter's vote scale, the range of its output weights over the
labels, so that it is the most it moves the log-odds between two labels (the
raw activation is not shown: rescaling a filter changes it but no prediction).
For each filter: the class it votes for and by how much at its highest window;
its selectivity threshold, the lowest activation above which its winning
windows come from texts the model assigns that class at least --selectivity of
the way from the class's base rate to all of them (after Jacovi, Sar Shalom and
Goldberg 2018), chosen on one half of the texts and tested on the other half,
which took no part in choosing it (the filter itself was trained on both
halves), with a one-sided exact binomial test, Holm-corrected over the filters
at --alpha (filters that fail are not selective); the n-grams that win its max
pooling most strongly (with the score of every slot); its negative n-grams,
windows whose positive slots would pass the threshold but whose negative slots
hold them below it; the families its windows above the threshold fall into,
chosen on the half that chose the threshold, each with its share measured on
the other half and its stability with a Monte Carlo interval; the words that
switch each slot on (triggers) and off (suppressors); and its activation
histogram (in --json). For a model that records no splits, --data is streamed,
not held, and read twice when a filter's negative n-grams need a second
search. A model with a character layer (train --chars) reads the words outside
its vocabulary from their characters, as eval does, so its texts are held.
Filters are numbered from 0, as in every command; --filters shows only those
listed.`,
	Options: func() options { return new(filtersOptions) },
	Run:     runAs(runFilters),
}

type filtersOptions struct {
	model, data, filters, export string
	read                         readOptions
	top                          int
	selective, alpha             float64
	threads                      threadsOption
	asJSON, quiet                bool

	only []int
}

func (o *filtersOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.model, "model", "", "model file written by train")
	fs.StringVar(&o.data, "data", "", "the labeled data the model was trained on (its training split is profiled; other data: all of it)")
	o.read.register(fs, true)
	intVar(fs, &o.top, "top", 10, "n-grams, negative n-grams and slot words shown per filter (1 or more)")
	fs.StringVar(&o.filters, "filters", "", "show only these filters: indexes from 0, comma-separated (default: all)")
	floatVar(fs, &o.selective, "selectivity", 0.5, "how far from the class's base rate toward all of a filter's windows being of its class the threshold asks, in (0, 1)")
	floatVar(fs, &o.alpha, "alpha", 0.05, "level of the selectivity test, in (0, 1)")
	o.threads.register(fs)
	fs.StringVar(&o.export, "export", "", "also write the top and negative n-grams and the families of every filter to this .csv or .jsonl file")
	fs.BoolVar(&o.asJSON, "json", false, "print the profiles as one JSON object")
	fs.BoolVar(&o.quiet, "quiet", false, "no progress bar or warnings")
}

func (o *filtersOptions) check(fs *flag.FlagSet, env *runEnv) error {
	if !(o.selective > 0 && o.selective < 1) {
		return usagef("--selectivity %g: a share between 0 and 1 (both exclusive)", o.selective)
	}
	if !(o.alpha > 0 && o.alpha < 1) {
		return usagef("--alpha %g: a level between 0 and 1 (both exclusive)", o.alpha)
	}
	var err error
	if o.only, err = filterIndexes(o.filters); err != nil {
		return err
	}
	if o.data == "" {
		return usagef("--data is required: the labeled data the model was trained on, whose training split is profiled")
	}
	for _, err := range []error{requireModel(o.model), checkExport(o.export), checkAtLeast("top", o.top, 1, "n-grams shown per filter"),
		o.read.check(), o.threads.check(env.Stderr)} {
		if err != nil {
			return err
		}
	}
	return nil
}

// source is what filters profiles, as the report does: the training split
// of --data when it is the data the model was trained on (by the model's
// split record, which identifies the data by its examples, wherever the
// file now lies), else all of --data, with a note that says which. Data of
// a model that records no splits is streamed, so only a few texts are held
// at once; the negative n-gram search may read the source again. Total is
// the number of texts, 0 when streamed (not known in advance). The texts
// are read as eval reads them: for a model with a character layer, their
// unseen words have vectors of their own, read by the returned model mu
// (cnn.Model.WithUnseen; m itself otherwise), so such a model's texts are
// held, not streamed.
func (o *filtersOptions) source(ctx context.Context, m *cnn.Model, enc *corpus.Encoder, env *runEnv) (profileSource, error) {
	stream := func() (explain.TextSource, func()) {
		return streamTexts(ctx, o.data, o.read.corpusOptions(false), o.read.example, enc, m.Labels)
	}
	if m.Info.Splits == nil && m.Config.Chars == nil {
		note := "the model file does not record how its splits were made: profiling all texts of " + o.data
		once := inputfile.IsPipe(o.data)
		if once {
			note += " (a pipe, read once: a filter whose negative n-grams need a second reading has them marked inexact; give a file to have every one exact)"
		}
		return profileSource{model: m, open: stream, note: note, once: once}, nil
	}
	all, err := o.read.read(o.data, true, env.Stderr, o.quiet)
	if err != nil {
		return profileSource{}, err
	}
	train, note, isTraining := trainingSplit(m, all, o.data)
	mu, enc, err := m.WithUnseen(enc, train.Texts()) // unseen words' own rows, with --chars, as eval reads them
	if err != nil {
		return profileSource{}, err
	}
	ids, gold := encodeExamples(enc, mu.Labels, train.Examples, o.threads.N)
	open := func() (explain.TextSource, func()) { return explain.SliceSource(ids, gold), func() {} }
	return profileSource{model: mu, open: open, note: note, total: len(ids), training: isTraining}, nil
}

// profileSource is what filters profiles (filtersOptions.source).
type profileSource struct {
	model    *cnn.Model                          // the model that reads the texts (its unseen words' rows, with --chars)
	open     func() (explain.TextSource, func()) // a pass over the texts, and its stop
	note     string                              // which texts, for the user
	total    int                                 // the number of texts; 0 when streamed (not known in advance)
	training bool                                // the texts are the model's training split
	once     bool                                // the texts can be read only once (a pipe): no second pass
}

// profilingNote is the progress line of filters after done of total texts
// (total 0: not known, the texts being streamed).
func profilingNote(done, total int) string {
	if total <= 0 {
		return "profiling filters: " + wording.Texts(done) + " so far"
	}
	return fmt.Sprintf("profiling filters: %d of %s", done, wording.Texts(total))
}

// encodeExamples gives each example's ids (as enc.Encode) and gold class
// (−1 for a label not in labels), the texts split into runs encoded by
// threads goroutines (0: GOMAXPROCS), each run's ids in one array.
func encodeExamples(enc *corpus.Encoder, labels []string, examples []corpus.Example, threads int) ([][]int32, []int) {
	ids, gold := make([][]int32, len(examples)), make([]int, len(examples))
	class := make(map[string]int, len(labels))
	for i, l := range labels {
		class[l] = i
	}
	if threads <= 0 {
		threads = runtime.GOMAXPROCS(0)
	}
	const run = 4096
	var next atomic.Int64
	var wg sync.WaitGroup
	for range threads {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var flat []int32
			for {
				lo := int(next.Add(run)) - run
				if lo >= len(examples) {
					return
				}
				hi := min(lo+run, len(examples))
				// A fresh array a run, so that no text's ids share one
				// that is later reallocated.
				flat = make([]int32, 0, max(cap(flat), 64*(hi-lo)))
				ends := make([]int, 0, hi-lo)
				for _, e := range examples[lo:hi] {
					flat = enc.AppendIDs(flat, e.Text)
					ends = append(ends, len(flat))
				}
				start := 0
				for i, end := range ends {
					ids[lo+i] = flat[start:end:end]
					start = end
				}
				for i, e := range examples[lo:hi] {
					if g, ok := class[e.Label]; ok {
						gold[lo+i] = g
					} else {
						gold[lo+i] = -1
					}
				}
			}
		}()
	}
	wg.Wait()
	return ids, gold
}

func (o *filtersOptions) files() (outputs, inputs []outguard.File) {
	return []outguard.File{{Name: "--export", Path: o.export}},
		[]outguard.File{{Name: "--model", Path: o.model}, {Name: "--data", Path: o.data}}
}

func runFilters(ctx context.Context, env *runEnv, o *filtersOptions) error {
	m, enc, err := openCNN(o.model)
	if err != nil {
		return err
	}
	if nf := m.Config.NumFilters(); len(o.only) > 0 {
		for _, g := range o.only {
			if g >= nf {
				return usagef("--filters %s: the model has filters 0 to %d", clip(o.filters), nf-1)
			}
		}
	}
	src, err := o.source(ctx, m, enc, env)
	if err != nil {
		return err
	}
	m, stream, total := src.model, src.open, src.total
	say(env.Stderr, o.quiet, "%s", src.note)
	next, stop := stream()
	defer stop()
	var stopAgain func()
	defer func() {
		if stopAgain != nil {
			stopAgain()
		}
	}()
	bar := newProgressBar(env.Stderr, o.quiet)
	reopen := func() (explain.TextSource, error) {
		bar.note("reading the texts again for the negative n-grams")
		var again explain.TextSource
		again, stopAgain = stream()
		return again, nil
	}
	if src.once {
		reopen = nil // a pipe's texts are gone after one reading
	}
	prof, err := explain.ProfileStream(ctx, m, next, explain.ProfileOptions{
		TopK: o.top, Negatives: o.top, Selective: o.selective, Alpha: o.alpha, Workers: o.threads.N,
		Reopen: reopen,
		Progress: func(done, _ int) {
			if total > 0 {
				bar.show(done, total, profilingNote(done, total), false)
			} else {
				bar.note(profilingNote(done, 0))
			}
		},
	})
	bar.done()
	if err != nil && ctx.Err() != nil {
		kept := "nothing was printed"
		if o.export != "" {
			kept += " and nothing written to " + o.export
		}
		return interrupted("the filters' profiles were stopped before the texts were all read: " + kept)
	}
	if err != nil {
		return err
	}
	if w := o.read.unknownRelabel(o.data); w != "" && !o.quiet { // streamed: checked now that every text was read
		fmt.Fprintf(env.Stderr, "warning: %s\n", w)
	}
	if len(o.only) > 0 {
		kept := make([]explain.FilterProfile, 0, len(o.only))
		for _, g := range o.only {
			kept = append(kept, prof.Filters[g])
		}
		prof.Filters = kept
	}
	if o.export != "" {
		if err := report.WriteTableFile(o.export, report.ProfileTable(prof)); err != nil {
			return err
		}
	}
	if o.asJSON {
		return writeJSON(env.Stdout, prof)
	}
	return writeProfiles(env.Stdout, prof, o.top, src.training)
}

// writeProfiles writes the profiles for a reader: a header, then every
// filter with at most top n-grams, negative n-grams and slot words;
// training says whether the texts profiled are the training split, which
// trained the filters (both halves of it).
func writeProfiles(w io.Writer, p *explain.Profiles, top int, training bool) error {
	ew := &errWriter{w: w}
	sel, masked := 0, 0
	for i := range p.Filters {
		switch f := &p.Filters[i]; {
		case f.Masked:
			masked++
		case f.Selectivity.Selective:
			sel++
		}
	}
	ew.printf("%s profiled over %s: %d selective, %d not selective", wording.Count(len(p.Filters), "filter", "filters"), wording.Texts(p.Texts), sel, len(p.Filters)-sel-masked)
	if masked > 0 {
		ew.printf(", %d masked", masked)
	}
	ew.printf(".\nA filter's threshold is chosen on %s: above it, its winning windows come from texts assigned its class %.2f of the way\n"+
		"from the class's base rate to all of them. On the other %s, which took no part in choosing the threshold%s,\n"+
		"that share is measured and tested against the base rate (one-sided exact binomial test, Holm-corrected over the filters,\n"+
		"α = %g). Activations and slot scores are in log-odds units: times the filter's vote scale, the range of its output weights\n"+
		"over the labels; a filter votes for its class by how far its highest window raises that class's logit over the next\n"+
		"one's (centred votes: how far it moves each label's centred logit).\n",
		wording.Texts(p.Halves[0]), p.Selective, wording.Texts(p.Halves[1]), map[bool]string{true: " (the filter itself was trained on both halves)"}[training], p.Alpha)
	for i := range p.Filters {
		writeFilter(ew, p, &p.Filters[i], top)
	}
	return ew.err
}

func writeFilter(ew *errWriter, p *explain.Profiles, f *explain.FilterProfile, top int) {
	state := ""
	switch {
	case f.Masked:
		state = "  [masked]"
	case !f.Selectivity.Selective:
		state = "  [not selective]"
	}
	votes := make([]string, len(f.CentredVotesLogOdds))
	for c, v := range f.CentredVotesLogOdds {
		votes[c] = fmt.Sprintf("%s %+.3f", p.Labels[c], v)
	}
	ew.printf("\nfilter %d  width %d  votes %s by %.3f (centred votes: %s)  fired in %d of %s, max %.3f%s\n",
		f.Filter, f.Width, f.Label, f.MarginLogOdds, strings.Join(votes, ", "), f.Fired, wording.Texts(p.Texts), f.MaxLogOdds, state)
	ew.printf("  %s\n", selectivityLine(&f.Selectivity, f.Label))
	if len(f.TopNgrams) > 0 {
		ew.printf("  top n-grams (activation, texts it wins in, slot scores):\n")
	}
	for _, n := range f.TopNgrams[:min(top, len(f.TopNgrams))] {
		ew.printf("    %8.3f  ×%-5d %s\n", n.ActivationLogOdds, n.Count, slotString(n.Tokens, n.SlotsLogOdds, nil))
	}
	writeNegatives(ew, f, top)
	if len(f.Families) > 0 {
		sel := f.Selectivity
		if f.FamilyMeasured == 0 {
			ew.printf("  families (chosen on a sample of %d of the choosing half's %s above the threshold; none of the other half's measured; stability – for one n-gram):\n",
				f.FamilySample, wording.Count(sel.Above-sel.Windows, "window", "windows"))
		} else {
			ew.printf("  families (chosen on a sample of %d of the choosing half's %s above the threshold; share measured on a sample\n"+
				"  of %d of the other half's %s above it, which took no part in choosing them, with its 95%% interval over resampling\n"+
				"  that sample, at least the exact one (Clopper–Pearson in its effective size), the exact one alone where the family\n"+
				"  or the rest holds fewer than 10 of its windows; texts with the same interval; stability on the half that chose the\n"+
				"  families, its interval the Monte Carlo error of 50 resamples, not the sampling error of the texts; – for one n-gram):\n",
				f.FamilySample, wording.Count(sel.Above-sel.Windows, "window", "windows"), f.FamilyMeasured, wording.Count(sel.Windows, "window", "windows"))
		}
	}
	for _, fam := range f.Families {
		stab := "–" // one n-gram: no stability (said in the header)
		if fam.Stability != nil {
			stab = fmt.Sprintf("%.2f (%.2f–%.2f)", *fam.Stability, *fam.StabilityLow, *fam.StabilityHigh)
		}
		if math.IsNaN(fam.Share) {
			ew.printf("    %-36s share –  stability %s  (%s)\n",
				fam.Pattern, stab, wording.Count(fam.Ngrams, "n-gram", "n-grams"))
			continue
		}
		// The count's interval is the share's, over the windows above the
		// threshold (explain.Family).
		ew.printf("    %-36s %5.1f%% (%.1f–%.1f%%)  stability %s  (%s, about %s, %d–%d)\n",
			fam.Pattern, 100*fam.Share, 100*fam.ShareLow, 100*fam.ShareHigh, stab, wording.Count(fam.Ngrams, "n-gram", "n-grams"), wording.Texts(fam.Count),
			fam.CountLow, fam.CountHigh)
	}
	for _, s := range f.Slots {
		ew.printf("  slot %d  on: %s\n          off: %s\n", s.Slot, scoreList(s.Triggers, top), scoreList(s.Suppressors, top))
	}
}

// writeNegatives lists a filter's negative n-grams, the tokens at their
// negative slots in brackets.
func writeNegatives(ew *errWriter, f *explain.FilterProfile, top int) {
	if math.IsInf(f.Selectivity.ThresholdLogOdds, 1) {
		return
	}
	note := ""
	if !f.NegativesExact {
		note = "; the search was incomplete: others may be missing and the counts short"
	}
	if len(f.Negatives) == 0 {
		ew.printf("  no negative n-grams%s\n", note)
		return
	}
	ew.printf("  negative n-grams, kept below the threshold by the [words] at their negative slots (held down by, score without them → with, windows%s):\n", note)
	for _, n := range f.Negatives[:min(top, len(f.Negatives))] {
		ew.printf("    %8.3f  %.3f → %.3f  ×%-5d %s\n", n.HeldDownLogOdds, n.PositiveLogOdds, n.ActivationLogOdds, n.Count,
			slotString(n.Tokens, n.SlotsLogOdds, n.NegativeSlots))
	}
}

// selectivityLine describes a filter's threshold and its test on the half
// of the texts that took no part in choosing it.
func selectivityLine(s *explain.Selectivity, label string) string {
	verdict := "not selective"
	if s.Selective {
		verdict = "selective"
	}
	if math.IsInf(s.ThresholdLogOdds, 0) {
		return fmt.Sprintf("no threshold: no activation reaches purity %.2f for %s on the choosing half: not selective", s.Target, label)
	}
	thr := fmt.Sprintf("%.3f", s.ThresholdLogOdds)
	if !s.ThresholdExact {
		thr = "≈" + thr
	}
	if s.Windows == 0 {
		return fmt.Sprintf("threshold %s (%s above): no window of the other half above it: %s", thr, wording.Count(s.Above, "window", "windows"), verdict)
	}
	return fmt.Sprintf("threshold %s (%s above); on the other half: %d of %d in %s = %.2f (%.2f–%.2f) against a base rate of %.2f, p = %.2g (Holm %.2g): %s",
		thr, wording.Count(s.Above, "window", "windows"), s.InClass, s.Windows, label, s.Purity, s.PurityLow, s.PurityHigh, s.BaseRate, s.P, s.PHolm, verdict)
}

// slotString writes each token with its slot score, those at the slots in
// marked in brackets.
func slotString(tokens []string, slots []float64, marked []int) string {
	parts := make([]string, len(tokens))
	for s, t := range tokens {
		if slices.Contains(marked, s) {
			t = "[" + t + "]"
		}
		parts[s] = fmt.Sprintf("%s(%+.3f)", t, slots[s])
	}
	return strings.Join(parts, " ")
}

func scoreList(ws []explain.WordScore, n int) string {
	if len(ws) == 0 {
		return "-"
	}
	parts := make([]string, 0, min(n, len(ws)))
	for _, x := range ws[:min(n, len(ws))] {
		parts = append(parts, fmt.Sprintf("%s %+.3f", x.Word, x.ScoreLogOdds))
	}
	return strings.Join(parts, ", ")
}

// errWriter keeps the first write error and skips the writes after it.
type errWriter struct {
	w   io.Writer
	err error
}

func (e *errWriter) printf(format string, args ...any) {
	if e.err == nil {
		_, e.err = fmt.Fprintf(e.w, format, args...)
	}
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

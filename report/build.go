package report

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"telltale/audit"
	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
)

// Options control Build. Zero values select the defaults.
type Options struct {
	Title     string    // default "telltale report"
	ModelPath string    // shown in the header
	Generated time.Time // zero: the time Build runs
	HeldOut   string    // name of the held-out split (default "test")
	// HeldOutNote says where the held-out texts come from and whether the
	// model saw them (default: "none of them used for training", true of a
	// separate file).
	HeldOutNote string
	// Warnings say why the held-out texts may not be held-out texts, or not
	// those train evaluated on (a test file that is or holds training
	// texts, one changed since training); shown beside the figures.
	Warnings []string
	// Dev is the model's dev split, shown in the Data section beside the
	// training and held-out splits (its leaks counted with theirs); nil or
	// empty when it is not known.
	Dev *corpus.Dataset
	// Examples is the number of explained examples of each kind (default 2).
	Examples int
	// FiltersPerClass is how many filters of each class the catalogue shows
	// (default 3).
	FiltersPerClass int
	// Profile controls the filter profiles over the training split; its
	// Progress is set by Build.
	Profile explain.ProfileOptions
	// Audit controls the cue audit (its ModelFile, when empty, is
	// ModelPath and its Workers, when zero, Threads); SkipAudit leaves the
	// audit out.
	Audit     audit.Options
	SkipAudit bool
	// Threads is the number of goroutines (0: GOMAXPROCS).
	Threads int
}

// Progress is called during Build with the stage ("summary", "evaluate",
// "profile", "audit …" with the audit's own stage, "explain"), the items done and the total. It may be called from
// several goroutines and should return quickly.
type Progress func(stage string, done, total int)

// Build computes every piece of the report with the cnn, corpus and explain
// packages and lays them out: the summary of train and heldout, the metrics
// and reliability bins of m on heldout (beside those of the linear baseline
// m carries, if any), the filter profiles over train and explained held-out
// examples. Train is the split m was trained on and
// heldout one it was not trained on (both required, with labels m knows).
// The model must carry its vocabulary. Progress may be nil. Build returns
// ctx.Err() when ctx is cancelled.
func Build(ctx context.Context, m *cnn.Model, train, heldout *corpus.Dataset, opt Options, progress Progress) (*Report, error) {
	in, err := Gather(ctx, m, train, heldout, opt, progress)
	if err != nil {
		return nil, err
	}
	return New(in)
}

// Gather computes the pieces Build lays out and returns them as an Input,
// for callers that want to add to them or replace some before New.
func Gather(ctx context.Context, m *cnn.Model, train, heldout *corpus.Dataset, opt Options, progress Progress) (Input, error) {
	if err := checkGather(m, train, heldout); err != nil {
		return Input{}, err
	}
	if progress == nil {
		progress = func(string, int, int) {}
	}
	in := Input{Title: opt.Title, ModelPath: opt.ModelPath, Generated: opt.Generated, Model: m,
		HeldOut: cmp.Or(opt.HeldOut, "test"), HeldOutNote: cmp.Or(opt.HeldOutNote, "none of them used for training"), Warnings: opt.Warnings, ProfiledOn: "the training split", FiltersPerClass: opt.FiltersPerClass}
	if in.Generated.IsZero() {
		in.Generated = time.Now()
	}
	tok, err := corpus.NewTokenizer(m.Tokenizer)
	if err != nil {
		return Input{}, fmt.Errorf("report: the model's tokenizer: %w", err)
	}

	progress("summary", 0, 1)
	var dev *corpus.Dataset
	if opt.Dev != nil && len(opt.Dev.Examples) > 0 {
		dev = opt.Dev
	}
	sum := corpus.SummarizeThree(train, dev, heldout, tok)
	in.Summary = &sum
	progress("summary", 1, 1)
	if err := ctx.Err(); err != nil {
		return Input{}, err
	}

	// Both splits as the model reads them: tokens, ids and gold labels.
	tr, err := audit.NewData(m, train, opt.Threads)
	if err != nil {
		return Input{}, fmt.Errorf("report: training split: %w", err)
	}
	ho, err := audit.NewData(m, heldout, opt.Threads)
	if err != nil {
		return Input{}, fmt.Errorf("report: test split: %w", err)
	}

	// The held-out split as telltale eval and predict read it: with a
	// character layer, its unseen words have vectors of their own
	// (cnn.Model.WithUnseen); the evaluation, the audit and the explained
	// texts use that reading (audit.NewHeldout reads it so too).
	read, hoRead, err := unseenReading(m, heldout, ho, opt.Threads)
	if err != nil {
		return Input{}, err
	}
	progress("evaluate", 0, len(ho.IDs))
	pred, conf, err := evaluate(&in, read, heldout, &hoRead, opt.Threads)
	if err != nil {
		return Input{}, err
	}
	progress("evaluate", len(ho.IDs), len(ho.IDs))
	if err := ctx.Err(); err != nil {
		return Input{}, err
	}

	if in.Profiles, err = profileTraining(ctx, m, train, tr, opt, progress); err != nil {
		return Input{}, err
	}

	if !opt.SkipAudit {
		if in.Audit, in.AuditNote, err = runAudit(ctx, read, tr, hoRead, opt, progress); err != nil {
			return Input{}, err
		}
	}

	if err := explainExamples(ctx, &in, read, heldout, hoRead, pred, conf, opt.Examples, progress); err != nil {
		return Input{}, err
	}
	return in, nil
}

// profileTraining profiles m's filters on the training split train (tr, as
// audit.NewData reads it) as telltale filters does: with a character layer,
// a word the vocabulary lacks (under the minimum count) has a vector of its
// own, unless opt.Profile gives a table of its own.
func profileTraining(ctx context.Context, m *cnn.Model, train *corpus.Dataset, tr audit.Data, opt Options, progress Progress) (*explain.Profiles, error) {
	popt := opt.Profile
	popt.Progress = func(done, total int) { progress("profile", done, total) }
	pm, trRead := m, tr
	if popt.Table == nil {
		var err error
		if pm, trRead, err = unseenReading(m, train, tr, opt.Threads); err != nil {
			return nil, err
		}
	}
	return explain.Profile(ctx, pm, trRead.IDs, trRead.Gold, popt)
}

// checkGather refuses a missing model, an empty split and a model without
// its vocabulary, before any work starts.
func checkGather(m *cnn.Model, train, heldout *corpus.Dataset) error {
	if m == nil {
		return ErrNoModel
	}
	if train == nil || len(train.Examples) == 0 {
		return fmt.Errorf("report: no training examples: the report profiles filters on the split the model was trained on")
	}
	if heldout == nil || len(heldout.Examples) == 0 {
		return fmt.Errorf("report: no test examples: give a split the model was not trained on (e.g. --test FILE)")
	}
	if len(m.Vocab) != m.Config.VocabSize {
		return fmt.Errorf("report: the model holds %d vocabulary words for %d embedding rows: it cannot read text", len(m.Vocab), m.Config.VocabSize)
	}
	return nil
}

// unseenReading is m as it reads heldout (any split) and heldout so read:
// for a model with a character layer, the model whose vocabulary also
// holds the split's unseen words (cnn.Model.WithUnseen) and the split
// encoded by it; otherwise m and ho (heldout as m reads it) themselves.
func unseenReading(m *cnn.Model, heldout *corpus.Dataset, ho audit.Data, threads int) (*cnn.Model, audit.Data, error) {
	mu, _, err := m.WithUnseen(nil, heldout.Texts())
	if err != nil {
		return nil, audit.Data{}, fmt.Errorf("report: the unseen words of a split: %w", err)
	}
	if mu == m {
		return m, ho, nil
	}
	hoU, err := audit.NewData(mu, heldout, threads)
	if err != nil {
		return nil, audit.Data{}, fmt.Errorf("report: a split read with its unseen words: %w", err)
	}
	return mu, hoU, nil
}

// evaluate runs m (in.Model, or the model that reads the split's unseen
// words, unseenReading) on the held-out split (heldout, and ho, the same
// split as m reads it) and fills in.Metrics, in.Reliability and, for a
// model with a linear baseline, in.Baseline. It returns each text's
// predicted class (the first of equally likely ones) and its probability.
func evaluate(in *Input, m *cnn.Model, heldout *corpus.Dataset, ho *audit.Data, threads int) (pred []int, conf []float64, err error) {
	probs := m.Probabilities(ho.IDs, threads)
	pred = make([]int, len(probs))
	conf = make([]float64, len(probs))
	correct := make([]bool, len(probs))
	for i, p := range probs {
		for c, v := range p {
			if v > p[pred[i]] {
				pred[i] = c
			}
		}
		conf[i] = float64(p[pred[i]])
		correct[i] = pred[i] == ho.Gold[i]
	}
	mt := cnn.ComputeMetrics(m.Labels, ho.Gold, pred, conf, cnn.DefaultBins)
	in.Metrics = &mt
	in.Reliability = cnn.Reliability(conf, correct, cnn.DefaultBins)
	if m.Baseline != nil {
		if in.Baseline, err = cnn.CompareBaseline(m, heldout, threads); err != nil {
			return nil, nil, fmt.Errorf("report: the linear baseline on the test split: %w", err)
		}
	}
	return pred, conf, nil
}

// auditMinHalf is the fewest test texts each half of the cue audit's test
// split must have (audit.Options.MinHalf), unless the options set it.
const auditMinHalf = 30

// runAudit runs the cue audit for the report. On a test split too small for
// its tests, or data the audit cannot test for another reason of size
// (audit.ErrInput), the report is still made: the audit is left out and
// the note says why and what to do.
func runAudit(ctx context.Context, m *cnn.Model, tr, ho audit.Data, opt Options, progress Progress) (*audit.Result, string, error) {
	aopt := opt.Audit
	aopt.ModelFile = cmp.Or(aopt.ModelFile, opt.ModelPath)
	aopt.Workers = cmp.Or(aopt.Workers, opt.Threads)
	aopt.MinHalf = cmp.Or(aopt.MinHalf, auditMinHalf)
	fix := "give a larger test file"
	if aopt.HeldoutShare {
		fix = "train the model again with a larger share of the data as its test split, or give a larger test file"
	}
	if ho.Len() < 2*aopt.MinHalf {
		return nil, fmt.Sprintf("The cue audit needs at least %s test texts (%d in each of its two halves); this split has %s: %s.",
			count(2*aopt.MinHalf), aopt.MinHalf, count(ho.Len()), fix), nil
	}
	aud, err := audit.Run(ctx, m, tr, ho, aopt, func(stage string, done, total int) { progress("audit "+stage, done, total) })
	switch {
	case errors.Is(err, audit.ErrInput):
		return nil, fmt.Sprintf("The cue audit could not run on this data: %s.", strings.TrimPrefix(err.Error(), "audit: ")), nil
	case err != nil:
		return nil, "", fmt.Errorf("report: cue audit: %w", err)
	}
	return aud, "", nil
}

// explainExamples explains with m (in.Model, or the model that reads the
// split's unseen words, unseenReading) the chosen held-out texts of ho
// (heldout as m reads it, pred and conf its predictions): n (default 2)
// correct, wrong and cue-conflicting ones each.
func explainExamples(ctx context.Context, in *Input, m *cnn.Model, heldout *corpus.Dataset, ho audit.Data, pred []int, conf []float64, n int,
	progress Progress) error {
	if n <= 0 {
		n = 2
	}
	picks := pickExamples(ho.Gold, pred, conf, n)
	if in.Audit != nil {
		picks = append(picks, conflictPicks(in.Audit, n)...)
		if len(picks) == 0 || picks[len(picks)-1].kind != KindCueConflict {
			in.ExamplesNote = "The cue audit acted on no cue whose replacement changed the label of a confirming text whose gold label is another, so no cue-conflicting text is shown."
		}
	} else {
		in.ExamplesNote = "Cue-conflicting examples (texts holding a cue the audit acted on that points to another label than the gold one) come from the cue audit, which was not run for this report."
	}
	for i, pk := range picks {
		if err := ctx.Err(); err != nil {
			return err
		}
		progress("explain", i, len(picks))
		e, err := explain.Explain(m, ho.Tokens[pk.index], ho.IDs[pk.index], explain.ExplainOptions{Profiles: in.Profiles, Occlusion: true, KeptDown: 3})
		if err != nil {
			return fmt.Errorf("report: explaining %s: %w", heldout.Where(heldout.Examples[pk.index]), err)
		}
		note := where(heldout, pk.index)
		if pk.note != "" {
			note = pk.note + "; " + note
		}
		in.Examples = append(in.Examples, Example{Kind: pk.kind, Text: ho.Texts[pk.index], Gold: in.Model.Labels[ho.Gold[pk.index]],
			Note: note, Explanation: e})
	}
	progress("explain", len(picks), len(picks))
	return nil
}

// where names a held-out example by file base name and line; a file
// whose name is a number alone (/dev/fd/63, a shell's <(…)) by its whole
// path, which says what it is.
func where(d *corpus.Dataset, i int) string {
	e := d.Examples[i]
	if e.File != "" {
		return e.File
	}
	name := filepath.Base(d.Path)
	if strings.Trim(name, "0123456789") == "" {
		name = d.Path
	}
	return fmt.Sprintf("%s line %d", name, e.Line)
}

type pick struct {
	kind  ExampleKind
	index int
	note  string
}

// pickExamples chooses up to n correct texts (the first of each gold label
// in split order, so that several labels are shown) and the n wrong texts
// the model was most confident about (ties: split order).
func pickExamples(gold, pred []int, conf []float64, n int) []pick {
	var out []pick
	seen := map[int]bool{}
	for i := range gold {
		if len(seen) == n {
			break
		}
		if gold[i] == pred[i] && !seen[gold[i]] {
			seen[gold[i]] = true
			out = append(out, pick{kind: KindCorrect, index: i})
		}
	}
	var wrong []int
	for i := range gold {
		if gold[i] != pred[i] {
			wrong = append(wrong, i)
		}
	}
	slices.SortStableFunc(wrong, func(a, b int) int { return cmp.Compare(conf[b], conf[a]) })
	for _, i := range wrong[:min(n, len(wrong))] {
		out = append(out, pick{kind: KindWrong, index: i})
	}
	return out
}

// conflictPicks takes up to n cue-conflicting held-out texts from the
// audit: texts of the confirming half holding a cue it acted on, whose gold
// label is not the cue's and whose label changed when the cue was replaced
// (the audit's quoted examples), the first cue first.
func conflictPicks(r *audit.Result, n int) []pick {
	var out []pick
	seen := map[int]bool{}
	for _, c := range r.Ranked {
		if c.Verdict != audit.VerdictActed || c.Confirmed == nil {
			continue
		}
		for _, e := range c.Confirmed.Examples {
			if len(out) < n && !seen[e.Index] && e.Gold != c.Label {
				seen[e.Index] = true
				out = append(out, pick{kind: KindCueConflict, index: e.Index,
					note: fmt.Sprintf("holds %s, which points to %s; with it replaced the model says %s", cueName(&c), c.Label, e.After)})
			}
		}
	}
	return out
}

package audit

import (
	"context"
	"fmt"
	"slices"

	"telltale/cnn"
	"telltale/corpus"
)

// Retrained compares the audited model with a model retrained without the
// acted-on cues, on the confirmation half of the held-out split (which took
// no part in choosing the cues) as it is and on its counterfactual (the
// same texts with the cues taken out by the same patterns). Every accuracy
// carries its 95% Wilson interval; the P fields are two-sided exact
// McNemar tests of the two models' paired predictions on each.
type Retrained struct {
	Patterns []string `json:"patterns"`
	// RecipeMask are the patterns the model's recipe took out of the
	// training text already (cnn.TrainConfig.MaskTokens: train
	// --mask-tokens), which the retraining takes out too; the retrained
	// model records both, these first.
	RecipeMask []string `json:"recipe_mask_tokens,omitempty"`
	// Removed is how many matches the patterns took out of the training
	// split beyond the recipe's own (cueMatches: those RecipeMask took out
	// first are not counted again), HeldoutRemoved out of the texts
	// compared.
	Removed        int `json:"removed"`
	HeldoutRemoved int `json:"heldout_removed"`
	// Texts are the texts compared: the confirmation half's.
	Texts int `json:"texts"`
	// Original and Counterfactual are the texts compared as they are and
	// without the cues; Before is the audited model, After the retrained.
	Original       ModelPair `json:"original"`
	Counterfactual ModelPair `json:"counterfactual"`
	// Model is the retrained model (not in the JSON; the caller saves it).
	Model *cnn.Model `json:"-"`
}

// ModelPair is the two models on one split.
type ModelPair struct {
	Before Interval `json:"before"`
	After  Interval `json:"after"`
	// OnlyBefore and OnlyAfter count the texts only one model gets right.
	OnlyBefore int     `json:"only_before"`
	OnlyAfter  int     `json:"only_after"`
	P          float64 `json:"p"`
}

// RetrainAlpha is the level at which the two-sided exact McNemar test of a
// ModelPair tells the two models' accuracies apart (Direction): 5%, the
// level of the accuracies' 95% intervals shown beside it (common
// practice, no source).
const RetrainAlpha = 0.05

// Direction is how the retrained model's accuracy (ModelPair.After)
// compares with the audited model's (Before) on the same texts.
type Direction int

const (
	// NotClearlyDifferent: the test does not tell them apart at the level
	// asked; never to be read as a gain or a loss.
	NotClearlyDifferent Direction = iota
	// Lower: the retrained model gets fewer of the texts right.
	Lower
	// Higher: the retrained model gets more of the texts right.
	Higher
)

// String names d as the window and the command line read it.
func (d Direction) String() string {
	switch d {
	case Lower:
		return "lower"
	case Higher:
		return "higher"
	}
	return "not clearly different"
}

// Direction says whether the retrained model's accuracy on p's texts is
// lower or higher than the audited model's by the two-sided exact McNemar
// test (P) below alpha, or not clearly different (P at alpha or above).
// On paired texts the accuracies differ by (OnlyAfter − OnlyBefore) / texts,
// so the discordant counts give the direction; equal counts (P = 1) are
// never a difference.
func (p ModelPair) Direction(alpha float64) Direction {
	switch {
	case !(p.P < alpha) || p.OnlyAfter == p.OnlyBefore: // a NaN p is no difference either
		return NotClearlyDifferent
	case p.OnlyAfter > p.OnlyBefore:
		return Higher
	}
	return Lower
}

// Retrain takes the patterns (Action.Patterns, or Marks.Patterns) out of
// the training texts (corpus.MaskTokens), trains a model on them with
// recipe r (cnn.TrainText, which takes the patterns r records already,
// r.Train.MaskTokens, and the cues' after them out of the training texts
// and of dev, which may be nil and serves early stopping, as every
// retraining of the recipe does; the retrained model records them) and
// compares it with m on the texts of heldout at the indexes scored, as
// they are and without the cues. scored are the audit's confirmation half
// (Result.Confirmation, indexes of the heldout it was given), which took
// no part in choosing the cues: the
// selection half chose them, and a comparison there would favour the
// model that never saw them. Nil scored compares on every text of heldout,
// for a held-out split that took no part in the audit. Nothing is written.
// Progress may be nil.
//
// When m carries a linear baseline and r asks for none (a recipe rebuilt
// from a model file, whose record keeps the baseline's configuration in the
// baseline itself), the retrained model gets one too, with m's baseline
// configuration, fitted on the same masked training text: so it is shown
// beside a baseline wherever m is.
func Retrain(ctx context.Context, m *cnn.Model, patterns []string, train, dev, heldout *corpus.Dataset, scored []int, r cnn.Recipe,
	progress func(cnn.Progress)) (*Retrained, error) {
	if len(patterns) == 0 {
		return nil, inputErrorf("audit: no cue to retrain without: the audit acted on none, and no cue is marked as artifact")
	}
	if r.Baseline == nil && m.Baseline != nil {
		cfg := m.Baseline.Config
		cfg.Cs = slices.Clone(cfg.Cs)
		cfg.Solver.Threads = 0 // the recipe's threads
		r.Baseline = &cfg
	}
	cm, err := corpus.MaskTokens(patterns)
	if err != nil {
		return nil, err
	}
	if heldout, err = pick(heldout, scored); err != nil {
		return nil, err
	}
	out := &Retrained{Patterns: patterns, RecipeMask: r.Train.MaskTokens}
	if out.Removed, err = cueMatches(train, r.Train.MaskTokens, patterns); err != nil {
		return nil, err
	}
	r.Train.MaskTokens = JoinPatterns(r.Train.MaskTokens, patterns)
	mask := func(d *corpus.Dataset) (*corpus.Dataset, int) {
		if d == nil {
			return nil, 0
		}
		n := 0
		return d.MapTexts(func(s string) string {
			s, k := cm.Mask(s)
			n += k
			return s
		}), n
	}
	cf, n := mask(heldout)
	out.HeldoutRemoved = n
	tr, err := cnn.TrainText(ctx, train, dev, r, progress)
	if err != nil {
		return nil, err
	}
	out.Model = tr.Model
	out.Texts = len(heldout.Examples)
	for _, c := range []struct {
		d  *corpus.Dataset
		to *ModelPair
	}{{heldout, &out.Original}, {cf, &out.Counterfactual}} {
		before, gold, err := predict(m, c.d)
		if err != nil {
			return nil, err
		}
		after, _, err := predict(tr.Model, c.d)
		if err != nil {
			return nil, err
		}
		*c.to = pair(before, after, gold)
	}
	return out, nil
}

// cueMatches counts the matches the cues take out of train's texts as
// training takes them out (cnn.TrainText, with JoinPatterns(recipe,
// cues)): after the recipe's own patterns, by the cues not among them, so
// that a cue that overlaps a recipe pattern counts only what is left of it
// to take out. train is not changed.
func cueMatches(train *corpus.Dataset, recipe, cues []string) (int, error) {
	if train == nil {
		return 0, nil
	}
	rm, err := corpus.MaskTokens(recipe)
	if err != nil {
		return 0, err
	}
	cm, err := corpus.MaskTokens(JoinPatterns(recipe, cues)[len(recipe):])
	if err != nil {
		return 0, err
	}
	n := 0
	for _, e := range train.Examples {
		s, _ := rm.Mask(e.Text)
		_, k := cm.Mask(s)
		n += k
	}
	return n, nil
}

// JoinPatterns is a followed by the patterns of b not in a, a new slice:
// the one order of a retrained model's mask, the recipe's own patterns
// (a) then the cues (b), that audit --retrain records and the story's
// train --mask-tokens line writes.
func JoinPatterns(a, b []string) []string {
	out := slices.Clone(a)
	for _, p := range b {
		if !slices.Contains(out, p) {
			out = append(out, p)
		}
	}
	return out
}

// pick is the texts of d at the indexes idx, in their order (d itself for
// nil idx); an index out of d is an error (idx is not of d).
func pick(d *corpus.Dataset, idx []int) (*corpus.Dataset, error) {
	if idx == nil {
		return d, nil
	}
	out := &corpus.Dataset{Path: d.Path, Labels: d.Labels, Examples: make([]corpus.Example, len(idx))}
	for k, i := range idx {
		if i < 0 || i >= len(d.Examples) {
			return nil, fmt.Errorf("audit: text %d to compare on is not in %s, which has %d: give the held-out split the audit read", i, d.Path, len(d.Examples))
		}
		out.Examples[k] = d.Examples[i]
	}
	return out, nil
}

// predict runs m on the texts of d with m's own encoder.
func predict(m *cnn.Model, d *corpus.Dataset) (pred, gold []int, err error) {
	enc, err := m.Encoder()
	if err != nil {
		return nil, nil, err
	}
	data, err := cnn.EncodeDataset(enc, d, m.Labels, 0)
	if err != nil {
		return nil, nil, err
	}
	_, pred, err = cnn.Evaluate(m, data, 0)
	return pred, data.Labels, err
}

func pair(before, after, gold []int) ModelPair {
	var p ModelPair
	var rb, ra int
	for i, g := range gold {
		b, a := before[i] == g, after[i] == g
		if b {
			rb++
		}
		if a {
			ra++
		}
		switch {
		case b && !a:
			p.OnlyBefore++
		case a && !b:
			p.OnlyAfter++
		}
	}
	p.Before, p.After = wilsonInterval(rb, len(gold)), wilsonInterval(ra, len(gold))
	p.P = min(1, 2*min(SignTest(p.OnlyBefore, p.OnlyAfter), SignTest(p.OnlyAfter, p.OnlyBefore)))
	return p
}

package audit

import (
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"

	"telltale/cnn"
)

// Action is what the audit suggests, for the cues it acts on (the Ranked
// cues with VerdictActed). It holds without a shift between the splits:
// the counterfactual split tells what the model scores where the cues are
// absent, retraining without them (Patterns, for corpus.MaskTokens and
// telltale train --mask-tokens) removes them from what the model learns,
// and a filter mask is suggested only when it helps on the confirmation
// half, which took no part in choosing it.
type Action struct {
	// Cues are the Text of each cue acted on; Patterns take them out of
	// raw text, one regular expression each.
	Cues     []string `json:"cues"`
	Patterns []string `json:"patterns"`
	// Counterfactual is the confirmation half with the cues taken out.
	Counterfactual *Counterfactual `json:"counterfactual,omitempty"`
	// Mask is the suggested filter mask (nil when none helps); Tried is the
	// mask chosen on the selection half and tested on the confirmation
	// half, suggested or not. On a model with the word-weight path the
	// mask also reads the cues' words as the unknown word by that path:
	// MaskWords are those words when the mask is suggested (Tried.Words
	// when tested), and Remedy writes the model with both. A cue no filter
	// reads but the word weights carry adds its words alone, so a mask may
	// be words only: Mask is then empty but not nil (absent in JSON), and
	// Suggested tells whether a mask is suggested.
	Mask      []int     `json:"mask,omitempty"`
	MaskWords []string  `json:"mask_words,omitempty"`
	Tried     *Ablation `json:"mask_tried,omitempty"`
	// Commands are the command lines that retrain without the cues
	// (Options.RetrainCommands; nil without it, or with RetrainedModel).
	// The story shows them.
	Commands []string `json:"-"`
	// RetrainedModel is Options.RetrainedModel, the file the model
	// retrained without the cues goes to; the story names it.
	RetrainedModel string `json:"-"`
	// Marked are the cues marked artifact (Options.Marks) that the audit
	// does not act on, as their words, and MarkedPatterns their patterns
	// (Marks.Patterns): retraining without the cues (telltale audit
	// --retrain, the window's Retrain) takes these out beside Patterns, so
	// the story says it does.
	Marked         []string `json:"marked_cues,omitempty"`
	MarkedPatterns []string `json:"marked_patterns,omitempty"`
	// RecipeMask are the patterns the model's recipe takes out of the
	// training text already (cnn.TrainConfig.MaskTokens, train
	// --mask-tokens): retraining the recipe takes them out too, and the
	// story says so.
	RecipeMask []string `json:"recipe_mask_tokens,omitempty"`
}

// Counterfactual is the model on the confirmation half as it is and with
// the acted-on cues' tokens deleted from every text. Accuracies carry 95%
// Wilson intervals; P is the two-sided exact McNemar test (twice the
// smaller one-sided tail, capped at 1) of the predictions the deletion
// fixes against those it breaks.
type Counterfactual struct {
	Texts           int      `json:"texts"`
	CueTexts        int      `json:"cue_texts"`
	Accuracy        Interval `json:"accuracy"`
	AccuracyWithout Interval `json:"accuracy_without"`
	// The same on the texts holding a cue.
	CueAccuracy        Interval `json:"cue_accuracy"`
	CueAccuracyWithout Interval `json:"cue_accuracy_without"`
	Changed            int      `json:"changed"`
	Fixed              int      `json:"fixed"`
	Broken             int      `json:"broken"`
	P                  float64  `json:"p"`
}

func wilsonInterval(k, n int) Interval {
	lo, hi := Wilson(k, n, 0.95)
	return Interval{Estimate: float64(k) / float64(max(1, n)), Low: lo, High: hi, Method: cnn.MethodWilson}
}

// act builds the action from the acted-on cues.
func (a *auditor) act(ctx context.Context, res *Result) error {
	a.progress("action", 0, 1)
	var acted []*Candidate
	for k := range res.Ranked {
		if c := &res.Ranked[k]; c.Verdict == VerdictActed {
			acted = append(acted, c)
			res.Action.Cues = append(res.Action.Cues, c.Text)
			res.Action.Patterns = append(res.Action.Patterns, c.Pattern)
		}
	}
	for _, ws := range a.opt.Marks.Cues(MarkArtifact) {
		if pat := pattern(ws); !slices.Contains(res.Action.Patterns, pat) {
			res.Action.Marked = append(res.Action.Marked, strings.Join(ws, " "))
			res.Action.MarkedPatterns = append(res.Action.MarkedPatterns, pat)
		}
	}
	res.Action.RetrainedModel = a.opt.RetrainedModel
	if len(acted) == 0 {
		a.progress("action", 1, 1)
		return nil
	}
	cf, err := a.counterfactual(ctx, acted)
	if err != nil {
		return err
	}
	res.Action.Counterfactual = cf
	res.Action.Tried, res.Action.Mask = a.mask(acted)
	if res.Action.Mask != nil {
		res.Action.MaskWords = res.Action.Tried.Words
	}
	if r := a.m.Info.Recipe; r != nil {
		res.Action.RecipeMask = r.MaskTokens
	}
	if a.opt.RetrainCommands != nil && a.opt.RetrainedModel == "" {
		res.Action.Commands = a.opt.RetrainCommands(res.Action.Patterns)
	}
	a.progress("action", 1, 1)
	return nil
}

// counterfactual measures the confirmation half with every occurrence of
// the acted-on cues deleted.
func (a *auditor) counterfactual(ctx context.Context, acted []*Candidate) (*Counterfactual, error) {
	// The counterfactual split: every occurrence of an acted-on cue deleted.
	drop := map[int][]span{}
	for _, c := range acted {
		for _, s := range c.confOcc {
			drop[int(s.text)] = append(drop[int(s.text)], s)
		}
	}
	idx := make([]int, 0, len(drop))
	for i := range drop {
		idx = append(idx, i)
	}
	slices.Sort(idx)
	order := make([][]int32, len(idx))
	want := make([]int, len(idx))
	for k, i := range idx {
		spans := drop[i]
		ids := make([]int32, 0, len(a.conf.IDs[i]))
		for j, id := range a.conf.IDs[i] {
			if !slices.ContainsFunc(spans, func(s span) bool { return int(s.start) <= j && j < int(s.end) }) {
				ids = append(ids, id)
			}
		}
		order[k], want[k] = ids, a.confBase.pred[i]
	}
	out, err := runAll(ctx, a.st, order, want, 0, a.opt.Workers)
	if err != nil {
		return nil, err
	}
	after := slices.Clone(a.confBase.pred)
	for k, i := range idx {
		after[i] = out[k].pred
	}
	cf := &Counterfactual{Texts: a.conf.Len(), CueTexts: len(idx)}
	var right, rightWithout, cueRight, cueWithout int
	isCue := map[int]bool{}
	for _, i := range idx {
		isCue[i] = true
	}
	for i, g := range a.conf.Gold {
		b, w := a.confBase.pred[i] == g, after[i] == g
		if b {
			right++
		}
		if w {
			rightWithout++
		}
		if isCue[i] {
			if b {
				cueRight++
			}
			if w {
				cueWithout++
			}
		}
		if after[i] != a.confBase.pred[i] {
			cf.Changed++
			switch {
			case w && !b:
				cf.Fixed++
			case b && !w:
				cf.Broken++
			}
		}
	}
	cf.Accuracy, cf.AccuracyWithout = wilsonInterval(right, cf.Texts), wilsonInterval(rightWithout, cf.Texts)
	cf.CueAccuracy, cf.CueAccuracyWithout = wilsonInterval(cueRight, cf.CueTexts), wilsonInterval(cueWithout, cf.CueTexts)
	cf.P = mcNemarTwoSided(cf.Fixed, cf.Broken)
	return cf, nil
}

// mcNemarTwoSided is the two-sided exact McNemar test of the paired
// predictions an edit fixes against those it breaks: twice the smaller
// one-sided tail of SignTest, capped at 1.
func mcNemarTwoSided(fixed, broken int) float64 {
	return min(1, 2*min(SignTest(fixed, broken), SignTest(broken, fixed)))
}

// mask is each acted-on cue's best prefix of keyed filters on the
// selection half (with the cue's words read as the unknown word by the
// word-weight path, on a model with one), tested together on the
// confirmation half: the test, and the mask when it helps there
// (one-sided exact McNemar p < 0.05). A cue no filter is keyed on whose
// words carry it in the word weights (wordsCarry) adds its words alone,
// when reading them as the unknown word beats the model on the selection
// half; a mask of such words only is an empty, non-nil filter list.
func (a *auditor) mask(acted []*Candidate) (*Ablation, []int) {
	mask := []int{}
	var words []int32
	for _, c := range acted {
		if c.Filters == nil {
			continue
		}
		cw := a.cueWords(c)
		if len(c.Filters.Keyed) == 0 && !a.wordsCarry(c, cw) {
			continue
		}
		if pre, better := bestPrefix(a.m, a.selBase, a.sel.Gold, c.Filters.Keyed, cw); better {
			mask = append(mask, pre...)
			for _, id := range cw {
				if !slices.Contains(words, id) {
					words = append(words, id)
				}
			}
		}
	}
	slices.Sort(mask)
	mask = slices.Compact(mask)
	if len(mask) == 0 && len(words) == 0 {
		return nil, nil
	}
	var cue []int
	for _, c := range acted {
		cue = append(cue, texts(c.confOcc)...)
	}
	slices.Sort(cue)
	t := ablate(a.m, a.confBase, a.conf.Gold, mask, words, slices.Compact(cue))
	if t.P < 0.05 && t.AccuracyMasked > t.Accuracy {
		return t, mask
	}
	return t, nil
}

// wordsCarry reports whether the word weights carry cue c by its words ws
// (cueWords) on the selection half, which took no part in confirming it:
// the 95% interval of their word part of the centred logit of c's label
// (as Filters.WordPart, over the selection half's texts holding c) lies
// above 0. A part below 0 pushes away from the label: reading those words
// as the unknown word would not take the cue out.
func (a *auditor) wordsCarry(c *Candidate, ws []int32) bool {
	if len(ws) == 0 {
		return false
	}
	return a.wordPartOn(a.sel, c.selOcc, c, ws, "word part/selection "+c.Text).Low > 0
}

// Suggested reports whether a mask is suggested: filters (Mask), words
// read as the unknown word by the word-weight path (MaskWords), or both.
// In JSON a mask of words only has mask_words and no mask.
func (act *Action) Suggested() bool {
	return act.Mask != nil || len(act.MaskWords) > 0
}

// Remedy returns a copy of m, the audited model, with the suggested mask:
// the filters of Mask masked and the words of MaskWords read as the
// unknown word by the word-weight path (cnn.Model.MaskedWordsCopy). It is
// an error when no mask is suggested or a word is not in m's vocabulary
// (m is not the model audited).
func (act *Action) Remedy(m *cnn.Model) (*cnn.Model, error) {
	if !act.Suggested() {
		return nil, errors.New("audit: no mask is suggested")
	}
	ids := make([]int32, 0, len(act.MaskWords))
	for _, w := range act.MaskWords {
		id := slices.Index(m.Vocab[min(len(m.Vocab), 2):], w) + 2 // not PAD or UNK
		if id < 2 {
			return nil, fmt.Errorf("audit: the mask's word %q is not in the model's vocabulary: give the model the audit read", w)
		}
		ids = append(ids, int32(id))
	}
	return m.MaskedWordsCopy(act.Mask, ids)
}

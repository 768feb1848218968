package gui

import (
	"fmt"
	"strings"

	"telltale/explain"
)

// The rows of the audit's tables, every number as the audit computed it.

// flaggedCols are the columns of flaggedTokenRows.
var flaggedCols = []string{"word", "training texts", "label", "p(label | word)", "z", "PMI", "test texts", "looks like"}

// flaggedTokenRows lists the words the audit flagged, largest z first.
func flaggedTokenRows(a *auditState) [][]string {
	if a == nil {
		return nil
	}
	var rows [][]string
	for _, f := range a.A.Tokens {
		rows = append(rows, []string{f.Token, fmt.Sprint(f.Count), f.Label, fmt.Sprintf("%.3f", f.Share),
			fmt.Sprintf("%.2f", f.Z), fmt.Sprintf("%.3f", f.PMI), fmt.Sprint(f.Heldout), orDash(categoryName(f.Category))})
	}
	return rows
}

// suspectCols are the columns of the suspect table; colMask is the column
// whose click ticks the filter.
var suspectCols = []string{"mask", "rank", "filter", "votes for", "cue words", "suspicion score", "flagged share", "push",
	"conflict share", "conflict gain", "harm", "macro-F1 change, masked", "flip rate"}

const colMask = 0

// suspectRow is suspect s (ranked rank, from 1) as a row, ticked or not.
func suspectRow(s *explain.Suspect, rank int, ticked bool) []string {
	m := "☐"
	if ticked {
		m = "☑"
	}
	flip := "—"
	if s.Counter != nil {
		flip = fmt.Sprintf("%.3f", s.Counter.FlipRate)
	}
	return []string{m, fmt.Sprint(rank), fmt.Sprint(s.Filter), s.Label, cueWords(s), fmt.Sprintf("%.4f", s.Score),
		fmt.Sprintf("%.3f", s.Parts.FlaggedShare), fmt.Sprintf("%+.4f", s.Parts.Push), fmt.Sprintf("%.3f", s.Parts.ConflictShare),
		fmt.Sprintf("%+.4f", s.Parts.ConflictGain), fmt.Sprintf("%+.4f", s.Parts.Harm),
		fmt.Sprintf("%+.4f", s.Ablation.DeltaMacroF1), flip}
}

// groupCols are the columns of the cue-group table.
var groupCols = []string{"rank", "cue words", "label", "training texts", "filters", "score", "flagged share", "harm",
	"all masked: accuracy", "cue-conflicting: accuracy", "strongest", "strongest masked: accuracy"}

// groupRows lists the audit's cue groups in their order (rank from 1).
func groupRows(a *auditState) [][]string {
	if a == nil {
		return nil
	}
	var rows [][]string
	for G, cg := range a.A.CueGroups {
		conf := "—"
		if cg.Conflict.Texts > 0 {
			conf = fmt.Sprintf("%.3f → %.3f (%s)", cg.Conflict.Accuracy, cg.Conflict.AccuracyMasked, texts(cg.Conflict.Texts))
		}
		rows = append(rows, []string{fmt.Sprint(G + 1), strings.Join(cg.Words, " "), cg.Label,
			fmt.Sprintf("%d (%.0f%%)", cg.TrainTexts, 100*cg.LabelShare), fmt.Sprint(len(cg.Filters)), fmt.Sprintf("%.4f", cg.Score),
			fmt.Sprintf("%.3f", cg.Parts.FlaggedShare), fmt.Sprintf("%+.4f", cg.Parts.Harm),
			fmt.Sprintf("%.4f → %.4f", cg.Ablation.Accuracy, cg.Ablation.AccuracyMasked), conf, fmt.Sprint(len(cg.Mask)),
			fmt.Sprintf("%.4f → %.4f (p %.2g)", cg.MaskAblation.Accuracy, cg.MaskAblation.AccuracyMasked, cg.MaskP)})
	}
	return rows
}

// groupStory describes cue group G (0-based position) in a sentence, from
// the audit's numbers.
func groupStory(a *auditState, G int) string {
	cg := &a.A.CueGroups[G]
	s := fmt.Sprintf("Cue group %d: %s (%d training texts, %.0f%% %s) — %s on it: %s. Masking all of them: test accuracy %.4f → %.4f",
		G+1, strings.Join(cg.Words, ", "), cg.TrainTexts, 100*cg.LabelShare, cg.Label, plural(len(cg.Filters), "filter keys", "filters key"),
		intList(cg.Filters), cg.Ablation.Accuracy, cg.Ablation.AccuracyMasked)
	if cg.Conflict.Texts > 0 {
		s += fmt.Sprintf(", and %.3f → %.3f on the %s of the test split where the cue points away from the gold label",
			cg.Conflict.Accuracy, cg.Conflict.AccuracyMasked, texts(cg.Conflict.Texts))
	}
	s += fmt.Sprintf(". Its strongest %d (%s): %.4f → %.4f (one-sided exact McNemar p = %.2g).", len(cg.Mask), intList(cg.Mask),
		cg.MaskAblation.Accuracy, cg.MaskAblation.AccuracyMasked, cg.MaskP)
	if len(cg.Shared) > 0 {
		s += " Words that come with it and count as nobody's cue: " + strings.Join(cg.Shared, " ") + "."
	}
	return s
}

// suspectParts lists every part of a suspect's score with its basis.
func suspectParts(s *explain.Suspect) [][]string {
	p := s.Parts
	f := func(v float64) string { return fmt.Sprintf("%.4f", v) }
	return [][]string{
		{"suspicion score", f(s.Score), "flagged share × max(0, harm)"},
		{"flagged share", f(p.FlaggedShare), fmt.Sprintf("flagged slot mass %.4f of %.4f, over %d training windows at or above the purity threshold %s",
			p.FlaggedMass, p.Mass, p.AboveWindows, thresholdText(p.Threshold))},
		{"harm", f(p.Harm), "conflict share × conflict gain"},
		{"conflict share", f(p.ConflictShare), fmt.Sprintf("of the %s of the test split with a cue word, the share whose gold label is not the cue's", texts(p.PushTexts))},
		{"conflict gain", f(p.ConflictGain), "mean rise of p(gold) on those texts when the filter is masked"},
		{"push", f(p.Push), fmt.Sprintf("mean fall of p(cue label) when masked, over the %s with a cue word (breaks ties)", texts(p.PushTexts))},
		{"dominant slot", fmt.Sprint(s.Concentration.Slot), fmt.Sprintf("top word %q in %.1f%% of windows; entropy %.3f bits (%.3f of the most possible)",
			s.Concentration.TopWord, 100*s.Concentration.TopShare, s.Concentration.Entropy, s.Concentration.Normalized)},
	}
}

// cueRows lists a suspect's cue words.
func cueRows(s *explain.Suspect) [][]string {
	var rows [][]string
	for _, c := range s.Cues {
		rows = append(rows, []string{c.Token, c.Label, fmt.Sprintf("%.2f", c.Z), fmt.Sprintf("%.3f", c.MassShare), fmt.Sprintf("%.3f", c.WindowShare)})
	}
	return rows
}

// ablationRows are the ablation and cue-conflicting rows of an intervention.
func ablationRows(what string, ab explain.Ablation, cf explain.Conflict) [][]string {
	return [][]string{
		{what, "accuracy", fmt.Sprintf("%.4f → %.4f (%+.4f)", ab.Accuracy, ab.AccuracyMasked, ab.DeltaAccuracy)},
		{what, "macro-F1", fmt.Sprintf("%.4f → %.4f (%+.4f)", ab.MacroF1, ab.MacroF1Masked, ab.DeltaMacroF1)},
		{what, "predictions changed", fmt.Sprintf("%d (%.2f%%)", ab.Flipped, 100*ab.FlippedShare)},
		{"cue-conflicting test texts", "texts (cue points to " + cf.CueLabel + ")", fmt.Sprint(cf.Texts)},
		{"cue-conflicting test texts", "accuracy", fmt.Sprintf("%.4f → %.4f masked", cf.Accuracy, cf.AccuracyMasked)},
		{"cue-conflicting test texts", "fixed / broken by masking", fmt.Sprintf("%d / %d", cf.Fixed, cf.Broken)},
	}
}

// counterRows are the substitution rows.
func counterRows(c *explain.Counterfactual) [][]string {
	if c == nil {
		return [][]string{{"cue substitution", "not run", "only the top suspects and groups are substituted"}}
	}
	return [][]string{
		{"cue substitution", "cue words → alternatives", strings.Join(c.Cues, " ") + " → " + strings.Join(c.Alternatives, " ")},
		{"cue substitution", "texts × draws", fmt.Sprintf("%d × %d", c.Texts, c.Draws)},
		{"cue substitution", "flips (flip rate)", fmt.Sprintf("%d (%.4f)", c.Flips, c.FlipRate)},
		{"cue substitution", "mean change of p(prediction)", fmt.Sprintf("%+.4f", c.MeanProbChange)},
		{"control: random positions", "flips (flip rate)", fmt.Sprintf("%d (%.4f)", c.ControlFlips, c.ControlFlipRate)},
		{"control: random positions", "mean change of p(prediction)", fmt.Sprintf("%+.4f", c.ControlChange)},
	}
}

// suspectEffects lists the ablation, cue-conflicting and substitution
// results of a suspect, and the categories of its top n-grams.
func suspectEffects(s *explain.Suspect) [][]string {
	rows := ablationRows("filter masked (test split)", s.Ablation, s.Conflict)
	rows = append(rows, counterRows(s.Counter)...)
	for _, c := range s.Categories {
		rows = append(rows, []string{"top n-grams", "looks like " + categoryName(c.Category), fmt.Sprintf("%.4f  %s", c.Share, strings.Join(c.Ngrams, " | "))})
	}
	for _, n := range s.TopNgrams {
		looks := ""
		for _, c := range n.Categories {
			looks += "; looks like " + categoryName(c)
		}
		rows = append(rows, []string{"top n-grams", strings.Join(n.Tokens, " "), fmt.Sprintf("activation %.4f, wins in %s%s",
			n.Activation, texts(n.Count), looks)})
	}
	return rows
}

// groupParts lists a cue group's score and its parts.
func groupParts(cg *explain.CueGroup) [][]string {
	p := cg.Parts
	f := func(v float64) string { return fmt.Sprintf("%.4f", v) }
	return [][]string{
		{"group score", f(cg.Score), "flagged share × max(0, harm), all its filters masked together"},
		{"flagged share", f(p.FlaggedShare), "flagged slot mass over slot mass of its filters' training windows at or above their purity thresholds"},
		{"harm", f(p.Harm), "conflict share × conflict gain"},
		{"conflict share", f(p.ConflictShare), fmt.Sprintf("of the %s of the test split with one of its words, the share whose gold label is not %s", texts(p.PushTexts), cg.Label)},
		{"conflict gain", f(p.ConflictGain), "mean rise of p(gold) on those texts with its filters masked"},
		{"push", f(p.Push), fmt.Sprintf("mean fall of p(%s) with its filters masked, over the texts with one of its words", cg.Label)},
	}
}

// groupWordRows lists a group's words with the audit's figures for each.
func groupWordRows(a *auditState, cg *explain.CueGroup) [][]string {
	var rows [][]string
	for _, w := range cg.Words {
		for _, f := range a.A.Tokens {
			if f.Token == w {
				rows = append(rows, []string{w, f.Label, fmt.Sprintf("%.2f", f.Z), fmt.Sprint(f.Count), fmt.Sprint(f.Heldout)})
			}
		}
	}
	return rows
}

// groupEffects lists what masking a group's filters and swapping its words do.
func groupEffects(cg *explain.CueGroup) [][]string {
	rows := ablationRows("all its filters masked", cg.Ablation, cg.Conflict)
	rows = append(rows, ablationRows(fmt.Sprintf("its strongest %d masked", len(cg.Mask)), cg.MaskAblation, cg.MaskConflict)[:3]...)
	rows = append(rows, []string{fmt.Sprintf("its strongest %d masked", len(cg.Mask)), "one-sided exact McNemar p", fmt.Sprintf("%.2g", cg.MaskP)})
	return append(rows, counterRows(cg.Counter)...)
}

// exampleCols are the columns of exampleRows.
var exampleCols = []string{"figure", "split", "#", "gold", "predicted", "after", "value", "note", "text"}

// exampleRows lists quoted texts under the figure they stand behind.
func exampleRows(fig string, exs []explain.AuditExample) [][]string {
	var rows [][]string
	for _, ex := range exs {
		rows = append(rows, []string{fig, splitOf(ex), fmt.Sprint(ex.Index), ex.Gold, orDash(ex.Pred), orDash(ex.After),
			fmt.Sprintf("%.3f", ex.Value), inWindowWords(ex.Note), oneLine(ex.Snippet)})
	}
	return rows
}

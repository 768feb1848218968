package explain

import (
	"bufio"
	"fmt"
	"io"
	"slices"
	"strings"
	"text/tabwriter"
)

// WriteText writes the audit as readable tables and sentences: first the
// story of the cue groups (which words, which filters, what masking them
// together changes, and the command that does it), then the flagged words,
// the cue groups with their score parts, and each suspect filter with its
// score parts, what it fires on and what changes without it.
func (a *Audit) WriteText(w io.Writer) error {
	bw := bufio.NewWriter(w)
	p := func(format string, args ...any) { fmt.Fprintf(bw, format, args...) }
	p("Spurious-cue audit: %d training texts, %d held-out texts, labels %s.\n", a.TrainTexts, a.HeldoutTexts, strings.Join(a.Labels, ", "))
	p("Held-out accuracy %.4f, macro-F1 %.4f.\n\n", a.Baseline.Accuracy, a.Baseline.MacroF1)
	a.writeStory(bw)

	p("Words that predict a label by themselves (Gardner et al. 2021 z-test against the %s class prior;\n", a.PriorKind)
	p("%d words tested, Bonferroni threshold z > %.3f at α = %g; PMI smoothed with add-%g):\n", a.Tested, a.Threshold, a.Alpha, a.Smoothing)
	if len(a.Tokens) == 0 {
		p("  none.\n")
	} else {
		tw := tabwriter.NewWriter(bw, 2, 8, 2, ' ', 0)
		fmt.Fprintf(tw, "  token\ttexts\tlabel\tshare\tz\tPMI\theld-out\tcategory\n")
		for i, t := range a.Tokens {
			if i == 40 {
				fmt.Fprintf(tw, "  … %d more\t\t\t\t\t\t\t\n", len(a.Tokens)-40)
				break
			}
			fmt.Fprintf(tw, "  %s\t%d\t%s\t%.2f\t%.1f\t%.2f\t%d\t%s\n", quoteTok(t.Token), t.Count, t.Label, t.Share, t.Z, t.PMI, t.Heldout, t.Category)
		}
		tw.Flush()
	}
	a.writeGroups(bw)
	p("\nSuspect filters (%d scored, top %d shown).\n%s.\n", a.Candidates, len(a.Filters), a.Formula)
	if len(a.Filters) == 0 {
		p("  none: no active filter draws on flagged words.\n")
	}
	for rank, s := range a.Filters {
		group := ""
		if s.Group > 0 {
			group = fmt.Sprintf(", cue group %d", s.Group)
		}
		p("\n%d. filter %d (width %d, votes %s%s): score %.4f = flagged share %.3f × harm %.4f (conflict share %.3f × gain %.4f)\n",
			rank+1, s.Filter, s.Width, s.Label, group, s.Score, s.Parts.FlaggedShare, s.Parts.Harm, s.Parts.ConflictShare, s.Parts.ConflictGain)
		var cues []string
		for _, c := range s.Cues {
			cues = append(cues, fmt.Sprintf("%s (%s, z %.1f, %.0f%% of its slot mass, in %.0f%% of its windows)",
				quoteTok(c.Token), c.Label, c.Z, 100*c.MassShare, 100*c.WindowShare))
		}
		p("   It fires on %s.\n", strings.Join(cues, "; "))
		var others []string
		for _, c := range s.Words {
			if !slices.ContainsFunc(s.Cues, func(x Cue) bool { return x.ID == c.ID }) && c.WindowShare >= 0.25 {
				others = append(others, fmt.Sprintf("%s (%.0f%%)", quoteTok(c.Token), 100*c.WindowShare))
			}
		}
		if len(others) > 0 {
			p("   Its windows also hold the flagged %s.\n", strings.Join(others, ", "))
		}
		p("   Of its %d training windows at or above its purity threshold %.3f, %.0f%% of the slot mass is on flagged words.\n",
			s.Parts.AboveWindows, s.Parts.Threshold, 100*s.Parts.FlaggedShare)
		cc := s.Concentration
		p("   Its strongest slot %d holds %s in %.0f%% of those windows (entropy %.2f bits, %.2f of the maximum).\n",
			cc.Slot, quoteTok(cc.TopWord), 100*cc.TopShare, cc.Entropy, cc.Normalized)
		if len(s.Categories) > 0 {
			var cs []string
			for _, c := range s.Categories {
				cs = append(cs, fmt.Sprintf("%s %.0f%%", c.Category, 100*c.Share))
			}
			p("   Artifact categories: %s.\n", strings.Join(cs, ", "))
		}
		var ng []string
		for i, n := range s.TopNgrams {
			if i == 5 {
				break
			}
			ng = append(ng, fmt.Sprintf("%q ×%d", joinTokens(n.Tokens), n.Count))
		}
		if len(ng) > 0 {
			p("   Top n-grams: %s.\n", strings.Join(ng, ", "))
		}
		p("   When it is masked, the probability of %s drops by %.4f on average over the %d held-out texts with the cue.\n",
			s.Conflict.CueLabel, s.Parts.Push, s.Parts.PushTexts)
		if s.Conflict.Texts > 0 {
			p("   On the %d cue-conflicting held-out texts (cue says %s, gold differs) the gold label gains %.4f in probability without it, and accuracy goes from %.3f to %.3f (%d fixed, %d broken).\n",
				s.Conflict.Texts, s.Conflict.CueLabel, s.Parts.ConflictGain, s.Conflict.Accuracy, s.Conflict.AccuracyMasked, s.Conflict.Fixed, s.Conflict.Broken)
		} else {
			p("   No held-out text contains the cue with a gold label other than %s.\n", s.Conflict.CueLabel)
		}
		ab := s.Ablation
		p("   Masked on the whole held-out split: accuracy %.4f → %.4f, macro-F1 %.4f → %.4f, %d predictions flip (%.2f%%).\n",
			ab.Accuracy, ab.AccuracyMasked, ab.MacroF1, ab.MacroF1Masked, ab.Flipped, 100*ab.FlippedShare)
		if cf := s.Counter; cf != nil {
			p("   Replacing %s by neutral words (%s) in %d held-out texts flips %.1f%% of predictions (mean change of p(ŷ) %+.4f); the same words at random other positions flip %.1f%% (%+.4f).\n",
				strings.Join(cf.Cues, ", "), strings.Join(cf.Alternatives[:min(4, len(cf.Alternatives))], ", "), cf.Texts,
				100*cf.FlipRate, cf.MeanProbChange, 100*cf.ControlFlipRate, cf.ControlChange)
		}
		for _, ex := range s.Examples.Windows {
			p("     train #%d (%s), activation %.3f: %s\n", ex.Index, ex.Gold, ex.Value, ex.Snippet)
		}
		for _, ex := range s.Examples.Conflict {
			p("     held-out #%d gold %s: %s → %s, %s: %s\n", ex.Index, ex.Gold, ex.Pred, ex.After, ex.Note, ex.Snippet)
		}
		for _, ex := range s.Examples.Counterfactual {
			p("     held-out #%d gold %s: %s → %s after %s: %s\n", ex.Index, ex.Gold, ex.Pred, ex.After, ex.Note, ex.Snippet)
		}
	}
	return bw.Flush()
}

func quoteTok(s string) string { return "'" + s + "'" }

// groupName is how the story names a group's words.
func groupName(cg *CueGroup) string {
	var ws []string
	for i, w := range cg.Words {
		if i == 6 {
			ws = append(ws, fmt.Sprintf("… %d more", len(cg.Words)-6))
			break
		}
		ws = append(ws, quoteTok(w))
	}
	if len(cg.Words) == 1 {
		return ws[0]
	}
	return "the words " + strings.Join(ws, ", ")
}

func filterList(fs []int, most int) string {
	var s []string
	for i, f := range fs {
		if i == most {
			s = append(s, fmt.Sprintf("… %d more", len(fs)-most))
			break
		}
		s = append(s, fmt.Sprint(f))
	}
	return strings.Join(s, ", ")
}

func joinInts(fs []int) string {
	s := make([]string, len(fs))
	for i, f := range fs {
		s[i] = fmt.Sprint(f)
	}
	return strings.Join(s, ",")
}

func moves(from, to float64, digits int) string {
	verb := "leaves"
	switch {
	case to > from:
		verb = "raises"
	case to < from:
		verb = "lowers"
	}
	if verb == "leaves" {
		return fmt.Sprintf("%s it at %.*f", verb, digits, from)
	}
	return fmt.Sprintf("%s it from %.*f to %.*f", verb, digits, from, digits, to)
}

// Story is the opening of WriteText: in plain words, the cue groups the
// model leans on, their filters, what masking them changes, and the
// command that does it.
func (a *Audit) Story() string {
	var sb strings.Builder
	bw := bufio.NewWriter(&sb)
	a.writeStory(bw)
	bw.Flush()
	return strings.TrimSpace(sb.String())
}

// writeStory tells, in plain words, which cue groups the model leans on and
// what masking their filters changes.
func (a *Audit) writeStory(w *bufio.Writer) {
	p := func(format string, args ...any) { fmt.Fprintf(w, format, args...) }
	if len(a.CueGroups) == 0 {
		p("No filter is keyed on a flagged word: there is no cue group to mask.\n\n")
		return
	}
	sharedBy := map[string]int{}
	for _, cg := range a.CueGroups {
		for _, s := range cg.Shared {
			sharedBy[s]++
		}
	}
	story := func(n int, cg *CueGroup) {
		var sh []string
		for _, s := range cg.Shared {
			if sharedBy[s] <= 3 {
				sh = append(sh, quoteTok(s))
			}
		}
		along := ""
		if len(sh) > 0 {
			along = "; with " + strings.Join(sh, ", ")
		}
		keys, it := "key", "it"
		if len(cg.Filters) == 1 {
			keys = "keys"
		}
		if len(cg.Words) > 1 {
			it = "them"
		}
		p("  (%d) %s (%d training texts, %.0f%% %s%s): %d filter%s %s on %s (%s).\n",
			n, groupName(cg), cg.TrainTexts, 100*cg.LabelShare, cg.Label, along, len(cg.Filters), plural(len(cg.Filters)), keys, it,
			filterList(cg.Filters, 8))
		effect := func(ab Ablation, cf Conflict) string {
			s := "held-out accuracy " + fmt.Sprintf("%.3f → %.3f", ab.Accuracy, ab.AccuracyMasked)
			if cf.Texts > 0 {
				s += fmt.Sprintf(", and %.3f → %.3f on the %d held-out texts where the cue points away from the gold label",
					cf.Accuracy, cf.AccuracyMasked, cf.Texts)
			}
			return s
		}
		all := "Masking it"
		if len(cg.Filters) > 1 {
			all = fmt.Sprintf("Masking all %d", len(cg.Filters))
		}
		p("      %s: %s.\n", all, effect(cg.Ablation, cg.Conflict))
		if len(cg.Mask) < len(cg.Filters) {
			p("      Masking only the strongest %d (%s): %s.\n", len(cg.Mask), filterList(cg.Mask, 8), effect(cg.MaskAblation, cg.MaskConflict))
		}
	}
	cmd := func(fs []int) {
		model, held := a.ModelFile, a.HeldoutFile
		if model == "" {
			model = "MODEL"
		}
		if held == "" {
			held = "HELDOUT"
		}
		out := strings.TrimSuffix(model, ".tt") + "-masked.tt"
		p("To try it:\n  telltale mask --model %s --filters %s --out %s --data %s\n\n", model, joinInts(fs), out, held)
	}
	if pl := a.Plan; pl != nil {
		p("The model leans on %d cue group%s: words that predict a label in the training split, read by filters whose\n", len(pl.Groups), plural(len(pl.Groups)))
		p("masking raises held-out accuracy and fixes texts where the words point away from the gold label:\n")
		for _, G := range pl.Groups {
			story(G, &a.CueGroups[G-1])
		}
		ab := pl.Ablation
		p("Masking those %d filters together: held-out accuracy %.4f → %.4f, macro-F1 %.4f → %.4f (%d predictions fixed, %d broken).\n",
			len(pl.Filters), ab.Accuracy, ab.AccuracyMasked, ab.MacroF1, ab.MacroF1Masked, ab.Fixed, ab.Broken)
		p("The strongest filters of each group were chosen on these held-out texts: check the masked model on another split.\n")
		cmd(pl.Filters)
		return
	}
	p("No cue group's strongest filters, masked together, raise held-out accuracy clearly (one-sided exact McNemar\n")
	p("p < 0.05) and fix texts where the cue points away from the gold label; the held-out split may carry the same\n")
	p("cues. The strongest group by its score:\n")
	story(1, &a.CueGroups[0])
	cmd(a.CueGroups[0].Mask)
}

func quoteAll(ws []string) []string {
	out := make([]string, len(ws))
	for i, w := range ws {
		out[i] = quoteTok(w)
	}
	return out
}

func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}

func them(n int) string {
	if n == 1 {
		return "it"
	}
	return "them all"
}

// writeGroups lists the cue groups with their score parts.
func (a *Audit) writeGroups(w *bufio.Writer) {
	p := func(format string, args ...any) { fmt.Fprintf(w, format, args...) }
	p("\nCue groups (%d formed, %d shown).\nRule: %s.\n%s.\n", a.Groups, len(a.CueGroups), a.GroupRule, a.GroupFormula)
	for G := range a.CueGroups {
		cg := &a.CueGroups[G]
		pp := cg.Parts
		p("\n%d. %s → %s: score %.4f = flagged share %.3f × harm %.4f (conflict share %.3f × gain %.4f); %d filter%s: %s\n",
			G+1, strings.Join(quoteAll(cg.Words), ", "), cg.Label, cg.Score, pp.FlaggedShare, pp.Harm, pp.ConflictShare, pp.ConflictGain,
			len(cg.Filters), plural(len(cg.Filters)), filterList(cg.Filters, 20))
		p("   In %d training texts (%.0f%% %s) and %d held-out texts", cg.TrainTexts, 100*cg.LabelShare, cg.Label, cg.HeldoutTexts)
		if len(cg.Shared) > 0 {
			p("; shared words that come with it: %s", strings.Join(quoteAll(cg.Shared), ", "))
		}
		p(".\n")
		ab := cg.Ablation
		p("   Masked together: accuracy %.4f → %.4f, macro-F1 %.4f → %.4f, %d predictions flip (%.2f%%); p(%s) drops by %.4f on average over the %d held-out texts with its words.\n",
			ab.Accuracy, ab.AccuracyMasked, ab.MacroF1, ab.MacroF1Masked, ab.Flipped, 100*ab.FlippedShare, cg.Label, pp.Push, pp.PushTexts)
		if cg.Conflict.Texts > 0 {
			p("   On the %d cue-conflicting held-out texts the gold label gains %.4f in probability, and accuracy goes from %.3f to %.3f (%d fixed, %d broken).\n",
				cg.Conflict.Texts, pp.ConflictGain, cg.Conflict.Accuracy, cg.Conflict.AccuracyMasked, cg.Conflict.Fixed, cg.Conflict.Broken)
		}
		mab := cg.MaskAblation
		strongest := "Its strongest filter"
		if len(cg.Mask) > 1 {
			strongest = fmt.Sprintf("Its strongest %d filters", len(cg.Mask))
		}
		p("   %s (the prefix with the best held-out accuracy): accuracy %.4f → %.4f, %d fixed and %d broken (one-sided exact McNemar p = %.2g)",
			strongest, mab.Accuracy, mab.AccuracyMasked, mab.Fixed, mab.Broken, cg.MaskP)
		if cg.MaskConflict.Texts > 0 {
			p("; on the cue-conflicting texts %.3f → %.3f", cg.MaskConflict.Accuracy, cg.MaskConflict.AccuracyMasked)
		}
		p(".\n")
		if cf := cg.Counter; cf != nil {
			p("   Replacing its words by neutral words in %d held-out texts flips %.1f%% of predictions (mean change of p(ŷ) %+.4f); at random other positions %.1f%% (%+.4f).\n",
				cf.Texts, 100*cf.FlipRate, cf.MeanProbChange, 100*cf.ControlFlipRate, cf.ControlChange)
		}
		for _, ex := range cg.Examples {
			p("     held-out #%d gold %s: %s → %s, %s: %s\n", ex.Index, ex.Gold, ex.Pred, ex.After, ex.Note, ex.Snippet)
		}
	}
}

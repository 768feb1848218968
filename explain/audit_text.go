package explain

import (
	"bufio"
	"fmt"
	"io"
	"slices"
	"strings"
	"text/tabwriter"
)

// WriteText writes the audit as readable tables and sentences: the flagged
// words, then each suspect filter with its score parts, what it fires on
// and what changes without it.
func (a *Audit) WriteText(w io.Writer) error {
	bw := bufio.NewWriter(w)
	p := func(format string, args ...any) { fmt.Fprintf(bw, format, args...) }
	p("Spurious-cue audit: %d training texts, %d held-out texts, labels %s.\n", a.TrainTexts, a.HeldoutTexts, strings.Join(a.Labels, ", "))
	p("Held-out accuracy %.4f, macro-F1 %.4f.\n\n", a.Baseline.Accuracy, a.Baseline.MacroF1)

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
	p("\nSuspect filters (%d scored, top %d shown).\n%s.\n", a.Candidates, len(a.Filters), a.Formula)
	if len(a.Filters) == 0 {
		p("  none: no active filter draws on flagged words.\n")
	}
	for rank, s := range a.Filters {
		p("\n%d. filter %d (width %d, votes %s): score %.4f = flagged share %.3f × harm %.4f (conflict share %.3f × gain %.4f)\n",
			rank+1, s.Filter, s.Width, s.Label, s.Score, s.Parts.FlaggedShare, s.Parts.Harm, s.Parts.ConflictShare, s.Parts.ConflictGain)
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

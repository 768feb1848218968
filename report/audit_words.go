package report

import (
	"fmt"
	"strings"

	"telltale/audit"
	"telltale/internal/wording"
)

// CueEvidence is one cue of a cue audit in plain words, every figure with
// its interval or its test: what the report and the command line show of
// it, so that both say the same.
type CueEvidence struct {
	// Name says what the cue is: "the line '…'", "the word '…'" or "the
	// words '…'"; Label is the label it predicts.
	Name, Label string
	// Verdict is what the audit concluded, with the mark when there is one.
	Verdict string
	// Association, Reliance and Artifact are the cue's three lines of
	// evidence; Reliance is empty when it was not measured.
	Association, Reliance, Artifact string
	// Signals are the artifact-likeness signals that hold, in plain words.
	Signals []string
	// Shift is the confirming half's label share of a cue whose choosing
	// half shows a shift (audit.Candidate.ConfirmedShiftSays; "" for any
	// other cue): the figure shown of the shift, as the choosing half's
	// took part in choosing the cue.
	Shift string
	// Filters are the filters keyed on the cue and what masking them does,
	// then, on a model with word weights, the cue words' part there ("" when
	// none were looked for or found).
	Filters string
	// Examples quote texts whose prediction replacing the cue changed.
	Examples []string
	// Words are the cue's words as the marks file and the mark options
	// take them.
	Words string
}

// verdictWords are the audit's verdicts in plain words.
var verdictWords = map[string]string{
	audit.VerdictActed:       "acted on",
	audit.VerdictUnconfirmed: "relied on in the choosing half, not confirmed",
	audit.VerdictNotRelied:   "not measurably relied on",
	audit.VerdictTask:        "reads like the task",
	audit.VerdictOther:       "associated, not measurably relied on",
	audit.VerdictUnmeasured:  "too rare in the test texts to measure",
}

// AssociationTestName names an audit's test of association in plain words.
func AssociationTestName(test string) string {
	if test == audit.TestBinomial {
		return "exact binomial test"
	}
	return "Fisher's exact test"
}

// CorrectionName names an audit's correction for multiple tests.
func CorrectionName(correction string) string {
	if correction == audit.CorrectBonferroni {
		return "Bonferroni"
	}
	return "Benjamini–Hochberg"
}

// DescribeCue puts cue c of audit r in plain words; priors are the labels'
// shares of the training split (nil leaves them out).
func DescribeCue(c *audit.Candidate, r *audit.Result, priors []float64) CueEvidence {
	ev := CueEvidence{Name: cueName(c), Label: c.Label, Verdict: verdictWords[c.Verdict], Words: c.Text,
		Association: association(c, r, priors), Reliance: reliance(c)}
	if c.Mark != "" {
		ev.Verdict += ", marked " + c.Mark
	}
	if note := c.NotRuledOut(); note != "" {
		ev.Verdict += "; " + note
	}
	ev.Artifact = ArtifactScore(c.ArtifactLikeness)
	if c.Mark == audit.MarkArtifact {
		ev.Artifact += "; you marked it as an artifact"
	}
	for _, s := range c.Signals {
		if s.Value > 0 {
			ev.Signals = append(ev.Signals, s.Says)
		}
	}
	ev.Shift = c.ConfirmedShiftSays()
	if f := c.Filters; f != nil && f.Ablation != nil {
		ab := f.Ablation
		ev.Filters = fmt.Sprintf("%s read it (%s); masked together%s, the accuracy on the confirming half goes from %s to %s "+
			"(%s fixed, %s broken, one-sided exact McNemar p %s) and %s of the %s texts there that hold it change their prediction",
			wording.Grouped(len(f.Keyed), "filter", "filters"), ints(f.Keyed), wideWords(ab.Words), accuracy(ab.Before), accuracy(ab.After), count(ab.Fixed), count(ab.Broken),
			pvalue(ab.P), count(ab.CueFlipped), count(ab.CueTexts))
	}
	if f := c.Filters; f != nil && len(f.Words) > 0 {
		words := fmt.Sprintf("In the word weights its words %s: too few texts (%s) in the confirming half to measure", quotedWords(f.Words), count(f.WordTexts))
		if wp := f.WordPart; wp != nil {
			words = fmt.Sprintf("In the word weights its words %s add %s to the centred logit of %s on its confirming texts, "+
				"against the unknown word's (mean over the texts, 95%% percentile bootstrap interval over texts); read as the unknown word, as the mask reads them, they add nothing",
				quotedWords(f.Words), accuracy(*wp), c.Label)
		}
		if ev.Filters != "" {
			ev.Filters += ". " + words
		} else {
			ev.Filters = words
		}
	}
	if rl := shown(c); rl != nil {
		for _, e := range rl.Examples {
			ev.Examples = append(ev.Examples, fmt.Sprintf("%s → %s (gold %s): %s", e.Pred, e.After, e.Gold, e.Snippet))
		}
	}
	return ev
}

// ArtifactScore words a cue's artifact-likeness as what it is: the score
// of a rule whose weights are set by hand (audit.ArtifactFormula), not a
// measurement or a probability, so two digits: "rule score 0.99 (…)".
func ArtifactScore(x float64) string {
	return fmt.Sprintf("rule score %.2f (by hand-set weights, not a probability; %.2f or more reads like how the data was collected)",
		x, audit.ArtifactThreshold)
}

// shown is the reliance a person reads: the confirming half's, else the
// choosing half's.
func shown(c *audit.Candidate) *audit.Reliance {
	if c.Confirmed != nil {
		return c.Confirmed
	}
	return c.Reliance
}

func association(c *audit.Candidate, r *audit.Result, priors []float64) string {
	as := c.Association
	lo, hi := audit.Wilson(as.InLabel, as.Texts, 0.95)
	s := fmt.Sprintf("%s hold it, %s of them %s", wording.Grouped(as.Texts, "training text", "training texts"),
		interval(audit.Interval{Estimate: as.Share, Low: lo, High: hi}), c.Label)
	if c.Class < len(priors) {
		s += fmt.Sprintf(", against %s of all training texts", pct(priors[c.Class]))
	}
	return s + fmt.Sprintf("; %s p %s, corrected over %s word × label tests (%s) p %s",
		AssociationTestName(r.Test), pvalue(as.P), count(r.Tests), CorrectionName(r.Correction), pvalue(as.Adjusted))
}

func reliance(c *audit.Candidate) string {
	rl, half := c.Confirmed, "confirming"
	if rl == nil {
		rl, half = c.Reliance, "choosing"
	}
	if rl == nil {
		return ""
	}
	if rl.Measured == 0 {
		return fmt.Sprintf("too few texts (%s) in the %s half to measure", count(rl.Texts), half)
	}
	edited := ""
	if rl.Measured < rl.Texts {
		edited = fmt.Sprintf(" (%s of them edited)", count(rl.Measured))
	}
	texts := fmt.Sprintf("the %s %s texts that hold it", count(rl.Texts), half)
	if rl.Texts == 1 {
		texts = "the one " + half + " text that holds it"
	}
	s := fmt.Sprintf("in %s%s, replacing it by neutral words changes %s of the predictions, against %s "+
		"when the same words go elsewhere; the probability of %s falls by %s on average, and falls in %s of the texts, rises in %s "+
		"(one-sided sign test p %s: it tells whether it falls more often than it rises, not by how much); it decides %s of all predictions there",
		texts, edited, interval(rl.FlipRate), interval(rl.ControlFlipRate), c.Label, drop(rl.LabelDrop), count(rl.Lower), count(rl.Higher),
		pvalue(rl.P), interval(rl.Decided))
	if cf := rl.Conflict; cf != nil {
		s += fmt.Sprintf("; on the %s of them whose label is not %s, accuracy goes from %s to %s without it "+
			"(%s fixed, %s broken, two-sided exact McNemar p %s)",
			count(cf.Texts), c.Label, accuracy(cf.Before), accuracy(cf.After), count(cf.Fixed), count(cf.Broken), pvalue(cf.P))
	}
	if half == "choosing" {
		s += " (measured on the choosing half only)"
	}
	return s
}

// cueName is how the words name a cue: a line, a word or words, quoted in
// its most common form.
func cueName(c *audit.Candidate) string {
	show := c.Surface
	if show == "" {
		show = c.Text
	}
	show = "'" + strings.Join(strings.Fields(show), " ") + "'"
	for _, s := range c.Signals {
		if s.Name == audit.SignalLine && s.Value >= 0.5 {
			return "the line " + show
		}
	}
	if len(c.Words) == 1 {
		return "the word " + show
	}
	return "the words " + show
}

// interval writes a share with its interval: "14.2% (8.6–19.0%)".
func interval(x audit.Interval) string {
	return pct(x.Estimate) + " (" + strings.TrimSuffix(pct(x.Low), "%") + "–" + pct(x.High) + ")"
}

// drop writes a difference of probabilities with its interval, each
// figure as audit.Figure writes it: three decimals, two significant
// digits where three would show a nonzero figure as 0.000, and a value of
// 0 as "0.000", never "-0.000".
func drop(x audit.Interval) string {
	return audit.Figure(x.Estimate) + " (" + audit.Figure(x.Low) + " to " + audit.Figure(x.High) + ")"
}

// accuracy writes an accuracy, or another of the audit's figures, with
// its interval, each figure as audit.Figure writes it: "0.912 (0.890–0.931)".
func accuracy(x audit.Interval) string {
	return audit.Figure(x.Estimate) + " (" + audit.Figure(x.Low) + "–" + audit.Figure(x.High) + ")"
}

// pvalue writes "= 0.0017" or "< 1e-300".
func pvalue(p float64) string {
	if p < 1e-300 {
		return "< 1e-300"
	}
	return "= " + fmt.Sprintf("%.2g", p)
}

// RecipeMaskWords is the sentence that says a retraining took out, beside
// the cues, the patterns the model's recipe took out already
// (audit.Retrained.RecipeMask: train --mask-tokens), for the command
// line's and the window's account of it: "" when there were none.
func RecipeMaskWords(rt *audit.Retrained) string {
	if rt == nil || len(rt.RecipeMask) == 0 {
		return ""
	}
	n := len(rt.RecipeMask)
	return fmt.Sprintf("The retraining also took out the %s the model's recipe takes out of the training text (train --mask-tokens): %s.",
		map[bool]string{true: "pattern", false: fmt.Sprintf("%d patterns", n)}[n == 1], strings.Join(rt.RecipeMask, " "))
}

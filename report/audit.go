package report

import (
	"fmt"
	"strconv"
	"strings"

	"telltale/audit"
	"telltale/corpus"
	"telltale/internal/wording"
)

// auditView is the cue audit, formatted: the story first, then what to do,
// the artifact-like cues, the list apart and how the numbers are made.
type auditView struct {
	Halves       string
	Story        []string
	Action       *actionView
	Ranked, Task []cueView
	Method       []string
}

// cueView is one listed cue with its rank.
type cueView struct {
	Rank int
	CueEvidence
}

// actionView is the audit's suggested action.
type actionView struct {
	Cues           string
	Counterfactual []kv
	Patterns       string
	Mask           string
	MaskCommand    string
}

func auditLayout(r *audit.Result, priors []float64, modelPath string) *auditView {
	av := &auditView{Halves: fmt.Sprintf("Association is tested on the %s of the training split; reliance is measured on the %s of the test split, "+
		"halved at random into %s that choose the cues and %s that confirm them: every figure below comes from the confirming half unless it says otherwise.",
		wording.Grouped(r.TrainTexts, "text", "texts"), wording.Grouped(r.HeldoutTexts, "text", "texts"), count(r.SelectionTexts), count(r.ConfirmationTexts))}
	for _, para := range strings.Split(r.Story(), "\n\n") {
		av.Story = append(av.Story, reflow(para))
	}
	av.Action = actionLayout(r, modelPath)
	for i := range r.Ranked {
		av.Ranked = append(av.Ranked, cueView{Rank: i + 1, CueEvidence: DescribeCue(&r.Ranked[i], r, priors)})
	}
	for i := range r.Task {
		av.Task = append(av.Task, cueView{Rank: i + 1, CueEvidence: DescribeCue(&r.Task[i], r, priors)})
	}
	av.Method = AuditMethod(r)
	return av
}

// reflow undoes the line breaks a paragraph of the audit's story has for
// the terminal, so that the page wraps it to its own width: a line
// indented by none or by more than four spaces continues the one before;
// an item (indented by two: "  1. …", "  - …") starts a line; a line
// indented by four continues a dash item ("  - …", whose text it lines up
// with) and otherwise is a command or pattern, which stands on a line of
// its own, as does what follows it. The lines kept are trimmed and joined
// by "\n".
func reflow(para string) string {
	var out []string
	join, dash := false, false
	for _, line := range strings.Split(para, "\n") {
		text := strings.TrimSpace(line)
		if text == "" {
			continue
		}
		indent := len(line) - len(strings.TrimLeft(line, " "))
		if len(out) > 0 && (join && (indent == 0 || indent > 4) || dash && indent == 4) {
			out[len(out)-1] += " " + text
			continue
		}
		out = append(out, text)
		join = indent != 4
		dash = indent == 2 && strings.HasPrefix(text, "- ")
	}
	return strings.Join(out, "\n")
}

// ActionEvidence is the action of a cue audit in plain words, every figure
// with its interval or its test: what the report and the window show of it,
// so that both say the same.
type ActionEvidence struct {
	// Cues names the cues acted on, "; "-separated.
	Cues string
	// Counterfactual are the figures of the confirming half as it is and
	// without the cues, each a name and its value (none without them).
	Counterfactual [][2]string
	// Mask says what masking the filters that read the cues does on the
	// confirming half and whether it is suggested ("" when none was tried).
	Mask string
}

// DescribeAction puts the action of audit r in plain words, or returns nil
// when the audit acts on no cue.
func DescribeAction(r *audit.Result) *ActionEvidence {
	a := r.Action
	if len(a.Cues) == 0 {
		return nil
	}
	var cues []string
	for _, c := range r.Ranked {
		if c.Verdict == audit.VerdictActed {
			cues = append(cues, cueName(&c))
		}
	}
	ae := &ActionEvidence{Cues: strings.Join(cues, "; ")}
	if cf := a.Counterfactual; cf != nil {
		ae.Counterfactual = [][2]string{
			{fmt.Sprintf("Accuracy on the %s confirming texts, as they are → without the cues", count(cf.Texts)),
				accuracy(cf.Accuracy) + " → " + accuracy(cf.AccuracyWithout)},
			{fmt.Sprintf("On the %s of them that hold a cue", count(cf.CueTexts)), accuracy(cf.CueAccuracy) + " → " + accuracy(cf.CueAccuracyWithout)},
			{"Predictions fixed / broken by taking the cues out", fmt.Sprintf("%s / %s (two-sided exact McNemar p %s)", count(cf.Fixed), count(cf.Broken), pvalue(cf.P))},
		}
	}
	if t := a.Tried; t != nil {
		verdict := "does not help there, so no mask is suggested"
		if a.Suggested() {
			verdict = "helps there"
		}
		ae.Mask = fmt.Sprintf("%s, chosen on the choosing half, %s: accuracy on the confirming half %s → %s "+
			"(%s fixed, %s broken, one-sided exact McNemar p %s).", maskEdit(t.Filters, t.Words), verdict, accuracy(t.Before), accuracy(t.After),
			count(t.Fixed), count(t.Broken), pvalue(t.P))
	}
	return ae
}

// maskEdit names what a mask changes: its filters, and the words it reads
// as the unknown word by the word-weight path (audit.Ablation.Words); a
// mask may hold either or both.
func maskEdit(filters []int, words []string) string {
	read := quotedWords(words) + " read as the unknown word by the word weights"
	switch {
	case len(words) == 0:
		return "Masking filters " + ints(filters)
	case len(filters) == 0:
		return "Having " + read
	}
	return "Masking filters " + ints(filters) + " with " + read
}

// quotedWords writes words in quotes, comma-separated.
func quotedWords(words []string) string {
	q := make([]string, len(words))
	for i, w := range words {
		q[i] = "'" + w + "'"
	}
	return strings.Join(q, ", ")
}

// actionLayout lays out the action, or nil when the audit acts on nothing.
func actionLayout(r *audit.Result, modelPath string) *actionView {
	ae := DescribeAction(r)
	if ae == nil {
		return nil
	}
	a := r.Action
	av := &actionView{Cues: ae.Cues, Patterns: strings.Join(a.Patterns, "\n"), Mask: ae.Mask}
	for _, f := range ae.Counterfactual {
		av.Counterfactual = append(av.Counterfactual, kv{f[0], f[1]})
	}
	if a.Mask != nil && len(a.MaskWords) > 0 {
		av.Mask += " telltale mask --words with the words above (and --filters with any filters above) writes it, as do telltale audit --masked-out and the window's audit pane."
	}
	if a.Mask != nil && len(a.MaskWords) == 0 {
		model := cmpOr(modelPath, "MODEL")
		av.MaskCommand = fmt.Sprintf("telltale mask --model %s --filters %s --out %s-masked.tt",
			model, strings.ReplaceAll(ints(a.Mask), " ", ""), strings.TrimSuffix(model, ".tt"))
	}
	return av
}

// AuditMethod says how the numbers of audit r are made, in plain words, a
// sentence per question.
func AuditMethod(r *audit.Result) []string {
	return []string{
		fmt.Sprintf("Association: %s (one-sided) of each word's training texts in each label; the %s word × label tests are corrected by %s at %g. "+
			"Associated words grow into the longest phrase they keep in 80%% of their occurrences (or, failing that, into the form they are written in, with no space, in most of them), and a bracket into the "+
			"bracketed groups it opens or closes; a cue in at least %d training texts passes at p ≤ %s.",
			AssociationTestName(r.Test), count(r.Tests), CorrectionName(r.Correction), r.Alpha, r.MinSupport, strings.TrimPrefix(pvalue(r.Cutoff), "= ")),
		"Reliance: each test text that holds the cue is edited several times, the cue replaced by label-neutral words and, as a control, " +
			"kept with the same words put elsewhere; intervals are 95% intervals over texts: exact, covering at least 95%, for the flip rates and the decided share (Clopper–Pearson where every text gives the same value, else the betting interval of Waudby-Smith & Ramdas 2024), the percentile bootstrap for the probability drops, or the same exact interval where fewer than " + strconv.Itoa(audit.ThinOffMode) + " texts differ from the most common value (a cue measured on so few texts seldom has its drop bounded above 0); sign tests are exact and one-sided. " +
			fmt.Sprintf("A half gives these figures, and on a model with word weights the part of the cue's words there (the same percentile bootstrap over texts), only when at least %d of its texts hold the cue; "+
				"over few more than that, a percentile bootstrap tends to give too narrow an interval. ", audit.MinCueTexts) +
			"A cue is acted on when it is artifact-like, relied on in the choosing half and confirmed in the confirming half: there its label's probability falls in more texts than it rises " +
			"(the sign test, Benjamini–Hochberg over the cues put to the test) and the predictions change beyond the control (the exact interval of the net change above 0, or the exact sign test of texts flipping more against fewer at p ≤ 0.025: two tests at 2.5% each); a small fall in most texts passes the sign test alone.",
		"Artifact-likeness: the score of a rule, 1 − Π (1 − weight × value) over the signals shown, each value in [0, 1] and each weight set by hand " +
			"(not fitted to data, so the score is not a probability; the shift signal is measured on the choosing half, and the label share shown " +
			"for a cue with that signal is the confirming half's: exact Clopper–Pearson 95% interval, one-sided Fisher test of its being lower than in training, " +
			"Holm over the cues put to the test that shifted in the choosing half); " + fmt.Sprintf("%.2f", audit.ArtifactThreshold) +
			" or more reads like how the data was collected. Rank: reliance (the fall of the cue's label's probability beyond the control, choosing half) × artifact-likeness, the cues acted on first.",
	}
}

// trainShares are the labels' shares of the training split, from the
// summary (nil without one).
func trainShares(s *corpus.Summary, labels []string) []float64 {
	if s == nil {
		return nil
	}
	for _, sp := range s.Splits {
		if sp.Name == "train" {
			out := make([]float64, len(labels))
			for i, l := range labels {
				out[i] = sp.Balance[l]
			}
			return out
		}
	}
	return nil
}

func cmpOr(s, def string) string {
	if s == "" {
		return def
	}
	return s
}

// wideWords says, after a filter mask, that the mask also reads words as
// the unknown word by the word-weight path (audit.Ablation.Words): "" for
// none.
func wideWords(words []string) string {
	if len(words) == 0 {
		return ""
	}
	return " with " + quotedWords(words) + " read as the unknown word by the word weights"
}

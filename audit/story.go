package audit

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"telltale/internal/wording"
)

// fmtPct writes a share as a percentage: whole numbers from 10%, one
// decimal below.
func fmtPct(x float64) string {
	v := 100 * x
	if math.Abs(v) >= 9.95 || v == 0 {
		return fmt.Sprintf("%.0f%%", v)
	}
	return fmt.Sprintf("%.1f%%", v)
}

// pval writes a p-value with two significant digits.
func pval(p float64) string {
	if p < 1e-300 {
		return "< 1e-300"
	}
	return fmt.Sprintf("%.2g", p)
}

// interval writes a share with its interval: "37% (30–44%)".
func interval(x Interval) string {
	return fmtPct(x.Estimate) + " (" + strings.TrimSuffix(fmtPct(x.Low), "%") + "–" + fmtPct(x.High) + ")"
}

// tooFew says a reliance was not measured: the cue is in fewer texts of
// the confirmation half than the audit measures a reliance on.
func tooFew(r *Reliance) string { return tooFewTexts(r.Texts) }

// tooFewTexts says a figure over the n confirming texts holding a cue was
// not measured, n being below minCueTexts (a reliance, a word part).
func tooFewTexts(n int) string {
	return fmt.Sprintf("too few texts (%d) to measure in the confirming half (at least %d)", n, minCueTexts)
}

// drop writes a probability drop with its interval: "0.210 (0.180–0.240)".
func drop(x Interval) string { return accuracy(x) }

// signedDrop words a probability drop that may be a rise.
func signedDrop(x Interval) string {
	if x.Estimate < 0 {
		return "rises by " + accuracy(Interval{Estimate: -x.Estimate, Low: -x.High, High: -x.Low})
	}
	return "drops by " + accuracy(x)
}

// accuracy writes an accuracy with its interval: "0.912 (0.890–0.931)";
// each figure as Figure writes it.
func accuracy(x Interval) string {
	return Figure(x.Estimate) + " (" + Figure(x.Low) + "–" + Figure(x.High) + ")"
}

// Figure writes a measured figure (a probability or a change of one, an
// accuracy, a part of a logit) with three decimals, or, where three
// decimals would show a nonzero figure as 0.000 (below 0.0005 in size),
// with two significant digits ("0.00024", "8.3e-05"), so that no
// measured value or bound reads as none: the rule by which the command
// line's explain words a change too small for three decimals. Zero is
// "0.000", never "-0.000". The report writes the audit's figures with it.
func Figure(x float64) string {
	if x != 0 && math.Abs(x) < 0.0005 {
		return strconv.FormatFloat(x, 'g', 2, 64)
	}
	if s := strconv.FormatFloat(x, 'f', 3, 64); s != "-0.000" {
		return s
	}
	return "0.000"
}

// snippet quotes text i of d around occurrence s, the cue in [brackets].
func snippet(d Data, vocab []string, i int, s span) string {
	if d.Tokens == nil {
		var parts []string
		for j := max(0, int(s.start)-6); j < min(len(d.IDs[i]), int(s.end)+6); j++ {
			w := vocab[d.IDs[i][j]]
			if j == int(s.start) {
				w = "[" + w
			}
			if j == int(s.end)-1 {
				w += "]"
			}
			parts = append(parts, w)
		}
		return strings.Join(parts, " ")
	}
	text, toks := d.Texts[i], d.Tokens[i]
	lo, hi := toks[s.start].Start, toks[s.end-1].End
	l, r := max(0, lo-50), min(len(text), hi+50)
	for l > 0 && l < lo && text[l]&0xC0 == 0x80 {
		l--
	}
	for r < len(text) && r > hi && text[r]&0xC0 == 0x80 {
		r++
	}
	out := text[l:lo] + "[" + text[lo:hi] + "]" + text[hi:r]
	if l > 0 {
		out = "…" + out
	}
	if r < len(text) {
		out += "…"
	}
	return strings.Join(strings.Fields(out), " ")
}

func (c *Candidate) signal(name string) Signal {
	for _, s := range c.Signals {
		if s.Name == name {
			return s
		}
	}
	return Signal{Name: name}
}

// name is how the story names a cue: a line, a stamp, or words.
func (c *Candidate) name() string {
	show := c.Surface
	if show == "" {
		show = c.Text
	}
	show = "'" + oneLine(show, 70) + "'"
	switch {
	case c.signal(SignalLine).Value >= 0.5:
		return "the line " + show
	case len(c.Words) == 1:
		return "the word " + show
	}
	return "the words " + show
}

// why says in plain words why the cue counts as artifact-like: the
// user's mark, the measured signals (measuredWhy), or both.
func (c *Candidate) why() string {
	measured := c.measuredWhy()
	switch {
	case c.Mark == MarkArtifact && measured == "":
		return "you marked it as an artifact"
	case c.Mark == MarkArtifact:
		return "you marked it as an artifact, and " + measured
	case measured == "":
		return "its signals together pass the threshold"
	}
	return measured
}

// measuredWhy lists the measured signals that make the cue artifact-like,
// strongest contribution first, at most three; "" when none contributes.
func (c *Candidate) measuredWhy() string {
	type part struct {
		v    float64
		says string
	}
	var ps []part
	for _, s := range c.Signals {
		if v := s.Weight * s.Value; v >= 0.15 {
			ps = append(ps, part{v, s.Says})
		}
	}
	for i := range ps {
		for j := i + 1; j < len(ps); j++ {
			if ps[j].v > ps[i].v {
				ps[i], ps[j] = ps[j], ps[i]
			}
		}
	}
	var says []string
	for _, p := range ps[:min(3, len(ps))] {
		says = append(says, p.says)
	}
	return strings.Join(says, "; ")
}

// ConfirmedShiftSays words the confirmation half's label share of a cue
// whose selection half shows a shift (c.ShiftConfirmed, in its Holm
// family): its count, its share with the exact interval, the one-sided
// test against training, and plainly when that half does not show the
// share lower. A share found lower says, in the same sentence, that the
// test leans that way: the training share it is tested against chose the
// cue for being extreme (regression to the mean). It is "" for a cue
// outside the family. The story, the command line and the report show it.
func (c *Candidate) ConfirmedShiftSays() string {
	return strings.Join(c.confirmedShiftLines(), " ")
}

// leansLower is the caveat of a confirming share found lower than in
// training (ConfirmedShift.P).
const leansLower = "the training share chose the cue, so the test leans towards finding it lower"

// confirmedShiftLines is ConfirmedShiftSays in the lines the story writes
// (the window's reflow joins them again): the figure with the finding, the
// test, and for a share found lower the test's caveat; none for a cue
// outside the family.
func (c *Candidate) confirmedShiftLines() []string {
	s := c.ShiftConfirmed
	if s == nil || s.Family == 0 {
		return nil
	}
	share := fmt.Sprintf("On the confirming half, %d of the %d texts holding it are %s, %s, against %s in training:",
		s.InLabel, s.Texts, c.Label, interval(s.Share), fmtPct(s.TrainShare))
	test := fmt.Sprintf("(one-sided Fisher p = %s; Holm p = %s over the %d cues whose shift it tests", pval(s.P), pval(s.Holm), s.Family)
	if s.Family == 1 {
		test = fmt.Sprintf("(one-sided Fisher p = %s, the one cue whose shift it tests", pval(s.P))
	}
	switch {
	case s.Lower:
		return []string{share + " lower beyond chance", test + ";", leansLower + ")."}
	case s.Share.Estimate < s.TrainShare:
		return []string{share + " not lower beyond chance", test + "), so the confirming half does not show the shift."}
	}
	return []string{share + " no lower", test + "), so the confirming half does not show the shift."}
}

// NotRuledOut says, for a ConfidenceOnly cue, what the confirmation half
// does not rule out: the model's confidence in the cue's label rests on it
// there though no prediction changed (or none measurably beyond the
// control), and with so few texts a net flip rate (beyond the control) up
// to its interval's upper bound is not ruled out. It is "" for any other cue.
func (c *Candidate) NotRuledOut() string {
	cr := c.Confirmed
	if !c.ConfidenceOnly || cr == nil || cr.Measured == 0 {
		return ""
	}
	changed := "though no prediction changed"
	if cr.FlipRate.Estimate > 0 {
		changed = "though its predictions did not change measurably beyond the control"
	}
	// The test that failed is the net rate's (beyond the control), so that
	// is the rate not ruled out.
	return fmt.Sprintf("the model's confidence in %s rests on it on its confirming texts, %s: with %s, a flip rate beyond the control of up to %s is not ruled out",
		c.Label, changed, wording.Count(cr.Measured, "text", "texts"), fmtPct(cr.NetFlipRate.High))
}

// Story tells the audit in plain words: the cues the model relies on that
// look like how the data was collected, why, what the model scores without
// them and what to do; then the cues it relies on that read like the task.
func (r *Result) Story() string {
	var b strings.Builder
	r.writeStory(&b)
	return strings.TrimSpace(b.String())
}

func (r *Result) writeStory(w io.Writer) {
	p := func(format string, args ...any) { fmt.Fprintf(w, format, args...) }
	var acted []*Candidate
	for k := range r.Ranked {
		if r.Ranked[k].Verdict == VerdictActed {
			acted = append(acted, &r.Ranked[k])
		}
	}
	var unsettled []*Candidate
	for k := range r.Ranked {
		if r.Ranked[k].NotRuledOut() != "" {
			unsettled = append(unsettled, &r.Ranked[k])
		}
	}
	if len(acted) == 0 {
		p("No cue that looks like how the data was collected changes this model's predictions measurably on the\n")
		switch {
		case len(unsettled) > 0:
			p("confirming half of the test texts, which took no part in choosing it, so the audit acts on none; but that\n")
			p("does not rule out the cues below, which also look like how the data was collected:\n")
			r.writeNotRuledOut(p, unsettled)
		case len(r.Action.Marked) > 0:
			p("confirming half of the test texts, which took no part in choosing it: by its measures the audit acts on none.\n")
		default:
			p("confirming half of the test texts, which took no part in choosing it: there is nothing to act on.\n")
		}
		r.writeMarked(p, false)
	} else {
		p("The model depends on %s that look%s like how the data was collected rather than like the task:\n",
			wording.Count(len(acted), "cue", "cues"), map[bool]string{true: "s", false: ""}[len(acted) == 1])
		for n, c := range acted {
			cr := c.Confirmed
			share := float64(cr.Texts) / float64(max(1, r.ConfirmationTexts))
			at := "in"
			if c.Position != "" {
				at = "at the " + c.Position + " of"
			}
			p("\n  %d. %s, %s %s of the confirming test texts (and of %d training texts, %s of them %s).\n",
				n+1, c.name(), at, fmtPct(share), c.Association.Texts, fmtPct(c.Association.Share), c.Label)
			why := c.why()
			p("     It looks like a collection artifact because %s.\n", why)
			p("     Replacing it by neutral words changes %s of the predictions on the texts that hold it, against %s\n",
				interval(cr.FlipRate), interval(cr.ControlFlipRate))
			p("     when the same words are put elsewhere; it decides %s of all predictions on the confirming half.\n", interval(cr.Decided))
			if !(cr.NetFlipRate.Low > 0) {
				// Confirmed by the flips' direction alone (FlipsConfirmed):
				// say so, since the rates' intervals overlap.
				p("     %s flip more with it replaced than kept, %d fewer (one-sided exact sign test p = %s): few, but all one way.\n",
					wording.Texts(cr.More), cr.Fewer, pval(cr.FlipP))
			}
			if cf := cr.Conflict; cf != nil {
				p("     On the %d of those texts whose label is not %s, accuracy goes from %s to %s without it\n",
					cf.Texts, c.Label, accuracy(cf.Before), accuracy(cf.After))
				p("     (%s fixed, %d broken, two-sided exact McNemar p = %s).\n",
					wording.Count(cf.Fixed, "prediction", "predictions"), cf.Broken, pval(cf.P))
			}
			// A shift found on the choosing half (among the reasons above or
			// not) is shown as the confirming half measures it.
			for _, l := range c.confirmedShiftLines() {
				p("     %s\n", l)
			}
		}
		if cf := r.Action.Counterfactual; cf != nil {
			p("\nWithout %s the model scores %s on the %d confirming test texts, against %s as they are;\n",
				map[bool]string{true: "it", false: "them"}[len(acted) == 1], accuracy(cf.AccuracyWithout), cf.Texts, accuracy(cf.Accuracy))
			p("on the %d of them that hold %s: %s, against %s (%s fixed, %d broken, p = %s).\n",
				cf.CueTexts, map[bool]string{true: "it", false: "one"}[len(acted) == 1], accuracy(cf.CueAccuracyWithout),
				accuracy(cf.CueAccuracy), wording.Count(cf.Fixed, "prediction", "predictions"), cf.Broken, pval(cf.P))
		}
		p("\n%s\n", provenance(len(acted) == 1))
		r.writeWhatToDo(p, acted)
		r.writeMarked(p, true)
		if len(unsettled) > 0 {
			p("\nThe audit acts on no other cue, but it does not rule out these, which also look like how the data was collected:\n")
			r.writeNotRuledOut(p, unsettled)
		}
	}
	r.writeTask(p)
}

// writeMarked says that retraining without the cues takes out the cues
// marked artifact that the audit does not act on (Action.Marked), as
// telltale audit --retrain and the window's Retrain do; besides says the
// audit acts on other cues. It writes nothing when there are none.
func (r *Result) writeMarked(p func(string, ...any), besides bool) {
	n := len(r.Action.Marked)
	if n == 0 {
		return
	}
	it := map[bool]string{true: "it", false: "them"}[n == 1]
	cues := make([]string, n)
	for k, c := range r.Action.Marked {
		cues[k] = "'" + oneLine(c, 70) + "'"
	}
	also := ""
	if besides {
		also = " also"
	}
	p("\nYou%s marked %s as artifact that the audit does not act on by its measures: %s.\n", also,
		wording.Count(n, "cue", "cues"), strings.Join(cues, ", "))
	if m := r.Action.RetrainedModel; m != "" {
		p("As your marks ask, this audit retrains the model's recipe without %s too, into %s (--retrain-out), and compares\n", it, m)
		p("both models on the confirming half. The patterns that take %s out of the text:\n", it)
	} else {
		p("As your marks ask, retraining without the cues (telltale audit --retrain, or Retrain in the window) takes %s out too\n", it)
		p("and compares both models on the confirming half. The patterns that take %s out of the text:\n", it)
	}
	for _, pat := range r.Action.MarkedPatterns {
		p("    %s\n", pat)
	}
}

// maxNotRuledOut is the most ConfidenceOnly cues the story names (the
// first by rank); the list of cues marks every one.
const maxNotRuledOut = 3

// writeNotRuledOut writes the first ConfidenceOnly cues: the drop in their
// label's probability that the confirming half confirms, and the flip rate
// it does not rule out; then how many more the list below holds.
func (r *Result) writeNotRuledOut(p func(string, ...any), unsettled []*Candidate) {
	for _, c := range unsettled[:min(len(unsettled), maxNotRuledOut)] {
		cr := c.Confirmed
		p("\n  - %s (%s): replacing it lowers the probability of %s by %s on its %s\n",
			c.name(), c.Label, c.Label, drop(cr.LabelDrop), wording.Count(cr.Measured, "confirming text", "confirming texts"))
		p("    (it falls in %s, rises in %d; sign test p = %s, Benjamini–Hochberg q = %s) and changes %s of their predictions,\n",
			wording.Texts(cr.Lower), cr.Higher, pval(cr.P), pval(c.ConfirmedQ), interval(cr.FlipRate))
		note := c.NotRuledOut()
		p("    against %s when the same words are put elsewhere.\n    %s.\n", interval(cr.ControlFlipRate),
			strings.Replace(strings.ToUpper(note[:1])+note[1:], ": ", ":\n    ", 1))
	}
	if more := len(unsettled) - maxNotRuledOut; more > 0 {
		p("\n  - and %s, likewise (the cues listed below say so in their verdicts).\n", wording.Count(more, "more cue", "more cues"))
	}
	them := map[bool]string{true: "it", false: "them"}[len(unsettled) == 1]
	its := map[bool]string{true: "its", false: "their"}[len(unsettled) == 1]
	unmarked := 0
	for _, c := range unsettled {
		if c.Mark != MarkArtifact {
			unmarked++
		}
	}
	if unmarked == 0 { // all marked artifact already: the story says what the retraining takes out
		p("\nA new test file with more texts holding %s measures %s flips afresh.\n", them, its)
		return
	}
	p("\nA new test file with more texts holding %s measures %s flips afresh; if you judge %s an artifact, mark %s so,\n", them, its, them, them)
	p("and retraining without the cues takes %s out too.\n", them)
}

// writeRecipeMask says, for a model trained with train --mask-tokens, that
// retraining its recipe takes those patterns out too (the retraining of
// audit --retrain and of the window does; a --mask-tokens file given to
// train by hand must list them).
func (r *Result) writeRecipeMask(p func(string, ...any)) {
	rm := r.Action.RecipeMask
	if len(rm) == 0 {
		return
	}
	p("The model's recipe takes %s out of the training text already (train --mask-tokens, recorded in the model file):\n",
		wording.Count(len(rm), "pattern", "patterns"))
	for _, pat := range rm {
		p("    %s\n", pat)
	}
	them := map[bool]string{true: "it", false: "them"}[len(rm) == 1]
	if len(r.Action.Commands) > 0 {
		p("retraining the recipe takes %s out too, and the file above lists %s after the cues.\n", them, them)
	} else {
		p("retraining the recipe takes %s out too: a --mask-tokens file for telltale train lists %s beside the cues.\n", them, them)
	}
}

// writeWhatToDo writes what to do about the cues acted on: retrain without
// them (the commands, or the patterns), keep the verdict with marks, and
// whether a mask (filters, word weights or both) helps.
func (r *Result) writeWhatToDo(p func(string, ...any), acted []*Candidate) {
	it := map[bool]string{true: "it", false: "them"}[len(acted) == 1]
	if m := r.Action.RetrainedModel; m != "" {
		p("\nWhat to do: this audit retrains the model's recipe without %s into %s (--retrain-out); compare both\n", it, m)
		p("models, with and without %s, on texts that took no part in choosing %s: the confirming half, as this audit does\n", it, it)
		p("(--confirming-out writes it to a file for telltale compare), or a new test file.\n")
	} else {
		p("\nWhat to do: retrain without %s and compare both models, with and without %s, on texts that took no part in\n", it, it)
		p("choosing %s: the confirming half (as telltale audit --retrain does) or a new test file.\n", it)
	}
	if cmds := r.Action.Commands; len(cmds) > 0 {
		p("These commands write the patterns that take %s out of the text to a file and train the model's recipe again\n", it)
		p("on its own splits without %s:\n", it)
		for _, c := range cmds {
			p("    %s\n", c)
		}
	} else {
		p("The patterns that take %s out of the text, one a line, for a --mask-tokens file of telltale train:\n", it)
		for _, pat := range r.Action.Patterns {
			p("    %s\n", pat)
		}
		if r.Action.RetrainedModel == "" {
			p("Train the model's recipe again on its own splits with that file.\n")
		}
	}
	r.writeRecipeMask(p)
	p("%s\n", markAdvice(acted))
	if t := r.Action.Tried; t != nil {
		if r.Action.Suggested() {
			p("%s, chosen on the choosing half, helps on the confirming half: accuracy %s → %s\n",
				maskTried(t), accuracy(t.Before), accuracy(t.After))
			p("(%d fixed, %d broken, one-sided exact McNemar p = %s).\n", t.Fixed, t.Broken, pval(t.P))
		} else {
			what := fmt.Sprintf("Masking the filters that read %s%s", it, wideWords(t.Words))
			if len(t.Filters) == 0 {
				what = fmt.Sprintf("Reading the words of %s, %s, as the unknown word by the word weights", it, quoted(t.Words))
			}
			p("%s, chosen on the choosing half, does not help on the confirming half\n", what)
			p("(accuracy %s → %s, %d fixed, %d broken, one-sided exact McNemar p = %s): no %s is suggested.\n",
				accuracy(t.Before), accuracy(t.After), t.Fixed, t.Broken, pval(t.P), map[bool]string{true: "filter mask", false: "mask"}[len(t.Filters) > 0])
		}
	}
}

// maskTried names the mask t: "Masking filters 3, 7" with the words it
// reads as the unknown word by the word weights (wideWords), or, for a mask
// of words only, "Reading 'a', 'b' as the unknown word by the word weights".
func maskTried(t *Ablation) string {
	if len(t.Filters) == 0 {
		return "Reading " + quoted(t.Words) + " as the unknown word by the word weights"
	}
	return "Masking filters " + ints(t.Filters) + wideWords(t.Words)
}

// writeTask writes the first cues relied on that read like the task, and
// every marked one.
func (r *Result) writeTask(p func(string, ...any)) {
	if len(r.Task) > 0 {
		p("\nThe model also relies on these, which read like the task (mark any that is an artifact):\n")
		for k, c := range r.Task {
			if k >= 8 && c.Mark == "" {
				continue
			}
			cr := c.Confirmed
			if cr == nil {
				cr = c.Reliance
			}
			marked := ""
			if c.Mark != "" {
				marked = "; you marked it " + c.Mark
			}
			switch {
			case cr.Measured == 0:
				p("  %s (%s%s): %s.\n", c.name(), c.Label, marked, tooFew(cr))
			case !c.Relied:
				p("  %s (%s%s): the confirming half does not confirm the model relies on it (replacing it, the probability of %s %s;\n",
					c.name(), c.Label, marked, c.Label, signedDrop(cr.LabelDrop))
				p("     it changes %s of the predictions on the texts that hold it, against %s when the same words are put elsewhere).\n",
					interval(cr.FlipRate), interval(cr.ControlFlipRate))
			default:
				p("  %s (%s%s): replacing it lowers the probability of %s by %s on its confirming texts and changes %s\n",
					c.name(), c.Label, marked, c.Label, drop(cr.LabelDrop), interval(cr.FlipRate))
				p("     of the predictions on the texts that hold it, against %s when the same words are put elsewhere.\n",
					interval(cr.ControlFlipRate))
			}
		}
	}
}

// provenance says where the story's figures come from: the cues were
// chosen on the choosing half; the confirming half's tests decided which
// are acted on, and its figures are those shown, so for a cue acted on
// they are the figures that passed that test.
func provenance(one bool) string {
	it, they := "them", "they"
	if one {
		it, they = "it", "it"
	}
	return fmt.Sprintf("The choosing half of the test texts chose %s; the tests on the confirming half decided that %s %s acted on,\n"+
		"and every reliance and accuracy figure above comes from that half: what passed those tests (a new test file measures\n"+
		"them afresh); the association figures come from the training split, and a label share in the choosing half only says why\n"+
		"a cue was chosen.",
		it, they, map[bool]string{true: "is", false: "are"}[one])
}

// markAdvice says which of the cues acted on (numbered from 1 as the story
// lists them) to mark as artifact, and which are marked already.
func markAdvice(acted []*Candidate) string {
	var marked, unmarked []int
	for n, c := range acted {
		if c.Mark == MarkArtifact {
			marked = append(marked, n+1)
		} else {
			unmarked = append(unmarked, n+1)
		}
	}
	switch {
	case len(unmarked) == 0 && len(acted) == 1:
		return "(You marked it as artifact: the marks file keeps this judgement with the model.)"
	case len(unmarked) == 0:
		return "(You marked them all as artifact: the marks file keeps this judgement with the model.)"
	case len(marked) == 0:
		return fmt.Sprintf("(Mark %s as artifact to keep this judgement with the model.)", map[bool]string{true: "it", false: "them"}[len(acted) == 1])
	}
	return fmt.Sprintf("(Mark %s as artifact to keep this judgement with the model; you marked %s already.)", cueNumbers(unmarked), cueNumbers(marked))
}

// cueNumbers names cues by their numbers: "cue 2", "cues 1 and 3", "cues
// 1, 2 and 4".
func cueNumbers(ns []int) string {
	if len(ns) == 1 {
		return fmt.Sprintf("cue %d", ns[0])
	}
	s := make([]string, len(ns))
	for i, n := range ns {
		s[i] = fmt.Sprint(n)
	}
	return "cues " + strings.Join(s[:len(s)-1], ", ") + " and " + s[len(s)-1]
}

// wordPart writes a word-weight part with its interval: "0.412 (0.390–0.433)".
func wordPart(x Interval) string { return accuracy(x) }

// quoted writes words in quotes, comma-separated.
func quoted(words []string) string {
	q := make([]string, len(words))
	for i, w := range words {
		q[i] = "'" + w + "'"
	}
	return strings.Join(q, ", ")
}

// wideWords says, after a filter mask, that the mask also reads words as
// the unknown word by the word-weight path: "" for none, else
// " with 'a', 'b' read as the unknown word by the word weights".
func wideWords(words []string) string {
	if len(words) == 0 {
		return ""
	}
	return " with " + quoted(words) + " read as the unknown word by the word weights"
}

func ints(xs []int) string {
	s := make([]string, len(xs))
	for i, x := range xs {
		s[i] = fmt.Sprint(x)
	}
	return strings.Join(s, ", ")
}

// WriteText writes the story, then every listed cue with its association,
// reliance and artifact-likeness lines, then how the numbers were made.
func (r *Result) WriteText(w io.Writer) error {
	bw := bufio.NewWriter(w)
	p := func(format string, args ...any) { fmt.Fprintf(bw, format, args...) }
	p("Cue audit: %d training texts; %d test texts, halved into %d for choosing and %d for confirming.\n\n",
		r.TrainTexts, r.HeldoutTexts, r.SelectionTexts, r.ConfirmationTexts)
	r.writeStory(bw)
	p("\nCues that look like how the data was collected (%d), by reliance × artifact-likeness:\n", len(r.Ranked))
	if len(r.Ranked) == 0 {
		p("  none.\n")
	}
	for n, c := range r.Ranked {
		r.writeCue(bw, n+1, &c)
	}
	p("\nRelied on, reads like the task (%d):\n", len(r.Task))
	if len(r.Task) == 0 {
		p("  none.\n")
	}
	for n, c := range r.Task {
		r.writeCue(bw, n+1, &c)
	}
	p("\nHow the numbers are made.\n")
	p("  Association: %s exact test of each word's training texts in each label, %d word × label tests corrected by %s at %g;\n",
		r.Test, r.Tests, r.Correction, r.Alpha)
	p("  words are grown into the longest phrase they keep in 80%% of their occurrences (or, failing that, into the form\n")
	p("  they are written in, with no space, in most of them), brackets into the bracketed groups they open or close;\n")
	p("  a cue passes when its p ≤ %s.\n", pval(r.Cutoff))
	p("  Reliance: each text edited %s; the sign test is one-sided;\n",
		"several times (the cue replaced by neutral words, or the same words put elsewhere)")
	p("  intervals are 95%% over texts: exact, covering at least 95%%, for the flip rates and the decided share (Clopper–Pearson\n")
	p("  where every text gives the same value, else the betting interval of Waudby-Smith & Ramdas 2024); the percentile bootstrap\n")
	p("  for the probability drops, or the same exact interval where fewer than %d texts differ from the most common value\n", ThinOffMode)
	p("  (a cue measured on so few texts seldom has its drop bounded above 0, so it is seldom confirmed).\n")
	p("  A half measures a cue, its reliance and its words' part in the word weights, only when at least %d of its texts hold it;\n", minCueTexts)
	p("  the word part's interval is a 95%% percentile bootstrap over texts, too narrow, as a rule, over few more than that.\n")
	p("  Label shift: a cue's label share in the choosing half (two-sided Fisher test, Benjamini–Hochberg over the cues there) is a\n")
	p("  signal that chooses it; the share shown is the confirming half's, with its exact Clopper–Pearson 95%% interval and the\n")
	p("  one-sided Fisher test of its being lower than in training, Holm over the cues put to the test that shifted in the choosing half.\n")
	p("  %s.\n  %s.\n", r.ArtifactFormula, r.ScoreFormula)
	return bw.Flush()
}

func (r *Result) writeCue(w io.Writer, n int, c *Candidate) {
	p := func(format string, args ...any) { fmt.Fprintf(w, format, args...) }
	verdict := map[string]string{VerdictActed: "acted on", VerdictUnconfirmed: "relied on in choosing, not confirmed",
		VerdictNotRelied: "not relied on", VerdictTask: "reads like the task"}[c.Verdict]
	if c.Mark != "" {
		verdict += ", marked " + c.Mark
	}
	if note := c.NotRuledOut(); note != "" {
		verdict += "; " + note
	}
	p("\n%d. %s → %s (%s)\n", n, c.name(), c.Label, verdict)
	as := c.Association
	p("   association: in %d training texts, %s %s; p = %s, corrected %s\n", as.Texts, fmtPct(as.Share), c.Label, pval(as.P), pval(as.Adjusted))
	if cr := c.Confirmed; cr != nil && cr.Measured == 0 {
		p("   reliance: %s\n", tooFew(cr))
	} else if cr != nil {
		p("   reliance: replacing it changes %s of %d confirming texts' predictions, elsewhere %s, net %s (sign test p = %s);\n",
			interval(cr.FlipRate), cr.Measured, interval(cr.ControlFlipRate), interval(cr.NetFlipRate), pval(cr.FlipP))
		p("     p(%s) drops %s on average, p(prediction) %s; p(%s) falls in %s, rises in %d (sign test p = %s)\n", c.Label,
			accuracy(cr.LabelDrop), accuracy(cr.ProbDrop), c.Label, wording.Texts(cr.Lower), cr.Higher, pval(cr.P))
		for _, ex := range cr.Examples {
			p("     %s → %s (gold %s): %s\n", ex.Pred, ex.After, ex.Gold, ex.Snippet)
		}
	}
	p("   artifact-likeness (rule score) %.2f:", c.ArtifactLikeness)
	for _, s := range c.Signals {
		if s.Value > 0 {
			p(" %s %.2f;", s.Name, s.Value)
		}
	}
	p("\n")
	if says := c.ConfirmedShiftSays(); says != "" {
		p("   label share: %s\n", says)
	}
	if f := c.Filters; f != nil && f.Ablation != nil {
		ab := f.Ablation
		p("   filters reading it: %s; masked%s: accuracy %s → %s (%d fixed, %d broken, one-sided exact McNemar p = %s), %d of its %d texts change\n",
			ints(f.Keyed), wideWords(ab.Words), accuracy(ab.Before), accuracy(ab.After), ab.Fixed, ab.Broken, pval(ab.P), ab.CueFlipped, ab.CueTexts)
	}
	if f := c.Filters; f != nil && f.WordPart != nil {
		p("   word weights: its words %s add %s to the centred logit of %s on its test texts, against the unknown word's\n",
			quoted(f.Words), wordPart(*f.WordPart), c.Label)
		p("     (mean over the texts, 95%% percentile bootstrap interval over texts); read as the unknown word, as the mask reads them, they add nothing\n")
	} else if f != nil && len(f.Words) > 0 {
		p("   word weights: its words %s: %s\n", quoted(f.Words), tooFewTexts(f.WordTexts))
	}
}

package audit

import (
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"
)

// storyOf is the story of an audit that acts on cues named words, marked
// as given ("" for none), with the retraining commands cmds (nil: none
// rendered).
func storyOf(marks []string, cmds []string) string {
	r := &Result{ConfirmationTexts: 100, Action: Action{Commands: cmds}}
	for k, mark := range marks {
		w := []string{"stamp", "footer", "tag"}[k]
		r.Ranked = append(r.Ranked, Candidate{Words: []string{w}, Text: w, Label: "spam", Verdict: VerdictActed, Mark: mark,
			Confirmed: &Reliance{Texts: 10}, Association: CueAssociation{Texts: 20}})
		r.Action.Cues = append(r.Action.Cues, w)
		r.Action.Patterns = append(r.Action.Patterns, pattern([]string{w}))
	}
	return r.Story()
}

// The story's advice on marks honours them: it asks to mark only the cues
// acted on that are not marked artifact yet, by their number in the story,
// and says so when all are.
func TestStoryMarks(t *testing.T) {
	for _, c := range []struct {
		marks []string
		want  string
	}{
		{[]string{""}, "(Mark it as artifact to keep this judgement with the model.)"},
		{[]string{"", ""}, "(Mark them as artifact to keep this judgement with the model.)"},
		{[]string{MarkArtifact}, "(You marked it as artifact: the marks file keeps this judgement with the model.)"},
		{[]string{MarkArtifact, MarkArtifact}, "(You marked them all as artifact: the marks file keeps this judgement with the model.)"},
		{[]string{MarkArtifact, ""}, "(Mark cue 2 as artifact to keep this judgement with the model; you marked cue 1 already.)"},
		{[]string{"", MarkArtifact, ""}, "(Mark cues 1 and 3 as artifact to keep this judgement with the model; you marked cue 2 already.)"},
	} {
		story := storyOf(c.marks, nil)
		if !strings.Contains(story, c.want) {
			t.Errorf("marks %q: the story lacks %q:\n%s", c.marks, c.want, story)
		}
		if strings.Count(story, "(Mark")+strings.Count(story, "(You marked") != 1 {
			t.Errorf("marks %q: not one word on the marks:\n%s", c.marks, story)
		}
	}
}

// The story shows the retraining commands the caller renders, whole and in
// order, and without them the patterns.
func TestStoryCommands(t *testing.T) {
	cmds := []string{"printf '%s\\n' '/(?i)\\bstamp\\b/' > m.cues", "telltale train --data d.csv --test t.csv --mask-tokens m.cues --out m-without.tt"}
	story := storyOf([]string{""}, cmds)
	at := strings.Index(story, "    "+cmds[0]+"\n    "+cmds[1]+"\n")
	if at < 0 {
		t.Errorf("the story lacks the commands, one a line:\n%s", story)
	}
	if strings.Contains(story, "--mask-tokens file of telltale train") {
		t.Errorf("the story describes in words what its commands do:\n%s", story)
	}
	story = storyOf([]string{""}, nil)
	if !strings.Contains(story, "    "+pattern([]string{"stamp"})+"\n") || strings.Contains(story, "telltale train --data") {
		t.Errorf("without commands the story lists the patterns and names no command line:\n%s", story)
	}
}

// With the retrained model written by the audit (Options.RetrainedModel),
// the story names its file for the comparison and lists the patterns, and
// suggests no retraining into a file.
func TestStoryRetrainedModel(t *testing.T) {
	r := &Result{ConfirmationTexts: 100, Action: Action{RetrainedModel: "m-without.tt"}}
	r.Ranked = append(r.Ranked, Candidate{Words: []string{"stamp"}, Text: "stamp", Label: "spam", Verdict: VerdictActed,
		Confirmed: &Reliance{Texts: 10}, Association: CueAssociation{Texts: 20}})
	r.Action.Cues, r.Action.Patterns = []string{"stamp"}, []string{pattern([]string{"stamp"})}
	story := r.Story()
	if !strings.Contains(story, "retrains the model's recipe without it into m-without.tt (--retrain-out)") ||
		!strings.Contains(story, "    "+pattern([]string{"stamp"})+"\n") {
		t.Errorf("the story does not name the retrained model's file or lacks the patterns:\n%s", story)
	}
	if strings.Contains(story, "Train the model's recipe again") || strings.Contains(story, "--out") {
		t.Errorf("the story suggests retraining into a file though the audit writes the retrained model:\n%s", story)
	}
}

// The story names the first eight cues that read like the task, and every
// one marked task after them, saying so.
func TestStoryTaskMarks(t *testing.T) {
	r := &Result{}
	for k := range 10 {
		c := Candidate{Words: []string{fmt.Sprint("word", k)}, Text: fmt.Sprint("word", k), Label: "ham", Verdict: VerdictTask,
			Confirmed: &Reliance{Texts: 10}}
		if k == 9 {
			c.Mark = MarkTask
		}
		r.Task = append(r.Task, c)
	}
	story := r.Story()
	if !strings.Contains(story, "the word 'word7' (ham)") || strings.Contains(story, "'word8'") {
		t.Errorf("the story does not name the first eight cues alone:\n%s", story)
	}
	if !strings.Contains(story, "the word 'word9' (ham; you marked it task)") {
		t.Errorf("the story does not name the cue marked task:\n%s", story)
	}
}

// The task list keeps a cue only when the confirmation half confirms the
// model relies on it: the sign test significant after Benjamini–Hochberg
// over the list, the interval of the label's probability drop above 0,
// and the flips confirmed (the net flip rate's interval above 0, or the
// flips' sign test at 2.5%); a cue too rare there to measure is not
// confirmed; a cue a person marked stays listed, unconfirmed.
func TestConfirmedTask(t *testing.T) {
	a := &auditor{opt: Options{RelianceAlpha: 0.05}}
	relFlips := func(p, dropLow, netLow, flipP float64, measured int) *Reliance {
		return &Reliance{Texts: max(measured, 1), Measured: measured, P: p, FlipP: flipP,
			LabelDrop: Interval{Estimate: dropLow + 0.05, Low: dropLow, High: dropLow + 0.1}, NetFlipRate: Interval{Estimate: netLow + 0.05, Low: netLow, High: netLow + 0.1}}
	}
	rel := func(p, dropLow, netLow float64, measured int) *Reliance {
		return relFlips(p, dropLow, netLow, 1, measured)
	}
	task := []Candidate{
		{Text: "confirmed", Confirmed: rel(0.001, 0.02, 0.01, 40)},
		{Text: "flips by their sign test", Confirmed: relFlips(0.001, 0.02, 0, 0.016, 40)},
		{Text: "drop interval at 0", Confirmed: rel(0.001, 0, 0.01, 40)},
		{Text: "no prediction changes", Confirmed: relFlips(0.001, 0.02, 0, 0.031, 40)},
		{Text: "sign test p 0.12", Confirmed: rel(0.12, 0.02, 0.01, 40)},
		{Text: "too few texts", Confirmed: &Reliance{Texts: 1, P: 1}},
		{Text: "marked, unconfirmed", Mark: MarkTask, Confirmed: rel(0.5, -0.1, -0.1, 40)},
	}
	got := a.confirmedTask(task)
	var names []string
	for _, c := range got {
		names = append(names, fmt.Sprintf("%s:%v", c.Text, c.Relied))
	}
	if want := "confirmed:true flips by their sign test:true marked, unconfirmed:false"; strings.Join(names, " ") != want {
		t.Errorf("task list %q, want %q", strings.Join(names, " "), want)
	}
	// Benjamini–Hochberg over the list: 0.001 among seven p-values is
	// about 0.002 adjusted.
	if q := got[0].ConfirmedQ; q <= 0.001 || q > 0.05 {
		t.Errorf("adjusted p %g of the confirmed cue", q)
	}
}

// Every measured figure of the story carries its interval or test: the
// accuracies of a cue's conflicting texts and of the mask with their
// Wilson intervals and the change's exact McNemar test; a cue too rare in
// the confirming half is said to be, with no interval over its texts.
func TestStoryFiguresCarryIntervals(t *testing.T) {
	before, after := wilsonInterval(71, 132), wilsonInterval(119, 132)
	cf := &Conflict{Texts: 132, Accuracy: before.Estimate, AccuracyReplaced: 0.9, Before: before, After: after, Fixed: 50, Broken: 2,
		P: mcNemarTwoSided(50, 2)}
	r := &Result{ConfirmationTexts: 400, Action: Action{Tried: &Ablation{Filters: []int{3}, Texts: 400,
		Before: wilsonInterval(300, 400), After: wilsonInterval(347, 400), Fixed: 60, Broken: 13, P: SignTest(60, 13)}}}
	r.Ranked = []Candidate{{Words: []string{"stamp"}, Text: "stamp", Label: "spam", Verdict: VerdictActed, Relied: true,
		Confirmed: &Reliance{Texts: 150, Measured: 150, Conflict: cf}, Association: CueAssociation{Texts: 20}}}
	r.Task = []Candidate{{Words: []string{"refund"}, Text: "refund", Label: "ham", Verdict: VerdictTask, Mark: MarkTask,
		Confirmed: &Reliance{Texts: 1, P: 1}}}
	story := r.Story()
	for _, want := range []string{
		"accuracy goes from " + accuracy(before) + " to " + accuracy(after) + " without it",
		fmt.Sprintf("(50 predictions fixed, 2 broken, two-sided exact McNemar p = %s)", pval(cf.P)),
		"accuracy " + accuracy(wilsonInterval(300, 400)) + " → " + accuracy(wilsonInterval(347, 400)),
		"too few texts (1) to measure",
	} {
		if !strings.Contains(story, want) {
			t.Errorf("the story lacks %q:\n%s", want, story)
		}
	}
	for _, line := range strings.Split(story, "\n") {
		if strings.Contains(line, "'refund'") && strings.Contains(line, "–") {
			t.Errorf("the story shows an interval over the one text of a cue: %s", line)
		}
	}
}

// storyOfHalves is the story of an audit that acts on one cue and lists one
// cue relied on that reads like the task and one it does not confirm,
// every rate with a net rate (less the control) unlike the rate itself.
func storyOfHalves() (*Result, string) {
	rel := func(flip, control, net Interval) *Reliance {
		return &Reliance{Texts: 25, Measured: 25, FlipRate: flip, ControlFlipRate: control, NetFlipRate: net,
			LabelDrop: Interval{Estimate: 0.148, Low: 0.102, High: 0.201}, Decided: Interval{Estimate: 0.011, Low: 0.002, High: 0.022}}
	}
	r := &Result{ConfirmationTexts: 400, SelectionTexts: 400, HeldoutTexts: 800}
	r.Ranked = []Candidate{{Words: []string{"stamp"}, Text: "stamp", Label: "spam", Verdict: VerdictActed, Relied: true,
		Association: CueAssociation{Texts: 20},
		Confirmed:   rel(Interval{Estimate: 0.241, Low: 0.181, High: 0.307}, Interval{Estimate: 0.084, Low: 0.051, High: 0.119}, Interval{Estimate: 0.157, Low: 0.1, High: 0.2})}}
	r.Task = []Candidate{
		{Words: []string{"book"}, Text: "book", Label: "bookings", Verdict: VerdictTask, Relied: true,
			Confirmed: rel(Interval{Estimate: 0.187, Low: 0.067, High: 0.347}, Interval{Estimate: 0.013, Low: 0, High: 0.053}, Interval{Estimate: 0.17, Low: 0.04, High: 0.32})},
		{Words: []string{"ferry"}, Text: "ferry", Label: "timetable", Verdict: VerdictTask, Mark: MarkTask,
			Confirmed: rel(Interval{Estimate: 0.052, Low: 0.01, High: 0.1}, Interval{Estimate: 0.031, Low: 0, High: 0.07}, Interval{Estimate: 0.021, Low: -0.02, High: 0.06})},
	}
	r.Action = Action{Cues: []string{"stamp"}, Patterns: []string{pattern([]string{"stamp"})},
		Counterfactual: &Counterfactual{Texts: 400, CueTexts: 25, Accuracy: wilsonInterval(333, 400), AccuracyWithout: wilsonInterval(361, 400),
			CueAccuracy: wilsonInterval(10, 25), CueAccuracyWithout: wilsonInterval(20, 25), Fixed: 12, Broken: 2, P: mcNemarTwoSided(12, 2)},
		Tried: &Ablation{Filters: []int{3}, Texts: 400, Before: wilsonInterval(333, 400), After: wilsonInterval(358, 400), Fixed: 30, Broken: 5,
			P: SignTest(30, 5)}}
	r.Action.Mask = []int{3}
	return r, r.Story()
}

// The story names the half each figure comes from: the cue's share, what
// it decides and the accuracy without it are the confirming half's (the
// eval of the whole test file scores other texts); the cues were chosen on
// the choosing half, the confirming half's tests decided to act, so its
// effects are what passed that test; the mask was chosen on the choosing
// half and tested on the confirming one; and the models are to be compared
// on texts that took no part in choosing the cues.
func TestStoryNamesTheHalves(t *testing.T) {
	_, story := storyOfHalves()
	for _, want := range []string{
		"of the confirming test texts (and of 20 training texts",
		"of all predictions on the confirming half.",
		"on the 400 confirming test texts, against " + accuracy(wilsonInterval(333, 400)) + " as they are",
		"on the 25 of them that hold it:",
		"The choosing half of the test texts chose it; the tests on the confirming half decided that it is acted on,\n" +
			"and every reliance and accuracy figure above comes from that half: what passed those tests",
		"the association figures come from the training split, and a label share in the choosing half only says why\na cue was chosen.",
		"Masking filters 3, chosen on the choosing half, helps on the confirming half",
		"on texts that took no part in\nchoosing it: the confirming half (as telltale audit --retrain does) or a new test file.",
	} {
		if !strings.Contains(story, want) {
			t.Errorf("the story lacks %q:\n%s", want, story)
		}
	}
	for _, bad := range []string{"on the test texts", "helps on test texts that took no part", "and every figure above comes from that half"} {
		if strings.Contains(story, bad) {
			t.Errorf("the story says %q, which does not name the half:\n%s", bad, story)
		}
	}
}

// "changes X% of the predictions" has one meaning throughout the story, the
// one its label says: the share of predictions replacing the cue changes on
// the texts that hold it, with the control (the same words put elsewhere)
// beside it, for the cues acted on and for those that read like the task;
// the net rate (the two's difference) is never shown under that label.
func TestStoryOneFlipRate(t *testing.T) {
	r, story := storyOfHalves()
	for _, c := range append(slices.Clone(r.Ranked), r.Task...) {
		cr := c.Confirmed
		want := interval(cr.FlipRate) + " of the predictions on the texts that hold it, against " + interval(cr.ControlFlipRate)
		if !strings.Contains(strings.Join(strings.Fields(story), " "), want) {
			t.Errorf("%s: the story lacks %q:\n%s", c.Text, want, story)
		}
		if strings.Contains(story, interval(cr.NetFlipRate)) {
			t.Errorf("%s: the story shows the net rate %s:\n%s", c.Text, interval(cr.NetFlipRate), story)
		}
	}
}

// Figures never read "-0.000" or 0.000 for a value that is not zero: zero
// of either sign is written 0.000, a nonzero value three decimals would
// round to 0 gets two significant digits (Figure), others three decimals.
func TestDec3(t *testing.T) {
	for _, c := range []struct {
		x    Interval
		want string
	}{
		{Interval{Estimate: math.Copysign(0, -1), Low: math.Copysign(0, -1)}, "0.000 (0.000–0.000)"},
		{Interval{Estimate: -1e-7, Low: -3e-7, High: 2e-7}, "-1e-07 (-3e-07–2e-07)"},
		{Interval{Estimate: 0.065, Low: 0.033, High: 0.108}, "0.065 (0.033–0.108)"},
		{Interval{Estimate: -0.0126, Low: -0.0304, High: 0.0004}, "-0.013 (-0.030–0.0004)"},
	} {
		if got := accuracy(c.x); got != c.want {
			t.Errorf("accuracy(%+v) = %q, want %q", c.x, got, c.want)
		}
	}
}

// A cue whose label's probability drop the confirming half confirms but
// whose flips it does not (ConfidenceOnly; a model sure of every text
// flips none) is not acted on, and the story says what that leaves open
// rather than a clean bill: the confidence resting on it, and the flip
// rate its interval does not rule out, the Clopper–Pearson bound for 0 of
// 14 texts, 1 − 0.025^(1/14) = 23% (Clopper & Pearson 1934). The verdict
// line of the cue says it too, for every such cue; the story names the
// first three and counts the rest. The figures are the practitioner's
// SpamAssassin walkthrough's.
func TestStoryNotRuledOut(t *testing.T) {
	unsettled := func(flip Interval) Candidate {
		return Candidate{Words: []string{"http"}, Text: "http", Label: "ham", Verdict: VerdictUnconfirmed, ConfidenceOnly: true,
			ConfirmedQ: 0.0012, Association: CueAssociation{Texts: 300},
			Confirmed: &Reliance{Texts: 14, Measured: 14, Draws: 1, Lower: 14, P: 6.1e-05, FlipRate: flip, ControlFlipRate: flip, NetFlipRate: flip,
				LabelDrop: Interval{Estimate: 0.065, Low: 0.033, High: 0.108}}}
	}
	none := MeanIntervalIn(make([]float64, 14), 0, 1, 100, 0.95, 1)
	some := Interval{Estimate: 0.07, Low: 0, High: 0.21}
	acted := Candidate{Words: []string{"stamp"}, Text: "stamp", Label: "spam", Verdict: VerdictActed,
		Confirmed: &Reliance{Texts: 10, Measured: 10}, Association: CueAssociation{Texts: 20}}
	for _, c := range []struct {
		name   string
		ranked []Candidate
		want   []string
		not    []string
	}{
		{"none acted on, no flip", []Candidate{unsettled(none)},
			[]string{"acts on none; but that\ndoes not rule out", "by 0.065 (0.033–0.108) on its 14 confirming texts",
				"though no prediction changed:\n    with 14 texts, a flip rate beyond the control of up to 23% is not ruled out"},
			[]string{"nothing to act on"}},
		{"none acted on, flips within the control's", []Candidate{unsettled(some)},
			[]string{"did not change measurably beyond the control:\n    with 14 texts, a flip rate beyond the control of up to 21% is not ruled out"},
			[]string{"nothing to act on", "no prediction changed"}},
		{"one acted on besides", []Candidate{acted, unsettled(none)},
			[]string{"The audit acts on no other cue, but it does not rule out these", "a flip rate beyond the control of up to 23% is not ruled out"},
			nil},
		{"not confidence only", []Candidate{func() Candidate { c := unsettled(none); c.ConfidenceOnly = false; return c }()},
			[]string{"nothing to act on"}, []string{"not ruled out"}},
		{"marked artifact already", []Candidate{func() Candidate { c := unsettled(none); c.Mark = MarkArtifact; return c }()},
			[]string{"measures its flips afresh."}, []string{"mark it so"}},
		{"five, three named", []Candidate{unsettled(none), unsettled(none), unsettled(none), unsettled(some), unsettled(some)},
			[]string{"  - and 2 more cues, likewise"}, []string{"nothing to act on", "up to 21%"}},
	} {
		r := &Result{ConfirmationTexts: 100, Ranked: c.ranked}
		story := r.Story()
		checkStory(t, c.name, story, c.want, c.not)
		var b strings.Builder
		if err := r.WriteText(&b); err != nil {
			t.Fatal(err)
		}
		line := "→ ham (relied on in choosing, not confirmed; the model's confidence in ham rests on it on its confirming texts"
		want := 0
		for _, cand := range c.ranked {
			if cand.ConfidenceOnly && cand.Mark == "" { // a marked cue's line shows the mark in its place
				want++
			}
		}
		if got := strings.Count(b.String(), line); got != want {
			t.Errorf("%s: the cue's verdict line holds %q: %v\n%s", c.name, line, got, b.String())
		}
	}
}

// Cues marked artifact that the audit does not act on are taken out by
// retraining without the cues (telltale audit --retrain, the window's
// Retrain: the acted-on cues' patterns and the marks'), so the story says
// so, above such a retraining, instead of "nothing to act on"; with the
// retrained model's file, it names the file.
func TestStoryMarkedNotActed(t *testing.T) {
	pat := pattern([]string{"re", ":"})
	acted := Candidate{Words: []string{"stamp"}, Text: "stamp", Label: "spam", Verdict: VerdictActed,
		Confirmed: &Reliance{Texts: 10, Measured: 10}, Association: CueAssociation{Texts: 20}}
	for _, c := range []struct {
		name   string
		ranked []Candidate
		marked []string
		model  string
		want   []string
		not    []string
	}{
		{"no mark", nil, nil, "", []string{"there is nothing to act on"}, []string{"You marked"}},
		{"marked, none acted on", nil, []string{"re :"}, "",
			[]string{"by its measures the audit acts on none", "You marked 1 cue as artifact that the audit does not act on by its measures: 're :'",
				"telltale audit --retrain, or Retrain in the window) takes it out too", "    " + pat},
			[]string{"nothing to act on"}},
		{"marked, none acted on, retrained into a file", nil, []string{"re :"}, "m-without.tt",
			[]string{"this audit retrains the model's recipe without it too, into m-without.tt (--retrain-out)"},
			[]string{"nothing to act on"}},
		{"marked besides a cue acted on", []Candidate{acted}, []string{"re :"}, "",
			[]string{"You also marked 1 cue as artifact", "    " + pat}, []string{"nothing to act on"}},
	} {
		r := &Result{ConfirmationTexts: 100, Ranked: c.ranked, Action: Action{RetrainedModel: c.model}}
		if len(c.ranked) > 0 {
			r.Action.Cues, r.Action.Patterns = []string{"stamp"}, []string{pattern([]string{"stamp"})}
		}
		for _, m := range c.marked {
			r.Action.Marked = append(r.Action.Marked, m)
			r.Action.MarkedPatterns = append(r.Action.MarkedPatterns, pattern(strings.Fields(m)))
		}
		story := r.Story()
		checkStory(t, c.name, story, c.want, c.not)
	}
}

// The action names the cues marked artifact that it does not act on, with
// the patterns Marks.Patterns gives them (those retraining takes out), and
// leaves out a marked cue it acts on.
func TestActionMarked(t *testing.T) {
	mk := NewMarks()
	for _, ws := range [][]string{{"re", ":"}, {"stamp"}} {
		if err := mk.Set(ws, MarkArtifact); err != nil {
			t.Fatal(err)
		}
	}
	if err := mk.Set([]string{"not"}, MarkTask); err != nil {
		t.Fatal(err)
	}
	a := &auditor{opt: Options{Marks: mk, RetrainedModel: "m-without.tt"}, progress: func(string, int, int) {}}
	for _, c := range []struct {
		name   string
		ranked []Candidate
		want   []string
	}{
		{"none acted on", nil, []string{"re :", "stamp"}},
		{"the stamp acted on", []Candidate{{Words: []string{"stamp"}, Text: "stamp", Verdict: VerdictActed, Pattern: pattern([]string{"stamp"})}}, []string{"re :"}},
	} {
		res := &Result{Ranked: c.ranked}
		if len(c.ranked) > 0 {
			// The stamp's pattern stands in the action as acting on it puts
			// it there (acting itself measures the counterfactual split,
			// which needs a model).
			res.Ranked[0].Verdict = VerdictUnconfirmed
			res.Action.Patterns = []string{c.ranked[0].Pattern}
		}
		if err := a.act(t.Context(), res); err != nil {
			t.Fatal(err)
		}
		var wantPats []string
		for _, w := range c.want {
			wantPats = append(wantPats, pattern(strings.Fields(w)))
		}
		if !slices.Equal(res.Action.Marked, c.want) || !slices.Equal(res.Action.MarkedPatterns, wantPats) || res.Action.RetrainedModel != "m-without.tt" {
			t.Errorf("%s: marked %q, patterns %q, retrained model %q; want %q, %q, m-without.tt", c.name,
				res.Action.Marked, res.Action.MarkedPatterns, res.Action.RetrainedModel, c.want, wantPats)
		}
	}
}

// TestSettle: a cue put to the test is acted on when its drop's adjusted
// p-value passes, the interval of its drop lies above 0 and its flips are
// confirmed (its net flip rate's interval above 0, or the flips' sign
// test p at most 0.025); with the flips failing it is marked
// ConfidenceOnly only for
// a mean drop of at least minConfidenceDrop; otherwise it keeps its
// verdict. (Identities of the rule; the numbers are
// invented.)
func TestSettle(t *testing.T) {
	for _, c := range []struct {
		name                     string
		q, drop, dropLow, netLow float64
		acted, confidence        bool
		flipP                    float64
	}{
		{"acted", 0.001, 0.2, 0.15, 0.01, true, false, 1},
		{"acted on the flips' sign test", 0.001, 0.2, 0.15, 0, true, false, 0.016},
		{"flips' sign test at 0.031", 0.001, 0.2, 0.15, 0, false, true, 0.031},
		{"flips fail, drop large", 0.001, 0.065, 0.033, 0, false, true, 1},
		{"flips fail, drop tiny", 0.001, 0.0004, 0.0002, 0, false, false, 1},
		{"flips fail, drop's interval reaches 0", 0.001, 0.065, -0.01, 0, false, false, 1},
		{"drop's interval reaches 0", 0.001, 0.2, 0, 0.01, false, false, 1},
		{"drop test fails", 0.2, 0.2, 0.15, 0.01, false, false, 1},
		{"no drop", 0.001, 0, 0, 0.01, false, false, 1},
	} {
		cand := Candidate{Verdict: VerdictUnconfirmed, Confirmed: &Reliance{Measured: 40, FlipP: c.flipP}}
		cand.Confirmed.LabelDrop.Estimate, cand.Confirmed.LabelDrop.Low, cand.Confirmed.NetFlipRate.Low = c.drop, c.dropLow, c.netLow
		cand.settle(c.q, 0.05)
		if (cand.Verdict == VerdictActed) != c.acted || cand.Relied != c.acted || cand.ConfidenceOnly != c.confidence || cand.ConfirmedQ != c.q {
			t.Errorf("%s: verdict %s relied %v confidence-only %v q %g", c.name, cand.Verdict, cand.Relied, cand.ConfidenceOnly, cand.ConfirmedQ)
		}
	}
}

// checkStory reports, for the case named, each of want the story lacks and
// each of not it holds.
func checkStory(t *testing.T, name, story string, want, not []string) {
	t.Helper()
	for _, w := range want {
		if !strings.Contains(story, w) {
			t.Errorf("%s: the story lacks %q:\n%s", name, w, story)
		}
	}
	for _, w := range not {
		if strings.Contains(story, w) {
			t.Errorf("%s: the story says %q:\n%s", name, w, story)
		}
	}
}

// A cue acted on whose choosing half shows a shift has its label share
// shown as the confirming half measures it, with its interval and its
// test, and said plainly when that half does not show it lower; a share
// found lower says in the same sentence that the test leans that way (the
// training share it is tested against chose the cue); the choosing half's
// share, which took part in choosing the cue, is not shown as evidence. The figures are invented; the wording is what is
// checked (the test's values against SciPy: TestConfirmedShiftSciPy).
func TestStoryConfirmedShift(t *testing.T) {
	cases := []struct {
		name     string
		in       int
		p, holm  float64
		lower    bool
		want     string
		wantNext string
	}{
		{"lower", 3, 1.2e-9, 2.4e-9, true,
			"On the confirming half, 3 of the 20 texts holding it are spam, 15% (3.2–38%), against 90% in training: lower beyond chance",
			"     (one-sided Fisher p = 1.2e-09; Holm p = 2.4e-09 over the 2 cues whose shift it tests;\n" +
				"     the training share chose the cue, so the test leans towards finding it lower).\n"},
		{"not beyond chance", 16, 0.3, 0.6, false,
			"On the confirming half, 16 of the 20 texts holding it are spam, 80% (56–94%), against 90% in training: not lower beyond chance",
			"     (one-sided Fisher p = 0.3; Holm p = 0.6 over the 2 cues whose shift it tests), so the confirming half does not show the shift.\n"},
		{"no lower", 19, 0.9, 1, false,
			"On the confirming half, 19 of the 20 texts holding it are spam, 95% (75–100%), against 90% in training: no lower",
			"     (one-sided Fisher p = 0.9; Holm p = 1 over the 2 cues whose shift it tests), so the confirming half does not show the shift.\n"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			r, _ := storyOfHalves()
			c := &r.Ranked[0]
			c.Signals = []Signal{{Name: SignalShift, Value: 1, Weight: signalWeights[SignalShift],
				Says: shiftSays + " only 5.0% of those holding it are spam, against 90% in training"}}
			c.Shift = &Shift{HeldoutTexts: 20, HeldoutShare: 0.05, TrainShare: 0.9, Present: true}
			lo, hi := ClopperPearson(tc.in, 20, 0.95)
			c.ShiftConfirmed = &ConfirmedShift{Texts: 20, InLabel: tc.in, Share: Interval{Estimate: float64(tc.in) / 20, Low: lo, High: hi},
				TrainShare: 0.9, P: tc.p, Holm: tc.holm, Family: 2, Lower: tc.lower}
			story := r.Story()
			if !strings.Contains(story, "     "+tc.want+"\n"+tc.wantNext) {
				t.Errorf("the story lacks\n%s\n%s\nin:\n%s", tc.want, tc.wantNext, story)
			}
			// The reason it was chosen keeps the choosing half's share, named so.
			if !strings.Contains(story, "because in the choosing half of the test texts only 5.0%") {
				t.Errorf("the story drops the reason the cue was chosen:\n%s", story)
			}
			if strings.Contains(story, "The choosing half shows") {
				t.Errorf("the story shows the choosing half's share as evidence:\n%s", story)
			}
			var b strings.Builder
			if err := r.WriteText(&b); err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(b.String(), "   label share: "+tc.want+" "+strings.Join(strings.Fields(tc.wantNext), " ")) {
				t.Errorf("the cue's lines lack its confirmed shift:\n%s", b.String())
			}
		})
	}
	// A family of one needs no correction, and says so.
	r, _ := storyOfHalves()
	r.Ranked[0].Shift = &Shift{Present: true}
	r.Ranked[0].ShiftConfirmed = &ConfirmedShift{Texts: 20, InLabel: 3, Share: Interval{Estimate: 0.15}, TrainShare: 0.9, P: 1e-9, Holm: 1e-9, Family: 1, Lower: true}
	if story := r.Story(); !strings.Contains(story, "lower beyond chance\n     (one-sided Fisher p = 1e-09, the one cue whose shift it tests;\n"+
		"     the training share chose the cue, so the test leans towards finding it lower).") {
		t.Errorf("a family of one is not told as such:\n%s", story)
	}
	// Outside the family (no shift in the choosing half), nothing is said.
	r, _ = storyOfHalves()
	r.Ranked[0].ShiftConfirmed = &ConfirmedShift{Texts: 20, InLabel: 3, Share: Interval{Estimate: 0.15}, TrainShare: 0.9, P: 1e-9}
	if story := r.Story(); strings.Contains(story, "On the confirming half, 3 of") {
		t.Errorf("a cue outside the family has its confirmed shift told:\n%s", story)
	}
}

// A cue acted on by the direction of its flips alone (6 texts flip more
// with it replaced, none fewer: the exact sign test p = 0.5⁶, while the
// net flip rate's interval reaches below 0) says so, since its rates'
// intervals overlap; one whose net interval lies above 0 does not.
func TestStoryFlipsByDirection(t *testing.T) {
	for _, c := range []struct {
		name   string
		netLow float64
		says   bool
	}{{"net interval reaches 0", -0.01, true}, {"net interval above 0", 0.01, false}} {
		r := &Result{ConfirmationTexts: 400}
		r.Ranked = []Candidate{{Words: []string{"stamp"}, Text: "stamp", Label: "spam", Verdict: VerdictActed, Relied: true,
			Association: CueAssociation{Texts: 20},
			Confirmed: &Reliance{Texts: 71, Measured: 71, More: 6, Fewer: 0, FlipP: SignTest(6, 0),
				FlipRate:        Interval{Estimate: 0.09, Low: 0.03, High: 0.2},
				ControlFlipRate: Interval{Estimate: 0.01, Low: 0, High: 0.07},
				NetFlipRate:     Interval{Estimate: 0.08, Low: c.netLow, High: 0.19}}}}
		r.Action = Action{Cues: []string{"stamp"}, Patterns: []string{pattern([]string{"stamp"})}}
		want := "6 texts flip more with it replaced than kept, 0 fewer (one-sided exact sign test p = " + pval(SignTest(6, 0)) + "): few, but all one way."
		if got := strings.Contains(r.Story(), want); got != c.says {
			t.Errorf("%s: the story says %q: %v, want %v:\n%s", c.name, want, got, c.says, r.Story())
		}
	}
}

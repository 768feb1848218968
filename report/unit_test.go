package report

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/plot/palette/brewer"

	auditpkg "telltale/audit"
	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
)

func TestFormats(t *testing.T) {
	for _, c := range []struct {
		got, want string
	}{
		{pct(0.8342), "83.4%"},
		{pct(1), "100.0%"},
		{pct(math.NaN()), "–"},
		{num(0.12345), "0.123"},
		{num(math.Inf(1)), "none"},
		{signed(0.5), "+0.500"},
		{signed(-0.25), "-0.250"},
		{signed(-0.0001), "0.000"},
		{count(0), "0"},
		{count(999), "999"},
		{count(1000), "1,000"},
		{count(1234567), "1,234,567"},
		{count(-4500), "-4,500"},
		{tokens(12159, corpus.Percentiles{Max: 12159}), "12,159"}, // beside the split's 2,200 texts
		{signed(0), "0.000"},
		{ints([]int{3, 0, 12}), "3, 0, 12"},
		// The cue audit's figures.
		{pvalue(0.0017), "= 0.0017"},
		{pvalue(3.2e-301), "< 1e-300"},
		{pvalue(0), "< 1e-300"},
		{interval(auditpkg.Interval{Estimate: 0.14, Low: 0.086, High: 0.191}), "14.0% (8.6–19.1%)"},
		{drop(auditpkg.Interval{Estimate: 0.001, Low: -0.046, High: 0.052}), "0.001 (-0.046 to 0.052)"},
		{drop(auditpkg.Interval{Estimate: math.Copysign(0, -1), Low: math.Copysign(0, -1)}), "0.000 (0.000 to 0.000)"}, // never "-0.000"
		// A figure three decimals would show as 0.000 gets two significant
		// digits (the export's label_drop 0.00024 (8.3e-05–0.00048) of a
		// SpamAssassin cue), so no measured figure reads as none.
		{drop(auditpkg.Interval{Estimate: 0.00024, Low: 8.3e-05, High: 0.00048}), "0.00024 (8.3e-05 to 0.00048)"},
		{drop(auditpkg.Interval{Estimate: -1e-7, Low: -3e-7, High: 2e-7}), "-1e-07 (-3e-07 to 2e-07)"},
		{accuracy(auditpkg.Interval{Estimate: 0.0004, Low: 0, High: 0.0021}), "0.0004 (0.000–0.002)"},
		{accuracy(auditpkg.Interval{Estimate: 0.9, Low: 0.867, High: 0.926}), "0.900 (0.867–0.926)"},
		{AssociationTestName(auditpkg.TestBinomial), "exact binomial test"},
		{CorrectionName(auditpkg.CorrectBonferroni), "Bonferroni"},
	} {
		if c.got != c.want {
			t.Errorf("got %q, want %q", c.got, c.want)
		}
	}
}

// TestPalette checks the attribution scale against gonum's copy of the
// ColorBrewer tables: PuOr with 11 classes is marked good for colour-blind
// readers there, its ends and middle are where the scale puts −s, 0 and +s.
func TestPalette(t *testing.T) {
	p := brewer.PuOr[11]
	if p.ColorBlind != brewer.Good {
		t.Fatalf("PuOr-11 colour-blind usability %v, want Good", p.ColorBlind)
	}
	for _, c := range []struct {
		v    float64
		want string
	}{{-2, "#7f3b08"}, {0, "#f7f7f7"}, {2, "#2d004b"}, {-10, "#7f3b08"}, {math.NaN(), "#f7f7f7"}} {
		if got := divergingAt(c.v, 2).css(); got != c.want {
			t.Errorf("divergingAt(%g, 2) = %s, want %s", c.v, got, c.want)
		}
	}
	if got := divergingAt(1, 0).css(); got != "#f7f7f7" {
		t.Errorf("zero scale gives %s, want the neutral middle", got)
	}
	// Ink: dark on the light middle, white on the dark ends (WCAG contrast).
	if ink(divergingAt(0, 1)) != "#111111" || ink(divergingAt(1, 1)) != "#ffffff" || ink(divergingAt(-1, 1)) != "#ffffff" {
		t.Error("ink colours do not follow the WCAG contrast rule on the scale's middle and ends")
	}
}

// TestReliabilityMatchesECE checks the reliability bins against the
// expected calibration error of cnn.ComputeMetrics (itself checked against
// torchmetrics' examples in package cnn): Σ n_m/n·|acc_m − conf_m| = ECE,
// on random predictions, with confidences on bin edges included.
func TestReliabilityMatchesECE(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	for trial := range 20 {
		n := 1 + rng.IntN(400)
		bins := []int{0, 1, 10, 15}[trial%4]
		gold, pred := make([]int, n), make([]int, n)
		conf := make([]float64, n)
		correct := make([]bool, n)
		for i := range n {
			gold[i], pred[i] = rng.IntN(3), rng.IntN(3)
			conf[i] = rng.Float64()
			if rng.IntN(5) == 0 {
				conf[i] = float64(rng.IntN(16)) / 15 // on an edge
			}
			correct[i] = gold[i] == pred[i]
		}
		mt := cnn.ComputeMetrics([]string{"a", "b", "c"}, gold, pred, conf, bins)
		rb := cnn.Reliability(conf, correct, bins)
		var ece float64
		total := 0
		for _, b := range rb {
			total += b.Count
			ece += float64(b.Count) / float64(n) * math.Abs(b.Acc-b.Conf)
			if b.Count > 0 && (b.Conf <= b.Lo && b.Lo > 0 || b.Conf > b.Hi+1e-12) {
				t.Errorf("trial %d: bin (%g, %g] has mean confidence %g", trial, b.Lo, b.Hi, b.Conf)
			}
		}
		if total != n {
			t.Errorf("trial %d: bins hold %d predictions of %d", trial, total, n)
		}
		if math.Abs(ece-mt.ECE) > 1e-12 {
			t.Errorf("trial %d: ECE from bins %g, cnn %g", trial, ece, mt.ECE)
		}
	}
}

// TestPaintKeepsText checks that painting gives back the original text
// exactly, gaps included, and that each token's title carries its signed
// share.
func TestPaintKeepsText(t *testing.T) {
	text := "Hi  there,\nfriend!"
	toks := []explain.TokenSpan{{Text: "hi", Start: 0, End: 2}, {Text: "there", Start: 4, End: 9}, {Text: ",", Start: 9, End: 10}, {Text: "friend", Start: 11, End: 17}, {Text: "!", Start: 17, End: 18}}
	share := []float64{0.5, -0.25, 0, 1, -1}
	segs := paint(text, toks, share, 1, "x", "y")
	var b strings.Builder
	painted := 0
	for _, s := range segs {
		b.WriteString(s.Text)
		if s.Style != "" {
			if want := fmt.Sprintf("%s: %s to log p(x)/p(y)", toks[painted].Text, signed(share[painted])); s.Title != want {
				t.Errorf("title %q, want %q", s.Title, want)
			}
			painted++
		}
	}
	if b.String() != text {
		t.Errorf("painted text %q, want %q", b.String(), text)
	}
	if painted != len(toks) {
		t.Errorf("%d tokens painted, want %d", painted, len(toks))
	}
	// Without offsets the tokens are shown by their own text.
	segs = paint("ab", []explain.TokenSpan{{Text: "a"}, {Text: "b"}}, []float64{1, 1}, 1, "x", "y")
	b.Reset()
	for _, s := range segs {
		b.WriteString(s.Text)
	}
	if b.String() != "a b" {
		t.Errorf("tokens without offsets read %q, want %q", b.String(), "a b")
	}
}

// TestCueName: a cue is named a line when most of its occurrences are a
// line of their own, else a word or words, quoted in its usual form.
func TestCueName(t *testing.T) {
	line := []auditpkg.Signal{{Name: auditpkg.SignalLine, Value: 0.98}}
	for _, c := range []struct {
		cand auditpkg.Candidate
		want string
	}{
		{auditpkg.Candidate{Words: []string{"tkref", "-", "<number>"}, Text: "tkref - <number>", Surface: "TKREF-#####", Signals: line}, "the line 'TKREF-#####'"},
		{auditpkg.Candidate{Words: []string{"would", "like"}, Text: "would like", Surface: "would\n like"}, "the words 'would like'"},
		{auditpkg.Candidate{Words: []string{"font"}, Text: "font"}, "the word 'font'"},
	} {
		if got := cueName(&c.cand); got != c.want {
			t.Errorf("cueName(%q) = %q, want %q", c.cand.Text, got, c.want)
		}
	}
}

// TestReflowStory: the story's paragraphs, broken for the terminal, flow
// as one line each on the page, but for its numbered cues, its listed cues
// and its commands, which start lines of their own (the layouts of
// audit.Result.Story).
func TestReflowStory(t *testing.T) {
	for _, c := range []struct{ name, in, want string }{
		{"prose", "No cue changes this model's predictions measurably on test\ntexts that took no part in choosing it.",
			"No cue changes this model's predictions measurably on test texts that took no part in choosing it."},
		{"numbered cue", "  1. \"kioskmail\", in 8% of the test texts.\n     It looks like a collection artifact.\n     Replacing it changes 40% of the predictions, against 2%\n     when the same words are put elsewhere.",
			"1. \"kioskmail\", in 8% of the test texts. It looks like a collection artifact. Replacing it changes 40% of the predictions, against 2% when the same words are put elsewhere."},
		{"commands", "What to do: retrain without it.\nThese commands write the patterns to a file and train again\non its own splits without it:\n    telltale train --data a.csv\n    telltale eval --model b.tt\n(Mark it as artifact to keep this judgement with the model.)",
			"What to do: retrain without it. These commands write the patterns to a file and train again on its own splits without it:\ntelltale train --data a.csv\ntelltale eval --model b.tt\n(Mark it as artifact to keep this judgement with the model.)"},
		{"dash item", "  - 'x' (spam): replacing it lowers the probability of spam by 0.021 on its 8 confirming texts\n    (it falls in 8 texts, rises in 0) and changes 0% of their predictions,\n    against 0% when the same words are put elsewhere.\n    The flips are not ruled out:\n    up to 30%.",
			"- 'x' (spam): replacing it lowers the probability of spam by 0.021 on its 8 confirming texts (it falls in 8 texts, rises in 0) and changes 0% of their predictions, against 0% when the same words are put elsewhere. The flips are not ruled out: up to 30%."},
		{"listed cues", "The model also relies on these, which read like the task:\n  \"refund\" (complaints): replacing it lowers the probability.\n  \"lost\" (lost-property): too few texts.",
			"The model also relies on these, which read like the task:\n\"refund\" (complaints): replacing it lowers the probability.\n\"lost\" (lost-property): too few texts."},
	} {
		if got := reflow(c.in); got != c.want {
			t.Errorf("%s:\n%s\nwant\n%s", c.name, got, c.want)
		}
	}
}

// The artifact-likeness is a rule's score whose weights are set by hand
// (auditpkg.ArtifactFormula), not a measurement: it is shown with two digits,
// named a rule's score and said not to be a probability, wherever the cue's
// evidence is worded (the report, the command line, the window), and the
// method says the weights are set by hand.
func TestArtifactScoreWords(t *testing.T) {
	c := auditpkg.Candidate{Words: []string{"stamp"}, Text: "stamp", Label: "spam", ArtifactLikeness: 0.996}
	ev := DescribeCue(&c, &auditpkg.Result{}, nil)
	if want := "rule score 1.00 (by hand-set weights, not a probability; 0.50 or more reads like how the data was collected)"; ev.Artifact != want {
		t.Errorf("artifact-likeness worded %q, want %q", ev.Artifact, want)
	}
	method := strings.Join(AuditMethod(&auditpkg.Result{}), " ")
	if !strings.Contains(method, "each weight set by hand") || !strings.Contains(method, "not a probability") {
		t.Errorf("the method does not say the artifact-likeness weights are set by hand: %s", method)
	}
}

// A cue whose choosing half shows a shift has the confirming half's label
// share among its evidence, in the audit's words
// (audit.Candidate.ConfirmedShiftSays), and the page shows it as a row of
// its card; a cue without it has none. The figures are invented: the
// wording is what is checked.
func TestDescribeCueConfirmedShift(t *testing.T) {
	c := auditpkg.Candidate{Words: []string{"stamp"}, Text: "stamp", Label: "spam", Verdict: auditpkg.VerdictActed,
		Shift: &auditpkg.Shift{Present: true},
		ShiftConfirmed: &auditpkg.ConfirmedShift{Texts: 20, InLabel: 3, Share: auditpkg.Interval{Estimate: 0.15, Low: 0.032, High: 0.379},
			TrainShare: 0.9, P: 1.2e-9, Holm: 2.4e-9, Family: 2, Lower: true}}
	ev := DescribeCue(&c, &auditpkg.Result{}, nil)
	want := "On the confirming half, 3 of the 20 texts holding it are spam, 15% (3.2–38%), against 90% in training: lower beyond chance " +
		"(one-sided Fisher p = 1.2e-09; Holm p = 2.4e-09 over the 2 cues whose shift it tests; " +
		"the training share chose the cue, so the test leans towards finding it lower)."
	if ev.Shift != want {
		t.Errorf("shift %q, want %q", ev.Shift, want)
	}
	c.ShiftConfirmed.Family = 0
	if ev := DescribeCue(&c, &auditpkg.Result{}, nil); ev.Shift != "" {
		t.Errorf("a cue outside the family: shift %q, want none", ev.Shift)
	}
}

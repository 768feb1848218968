package report

import (
	"fmt"
	"math"
	"strings"

	"telltale/explain"
)

// auditView is the cue audit, formatted.
type auditView struct {
	Train, Heldout, Tested, Threshold, Alpha, PriorKind string
	Accuracy, MacroF1, Formula                          string
	Flagged                                             string
	Tokens                                              []flagRow
	Candidates                                          string
	Suspects                                            []suspectView
	More                                                int
	// The cue groups: the story in plain words, the command that masks
	// the suggested filters, and one row per group.
	Story                     []string
	Command                   string
	Groups                    []groupRow
	GroupRule, GroupFormula   string
	GroupsFormed, GroupsShown string
}

// groupRow is one cue group.
type groupRow struct {
	Rank                             int
	Words, Label, Texts, Filters     string
	Score, FlaggedShare, Harm, Parts string
	Masked, Conflict, Strongest      string
	Counter                          string
}

// groupsShown is the most cue groups the report lists.
const groupsShown = 10

type flagRow struct{ Token, Count, Label, Share, Z, PMI, Category, Heldout string }

type suspectView struct {
	Rank                           int
	Filter, Width                  int
	Label, Score, Story            string
	FlaggedShare, Push, PushTexts  string
	Harm, HarmParts                string
	AboveWindows                   string
	Cues                           []kv
	Concentration                  string
	Categories                     string
	Ablation                       []kv
	Conflict                       []kv
	Counter                        []kv
	Ngrams                         []ngramRow
	Scale                          string
	Windows, ConflictEx, CounterEx []auditExampleRow
}

type auditExampleRow struct{ Snippet, Gold, Pred, After, Value, Note string }

// suspectsShown is the most suspect filters the report details.
const suspectsShown = 5

func auditLayout(a *explain.Audit) *auditView {
	av := &auditView{Train: count(a.TrainTexts), Heldout: count(a.HeldoutTexts), Tested: count(a.Tested),
		Threshold: floatf("%.2f", a.Threshold), Alpha: fmt.Sprint(a.Alpha), PriorKind: a.PriorKind,
		Accuracy: pct(a.Baseline.Accuracy), MacroF1: num(a.Baseline.MacroF1), Formula: a.Formula,
		Flagged: count(len(a.Tokens)), Candidates: count(a.Candidates)}
	const tokens = 15
	for _, t := range a.Tokens[:min(tokens, len(a.Tokens))] {
		av.Tokens = append(av.Tokens, flagRow{Token: t.Token, Count: count(t.Count), Label: t.Label, Share: pct(t.Share),
			Z: floatf("%.1f", t.Z), PMI: num(t.PMI), Category: cmpOr(t.Category, "–"), Heldout: count(t.Heldout)})
	}
	auditGroups(av, a)
	for i, s := range a.Filters {
		if i == suspectsShown {
			av.More = len(a.Filters) - suspectsShown
			break
		}
		av.Suspects = append(av.Suspects, suspect(i+1, s))
	}
	return av
}

// auditGroups fills the cue-group part of av from the same numbers the
// audit's text uses.
func auditGroups(av *auditView, a *explain.Audit) {
	av.GroupRule, av.GroupFormula = a.GroupRule, a.GroupFormula
	av.GroupsFormed, av.GroupsShown = count(a.Groups), count(min(groupsShown, len(a.CueGroups)))
	quoted := func(ws []string, most int) string {
		var q []string
		for i, w := range ws {
			if i == most {
				q = append(q, fmt.Sprintf("… %d more", len(ws)-most))
				break
			}
			q = append(q, "“"+w+"”")
		}
		return strings.Join(q, ", ")
	}
	ints := func(fs []int, sep string, most int) string {
		var q []string
		for i, f := range fs {
			if most > 0 && i == most {
				q = append(q, fmt.Sprintf("… %d more", len(fs)-most))
				break
			}
			q = append(q, fmt.Sprint(f))
		}
		return strings.Join(q, sep)
	}
	accs := func(ab explain.Ablation, cf explain.Conflict) string {
		s := fmt.Sprintf("held-out accuracy %s → %s", pct(ab.Accuracy), pct(ab.AccuracyMasked))
		if cf.Texts > 0 {
			s += fmt.Sprintf(", and %s → %s on the %s held-out texts where the cue points away from the gold label", pct(cf.Accuracy), pct(cf.AccuracyMasked), count(cf.Texts))
		}
		return s
	}
	story := func(G int) string {
		cg := &a.CueGroups[G-1]
		s := fmt.Sprintf("(%d) %s (%s training texts, %s %s): %s filter(s) key on it (%s). Masking them all: %s.",
			G, quoted(cg.Words, 6), count(cg.TrainTexts), pct(cg.LabelShare), cg.Label, count(len(cg.Filters)), ints(cg.Filters, ", ", 8),
			accs(cg.Ablation, cg.Conflict))
		if len(cg.Mask) < len(cg.Filters) {
			s += fmt.Sprintf(" Masking only the strongest %d (%s): %s.", len(cg.Mask), ints(cg.Mask, ", ", 8), accs(cg.MaskAblation, cg.MaskConflict))
		}
		return s
	}
	model := cmpOr(a.ModelFile, "MODEL")
	held := cmpOr(a.HeldoutFile, "HELDOUT")
	command := func(fs []int) string {
		return fmt.Sprintf("telltale mask --model %s --filters %s --out %s-masked.tt --data %s", model, ints(fs, ",", 0), strings.TrimSuffix(model, ".tt"), held)
	}
	if pl := a.Plan; pl != nil {
		av.Story = append(av.Story, fmt.Sprintf("The model leans on %d cue group(s): words that predict a label in the training split, read by filters whose masking raises held-out accuracy and fixes texts where the words point away from the gold label.", len(pl.Groups)))
		for _, G := range pl.Groups {
			av.Story = append(av.Story, story(G))
		}
		ab := pl.Ablation
		av.Story = append(av.Story, fmt.Sprintf("Masking those %d filters together: held-out accuracy %s → %s, macro-F1 %s → %s (%s predictions fixed, %s broken). The strongest filters of each group were chosen on these held-out texts: check the masked model on another split.",
			len(pl.Filters), pct(ab.Accuracy), pct(ab.AccuracyMasked), num(ab.MacroF1), num(ab.MacroF1Masked), count(ab.Fixed), count(ab.Broken)))
		av.Command = command(pl.Filters)
	} else if len(a.CueGroups) > 0 {
		av.Story = append(av.Story, "No cue group's strongest filters, masked together, raise held-out accuracy clearly (one-sided exact McNemar p < 0.05) and fix texts where the cue points away from the gold label; the held-out split may carry the same cues. The strongest group by its score:", story(1))
		av.Command = command(a.CueGroups[0].Mask)
	}
	for G, cg := range a.CueGroups[:min(groupsShown, len(a.CueGroups))] {
		p := cg.Parts
		row := groupRow{Rank: G + 1, Words: quoted(cg.Words, 8), Label: cg.Label,
			Texts:   fmt.Sprintf("%s (%s %s); %s held-out", count(cg.TrainTexts), pct(cg.LabelShare), cg.Label, count(cg.HeldoutTexts)),
			Filters: fmt.Sprintf("%d: %s", len(cg.Filters), ints(cg.Filters, ", ", 12)),
			Score:   num(cg.Score), FlaggedShare: pct(p.FlaggedShare), Harm: num(max(0, p.Harm)),
			Parts: fmt.Sprintf("harm %s = %s of its held-out texts have another gold label × masking raises their gold label's probability by %s; push %s over %s texts",
				signed(p.Harm), pct(p.ConflictShare), signed(p.ConflictGain), signed(p.Push), count(p.PushTexts)),
			Masked: fmt.Sprintf("%s → %s (%s points); macro-F1 %s → %s; %s fixed, %s broken", pct(cg.Ablation.Accuracy), pct(cg.Ablation.AccuracyMasked),
				signedPoints(cg.Ablation.DeltaAccuracy), num(cg.Ablation.MacroF1), num(cg.Ablation.MacroF1Masked), count(cg.Ablation.Fixed), count(cg.Ablation.Broken)),
			Strongest: fmt.Sprintf("%d (%s): %s → %s; McNemar p %s", len(cg.Mask), ints(cg.Mask, ", ", 8), pct(cg.MaskAblation.Accuracy), pct(cg.MaskAblation.AccuracyMasked), floatf("%.2g", cg.MaskP))}
		if cf := cg.Conflict; cf.Texts > 0 {
			row.Conflict = fmt.Sprintf("%s → %s on %s texts", pct(cf.Accuracy), pct(cf.AccuracyMasked), count(cf.Texts))
		} else {
			row.Conflict = "–"
		}
		if ct := cg.Counter; ct != nil && ct.Texts > 0 {
			row.Counter = fmt.Sprintf("%s flips (control %s)", pct(ct.FlipRate), pct(ct.ControlFlipRate))
		} else {
			row.Counter = "–"
		}
		av.Groups = append(av.Groups, row)
	}
}

func cmpOr(s, def string) string {
	if s == "" {
		return def
	}
	return s
}

func suspect(rank int, s explain.Suspect) suspectView {
	p := s.Parts
	sv := suspectView{Rank: rank, Filter: s.Filter, Width: s.Width, Label: s.Label, Score: num(s.Score),
		FlaggedShare: pct(p.FlaggedShare), Push: signed(p.Push), PushTexts: count(p.PushTexts), AboveWindows: count(p.AboveWindows),
		Harm: num(math.Max(0, p.Harm)),
		HarmParts: fmt.Sprintf("%s = %s of the held-out texts with the cue have another gold label × masking raises their gold label's probability by %s on average",
			signed(p.Harm), pct(p.ConflictShare), signed(p.ConflictGain))}
	var cueWords []string
	for _, c := range s.Cues {
		cueWords = append(cueWords, "“"+c.Token+"”")
		sv.Cues = append(sv.Cues, kv{c.Token, fmt.Sprintf("points to %s (z %.1f); %s of the slot mass, in %s of the windows",
			c.Label, c.Z, pct(c.MassShare), pct(c.WindowShare))})
	}
	c := s.Concentration
	if c.TopWord != "" {
		sv.Concentration = fmt.Sprintf("slot %d holds “%s” in %s of the windows (normalized entropy %s)", c.Slot+1, c.TopWord, pct(c.TopShare), num(c.Normalized))
	}
	var cats []string
	for _, cs := range s.Categories {
		cats = append(cats, cs.Category+" "+pct(cs.Share))
	}
	sv.Categories = strings.Join(cats, ", ")
	ab := s.Ablation
	sv.Ablation = []kv{
		{"Accuracy", fmt.Sprintf("%s → %s (%s points)", pct(ab.Accuracy), pct(ab.AccuracyMasked), signedPoints(ab.DeltaAccuracy))},
		{"Macro-F1", fmt.Sprintf("%s → %s (%s)", num(ab.MacroF1), num(ab.MacroF1Masked), signed(ab.DeltaMacroF1))},
		{"Predictions that change", fmt.Sprintf("%s (%s)", count(ab.Flipped), pct(ab.FlippedShare))},
	}
	cf := s.Conflict
	if cf.Texts > 0 {
		sv.Conflict = []kv{
			{"Texts whose cue points to " + cf.CueLabel + " but whose gold label differs", count(cf.Texts)},
			{"Accuracy on them, with → without the filter", pct(cf.Accuracy) + " → " + pct(cf.AccuracyMasked)},
			{"Fixed / broken by masking", count(cf.Fixed) + " / " + count(cf.Broken)},
		}
	}
	if ct := s.Counter; ct != nil && ct.Texts > 0 {
		sv.Counter = []kv{
			{"Texts with the cue × draws", count(ct.Texts) + " × " + fmt.Sprint(ct.Draws)},
			{"Predictions flipped by replacing the cue", fmt.Sprintf("%s (%s)", count(ct.Flips), pct(ct.FlipRate))},
			{"Mean change of the predicted label's probability", signed(ct.MeanProbChange)},
			{"Control: same words at random other places", fmt.Sprintf("%s flips (%s), mean change %s", count(ct.ControlFlips), pct(ct.ControlFlipRate), signed(ct.ControlChange))},
			{"Neutral words used", strings.Join(ct.Alternatives[:min(8, len(ct.Alternatives))], ", ")},
		}
	}
	var scale float64
	ngrams := s.TopNgrams[:min(5, len(s.TopNgrams))]
	for _, ng := range ngrams {
		for _, v := range ng.Slots {
			scale = max(scale, math.Abs(v))
		}
	}
	for _, ng := range ngrams {
		row := ngramRow{Activation: num(ng.Activation), Count: count(ng.Count), Pred: strings.Join(ng.Categories, ", ")}
		for i, tok := range ng.Tokens {
			v := math.NaN()
			if i < len(ng.Slots) {
				v = ng.Slots[i]
			}
			row.Cells = append(row.Cells, heatCell{Text: tok, Style: cellStyle(divergingAt(v, scale)), Title: fmt.Sprintf("slot %d: %s", i+1, signed(v))})
		}
		sv.Ngrams = append(sv.Ngrams, row)
	}
	sv.Scale = num(scale)
	sv.Windows = auditExamples(s.Examples.Windows)
	sv.ConflictEx = auditExamples(s.Examples.Conflict)
	sv.CounterEx = auditExamples(s.Examples.Counterfactual)

	// The plain-words summary, from the same numbers.
	cue := "no single flagged word"
	if len(cueWords) > 0 {
		cue = strings.Join(cueWords, ", ")
	}
	story := fmt.Sprintf("Filter %d votes for %s and leans on %s: flagged words carry %s of its slot mass above threshold. Masking it moves accuracy on the held-out split by %s points",
		s.Filter, s.Label, cue, pct(p.FlaggedShare), signedPoints(ab.DeltaAccuracy))
	if cf.Texts > 0 {
		story += fmt.Sprintf(", and on the %s held-out texts where the cue points to %s against the gold label, from %s to %s", count(cf.Texts), cf.CueLabel, pct(cf.Accuracy), pct(cf.AccuracyMasked))
	}
	story += "."
	if ct := s.Counter; ct != nil && ct.Texts > 0 {
		story += fmt.Sprintf(" Replacing the cue by neutral words flips %s of predictions (control: %s).", pct(ct.FlipRate), pct(ct.ControlFlipRate))
	}
	sv.Story = story
	return sv
}

// signedPoints formats a difference of shares as signed percentage points.
func signedPoints(d float64) string {
	s := floatf("%+.1f", 100*d)
	if s == "-0.0" || s == "+0.0" {
		s = "0.0"
	}
	return s
}

func auditExamples(es []explain.AuditExample) []auditExampleRow {
	var out []auditExampleRow
	for _, e := range es[:min(2, len(es))] {
		out = append(out, auditExampleRow{Snippet: e.Snippet, Gold: e.Gold, Pred: e.Pred, After: e.After, Value: num(e.Value), Note: e.Note})
	}
	return out
}

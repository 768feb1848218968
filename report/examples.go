package report

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"

	"telltale/corpus"
	"telltale/explain"
)

type exampleView struct {
	Kind, KindClass, Gold, Pred, Confidence, Note string
	RunnerUp                                      string
	Correct                                       bool
	Segments                                      []heatCell
	Legend                                        legend
	Probs                                         []probCell
	Identity                                      string
	Tokens                                        []tokenRow
	HasOcclusion                                  bool
	Fired                                         []firedRow
	Kept                                          []keptRow
}

type probCell struct {
	Label, Value string
	Chosen       bool
}

type tokenRow struct{ Index, Token, Share, Occlusion string }

type firedRow struct{ Filter, Window, Activation, Part, BiasPart, Family string }

// keptRow is a window that would have won its filter but for its negative
// slots: Effect estimates the change of the log-odds had it won without
// them; Whole and Drop measure the change of the log-odds and the drop of
// p(predicted) when the words that kept it down are replaced by padding,
// and Own, Others and Words split Whole exactly
// (explain.KeptDownWindow.Parts; the page shows Words on a model with word
// weights only, where it is not 0).
type keptRow struct{ Filter, Window, By, Effect, Own, Others, Words, Whole, Drop string }

// example lays out one explained text: painted by the shares of the
// log-odds of the predicted label against the runner-up.
func example(in Input, ex Example) (exampleView, error) {
	e := ex.Explanation
	if err := checkExplanation(e); err != nil {
		return exampleView{}, err
	}
	c := e.Class
	lo := &e.LogOdds
	occ := e.Attributions.Occlusion
	ev := exampleView{Kind: string(ex.Kind), KindClass: kindClass(ex.Kind), Gold: ex.Gold, Pred: e.Label, RunnerUp: e.Labels[e.RunnerUp],
		Confidence: pct(e.Probabilities[c]), Note: ex.Note, Correct: ex.Gold == e.Label, HasOcclusion: occ != nil}
	share := lo.Tokens
	scale := maxAbs(share)
	var sum, filterBias float64
	for _, v := range share {
		sum += v
	}
	for _, v := range lo.FilterBias {
		filterBias += v
	}
	ev.Legend = newLegend(scale, "toward "+ev.RunnerUp+" "+signed(-scale), "toward "+e.Label+" "+signed(scale))
	ev.Identity = identity(e, ev.RunnerUp, filterBias, sum)
	ev.Segments = paint(ex.Text, e.Tokens, share, scale, e.Label, ev.RunnerUp)
	for k, l := range e.Labels {
		ev.Probs = append(ev.Probs, probCell{l, pct(e.Probabilities[k]), k == c})
	}
	order := make([]int, len(share))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(math.Abs(share[b]), math.Abs(share[a])) })
	for _, i := range order[:min(6, len(order))] {
		row := tokenRow{Index: fmt.Sprint(i), Token: e.Tokens[i].Text, Share: signed(share[i])}
		if occ != nil {
			row.Occlusion = signed(occ[i])
		}
		ev.Tokens = append(ev.Tokens, row)
	}
	ev.Fired = firedRows(in, e)
	for _, kd := range e.KeptDown {
		by := make([]string, len(kd.By))
		for i, p := range kd.By {
			by[i] = e.Tokens[p].Text
		}
		own, others, words, whole := kd.Parts(lo.Value)
		ev.Kept = append(ev.Kept, keptRow{Filter: fmt.Sprintf("%d (width %d)", kd.Filter, kd.Width),
			Window: strings.Join(windowTokens(e, kd.Start, kd.Width), " "), By: strings.Join(by, " "), Effect: signed(kd.Effect),
			Own: signed(own), Others: signed(others), Words: signed(words), Whole: signed(whole), Drop: signed(kd.Drop)})
	}
	return ev, nil
}

// identity writes the exact split of the log-odds of e: its value, the
// output bias, the filter biases' sum fb and the token shares' sum tok. On
// a model with the wide path (LogOdds.Words set) the output bias holds the
// unknown word's weight and the token shares the word weights, named so.
func identity(e *explain.Explanation, runnerUp string, fb, tok float64) string {
	lo := &e.LogOdds
	bias, words := "output bias", ""
	if lo.Words != nil {
		var ww float64
		for _, v := range lo.Words {
			ww += v
		}
		bias, words = "output bias with the unknown word's weight", " (word weights "+signed(ww)+")"
	}
	return fmt.Sprintf("log p(%s)/p(%s) %s = %s %s + filter biases %s + token shares %s%s",
		e.Label, runnerUp, signed(lo.Value), bias, signed(lo.OutputBias), signed(fb), signed(tok), words)
}

// checkExplanation checks the shapes the layout relies on.
func checkExplanation(e *explain.Explanation) error {
	if e == nil {
		return fmt.Errorf("no explanation")
	}
	C, L := len(e.Labels), len(e.Tokens)
	if e.Class < 0 || e.Class >= C || e.RunnerUp < 0 || e.RunnerUp >= C || len(e.Probabilities) != C {
		return fmt.Errorf("explanation of %d labels has class %d, runner-up %d and %d probabilities", C, e.Class, e.RunnerUp, len(e.Probabilities))
	}
	if len(e.LogOdds.Tokens) != L || len(e.LogOdds.Filters) != len(e.Filters) || len(e.LogOdds.FilterBias) != len(e.Filters) {
		return fmt.Errorf("%d tokens and %d fired filters but %d token shares and %d filter parts", L, len(e.Filters), len(e.LogOdds.Tokens), len(e.LogOdds.Filters))
	}
	if occ := e.Attributions.Occlusion; occ != nil && len(occ) != L {
		return fmt.Errorf("%d tokens but %d occlusion values", L, len(occ))
	}
	for _, kd := range e.KeptDown {
		for _, p := range kd.By {
			if p < 0 || p >= L {
				return fmt.Errorf("kept-down window of filter %d held down by token %d of %d", kd.Filter, p, L)
			}
		}
	}
	return nil
}

// firedRows lists the fired filters with the largest parts of the log-odds.
func firedRows(in Input, e *explain.Explanation) []firedRow {
	order := make([]int, len(e.Filters))
	for i := range order {
		order[i] = i
	}
	parts := e.LogOdds.Filters
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(math.Abs(parts[b]), math.Abs(parts[a])) })
	var rows []firedRow
	for _, k := range order[:min(5, len(order))] {
		f := e.Filters[k]
		fr := firedRow{Filter: fmt.Sprintf("%d (width %d)", f.Filter, f.Width), Window: strings.Join(windowTokens(e, f.Start, f.Width), " "),
			Activation: num(f.ActivationLogOdds), Part: signed(parts[k]), BiasPart: signed(e.LogOdds.FilterBias[k]), Family: "–"}
		if in.Profiles != nil && f.Family >= 0 && f.Filter < len(in.Profiles.Filters) {
			if fams := in.Profiles.Filters[f.Filter].Families; f.Family < len(fams) {
				fr.Family = fams[f.Family].Pattern
			}
		}
		rows = append(rows, fr)
	}
	return rows
}

// windowTokens are the tokens of a window, PAD past the text's end.
func windowTokens(e *explain.Explanation, start, width int) []string {
	toks := make([]string, 0, width)
	for i := start; i < start+width; i++ {
		if i < len(e.Tokens) {
			toks = append(toks, e.Tokens[i].Text)
		} else {
			toks = append(toks, corpus.PADWord)
		}
	}
	return toks
}

func kindClass(k ExampleKind) string {
	switch k {
	case KindCorrect:
		return "ok"
	case KindWrong:
		return "bad"
	default:
		return "cue"
	}
}

// paint splits text into plain gaps and coloured tokens, using the token
// offsets. A token whose span does not fit (missing offsets, or a subword
// piece sharing its word's span) is shown by its own text.
func paint(text string, toks []explain.TokenSpan, share []float64, scale float64, label, against string) []heatCell {
	var out []heatCell
	pos := 0
	for i, t := range toks {
		bg := divergingAt(share[i], scale)
		cell := heatCell{Style: cellStyle(bg), Title: fmt.Sprintf("%s: %s to log p(%s)/p(%s)", t.Text, signed(share[i]), label, against)}
		if t.Start >= pos && t.Start < t.End && t.End <= len(text) {
			if t.Start > pos {
				out = append(out, heatCell{Text: text[pos:t.Start]})
			}
			cell.Text = text[t.Start:t.End]
			pos = t.End
		} else {
			if len(out) > 0 && pos == 0 {
				out = append(out, heatCell{Text: " "})
			}
			cell.Text = t.Text
		}
		out = append(out, cell)
	}
	if pos < len(text) && (pos > 0 || len(toks) == 0) {
		out = append(out, heatCell{Text: text[pos:]})
	}
	return out
}

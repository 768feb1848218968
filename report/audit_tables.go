package report

import (
	"strconv"
	"strings"

	"telltale/audit"
)

// cueSignals are the artifact-likeness signals, in the order of the cue
// table's signal_ columns.
var cueSignals = []string{audit.SignalEdge, audit.SignalLine, audit.SignalSpan, audit.SignalContext, audit.SignalCode,
	audit.SignalNumber, audit.SignalAddress, audit.SignalMarkup, audit.SignalCasing, audit.SignalPurity, audit.SignalShift}

// CueTable has one row per cue an audit lists: first the artifact-like
// cues (list "artifact-like", in rank order), then those relied on that
// read like the task (list "task"). Each row holds the cue (its words, its
// most common form in the text, the pattern that takes it out of text),
// its label, verdict and mark; association in the training split (texts,
// those in the label, the share with its 95% Wilson interval, the exact
// p-value and the corrected one, each with its bound where it is below
// audit.PFloor: p_below, adjusted_p_below); artifact-likeness and every signal's
// value (signal_shift is the choosing half's shift, a reason the cue was
// chosen); the confirming half's shift, the figure shown of it
// (audit.ConfirmedShift; empty cells for a cue outside its Holm family):
// the confirming texts holding the cue (shift_confirmed_texts), those in
// its label, their share with its exact 95% Clopper–Pearson interval, the
// one-sided Fisher p-value of the share being lower than in training
// (shift_confirmed_p_lower; the training share chose the cue, so it leans
// towards lower), its Holm-adjusted p-value and whether the share is lower
// at Holm p ≤ 0.05 (shift_confirmed_lower); reliance on the confirming
// half ("half" says when only the choosing half measured it), each rate with its 95% interval over texts (audit.Reliance)
// and the sign tests (empty where the half holds the cue in too few texts
// to measure); the choosing half's rank score (its label drop times the
// artifact-likeness: it orders the list, measured on the texts that chose
// the cues, so no figure to report; rank_score_choosing); the keyed filters (space-separated) and the
// accuracy on the confirming half before and with them masked, then the
// bounds of those accuracies' 95% Wilson intervals and the one-sided exact
// McNemar p-value of masking.
func CueTable(r *audit.Result) *Table {
	cols := []string{"list", "rank", "cue", "surface", "label", "verdict", "mark", "pattern",
		"train_texts", "in_label", "label_share", "label_share_low", "label_share_high", "p", "adjusted_p", "p_below", "adjusted_p_below", "artifact_likeness"}
	for _, s := range cueSignals {
		cols = append(cols, "signal_"+s)
	}
	cols = append(cols, "shift_confirmed_texts", "shift_confirmed_in_label", "shift_confirmed_share", "shift_confirmed_share_low",
		"shift_confirmed_share_high", "shift_confirmed_p_lower", "shift_confirmed_holm_p", "shift_confirmed_lower")
	cols = append(cols, "half", "heldout_texts", "measured")
	for _, x := range []string{"flip_rate", "control_flip_rate", "label_drop", "prob_drop", "decided"} {
		cols = append(cols, x, x+"_low", x+"_high")
	}
	cols = append(cols, "reliance_p", "flip_p", "rank_score_choosing", "filters", "filters_accuracy", "filters_accuracy_masked",
		"filters_accuracy_low", "filters_accuracy_high", "filters_accuracy_masked_low", "filters_accuracy_masked_high", "filters_p")
	t := &Table{Columns: cols}
	for _, l := range []struct {
		name string
		cs   []audit.Candidate
	}{{"artifact-like", r.Ranked}, {"task", r.Task}} {
		for i := range l.cs {
			t.Add(cueRow(l.name, i+1, &l.cs[i])...)
		}
	}
	return t
}

func cueRow(list string, rank int, c *audit.Candidate) []any {
	as := c.Association
	lo, hi := audit.Wilson(as.InLabel, as.Texts, 0.95)
	row := []any{list, rank, c.Text, c.Surface, c.Label, c.Verdict, c.Mark, c.Pattern,
		as.Texts, as.InLabel, as.Share, lo, hi, as.P, as.Adjusted, below(as.P), below(as.Adjusted), c.ArtifactLikeness}
	for _, name := range cueSignals {
		var v any
		for _, s := range c.Signals {
			if s.Name == name {
				v = s.Value
			}
		}
		row = append(row, v)
	}
	if s := c.ShiftConfirmed; s != nil && s.Family > 0 {
		row = append(row, s.Texts, s.InLabel, s.Share.Estimate, s.Share.Low, s.Share.High, s.P, s.Holm, s.Lower)
	} else {
		row = append(row, make([]any, 8)...)
	}
	rl, half := c.Confirmed, "confirming"
	if rl == nil {
		rl, half = c.Reliance, "choosing"
	}
	switch {
	case rl == nil:
		row = append(row, make([]any, 3+5*3+2)...)
	case rl.Measured == 0: // too few texts: no figure
		row = append(row, half, rl.Texts, rl.Measured)
		row = append(row, make([]any, 5*3+2)...)
	default:
		row = append(row, half, rl.Texts, rl.Measured)
		for _, x := range []audit.Interval{rl.FlipRate, rl.ControlFlipRate, rl.LabelDrop, rl.ProbDrop, rl.Decided} {
			row = append(row, x.Estimate, x.Low, x.High)
		}
		row = append(row, rl.P, rl.FlipP)
	}
	row = append(row, c.Score)
	if f := c.Filters; f != nil && f.Ablation != nil {
		ab := f.Ablation
		row = append(row, joinInts(f.Keyed), ab.Accuracy, ab.AccuracyMasked, ab.Before.Low, ab.Before.High, ab.After.Low, ab.After.High, ab.P)
	} else {
		row = append(row, "", nil, nil, nil, nil, nil, nil, nil)
	}
	return row
}

// StabilityTable has one row per cue of a stability merge (audit.Stability):
// the cue's words, its label, in how many audits it was acted on of how
// many, its rank among the artifact-like cues of each audit
// (space-separated, 0 where it was not listed) and whether it is stable.
func StabilityTable(st []audit.Stable) *Table {
	t := &Table{Columns: []string{"cue", "label", "acted_on_in", "models", "ranks", "stable"}}
	for _, s := range st {
		ranks := make([]string, len(s.Ranks))
		for i, r := range s.Ranks {
			ranks[i] = strconv.Itoa(r)
		}
		t.Add(s.Text, s.Label, s.Found, s.Models, strings.Join(ranks, " "), s.Stable)
	}
	return t
}

// below is audit.Below(p) for a cell: the bound, or empty when p is above it.
func below(p float64) any {
	if b := audit.Below(p); b > 0 {
		return b
	}
	return nil
}

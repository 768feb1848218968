package gui

import (
	"fmt"
	"strconv"
	"strings"

	"telltale/audit"
	"telltale/internal/wording"
	"telltale/report"
)

// The rows of the audit's tables, every number as the audit computed it:
// shares as percentages with one decimal and their 95% intervals, as the
// report writes them.

// pct writes a share as a percentage with one decimal.
func pct(x float64) string { return strconv.FormatFloat(100*x, 'f', 1, 64) + "%" }

// pctInterval writes a share with its interval: "14.2% (8.6–19.0%)".
func pctInterval(x audit.Interval) string {
	return pct(x.Estimate) + " (" + strings.TrimSuffix(pct(x.Low), "%") + "–" + pct(x.High) + ")"
}

// accInterval writes an accuracy with its interval: "0.912 (0.890–0.931)".
func accInterval(x audit.Interval) string {
	return fmt.Sprintf("%.3f (%.3f–%.3f)", x.Estimate, x.Low, x.High)
}

// cueCols are the columns of the two lists of cues.
var cueCols = []string{"#", "cue", "label", "verdict", "training texts", "share in its label", "artifact-likeness (rule score)",
	"predictions changed", "same words elsewhere", "decides"}

// cueRow is cue c, ranked rank (from 1) in its list, as a row. The
// reliance figures are the confirming half's (the choosing half's, each of
// the three marked so, when the confirming half did not measure it).
func cueRow(r *audit.Result, c *audit.Candidate, rank int) []string {
	as := c.Association
	lo, hi := audit.Wilson(as.InLabel, as.Texts, 0.95)
	verdict := report.DescribeCue(c, r, nil).Verdict
	row := []string{fmt.Sprint(rank), cueShown(c), c.Label, verdict, fmt.Sprint(as.Texts),
		pctInterval(audit.Interval{Estimate: as.Share, Low: lo, High: hi}), fmt.Sprintf("%.2f", c.ArtifactLikeness)}
	rl, half := c.Confirmed, ""
	if rl == nil {
		rl, half = c.Reliance, " (choosing half)"
	}
	if rl == nil || rl.Measured == 0 {
		return append(row, "—", "—", "—")
	}
	return append(row, pctInterval(rl.FlipRate)+half, pctInterval(rl.ControlFlipRate)+half, pctInterval(rl.Decided)+half)
}

// cueRows lists cues cs of audit r in their order.
func cueRows(r *audit.Result, cs []audit.Candidate) [][]string {
	rows := make([][]string, len(cs))
	for i := range cs {
		rows[i] = cueRow(r, &cs[i], i+1)
	}
	return rows
}

// associationCols are the columns of associationRows.
var associationCols = []string{"cue", "label", "training texts", "share in its label", "p, corrected", "reads like", "the audit's verdict"}

// associationRows lists every cue the audit found associated with a label
// in the training split (both lists, then the others), most associated
// first within each, for the Corpus view.
func associationRows(a *auditState) [][]string {
	if a == nil {
		return nil
	}
	var rows [][]string
	for _, l := range []struct {
		cs    []audit.Candidate
		reads string
	}{{a.R.Ranked, "collection"}, {a.R.Task, "the task"}, {a.R.Others, "the task"}} {
		for i := range l.cs {
			c := &l.cs[i]
			as := c.Association
			lo, hi := audit.Wilson(as.InLabel, as.Texts, 0.95)
			reads := l.reads
			if c.ArtifactLike() {
				reads = "collection"
			}
			rows = append(rows, []string{cueShown(c), c.Label, fmt.Sprint(as.Texts),
				pctInterval(audit.Interval{Estimate: as.Share, Low: lo, High: hi}), pvalue(as.Adjusted), reads,
				report.DescribeCue(c, a.R, nil).Verdict})
		}
	}
	return rows
}

// pvalue writes a p-value with two significant digits.
func pvalue(p float64) string {
	if p < 1e-300 {
		return "< 1e-300"
	}
	return fmt.Sprintf("%.2g", p)
}

// exampleCols are the columns of exampleRows.
var exampleCols = []string{"figure", "split", "#", "gold", "predicted", "after the edit", "text"}

// exampleRows lists what stands behind the figures: texts (click: Why
// this label) and filters (click: Filters view).
func exampleRows(exs []auditExample) [][]string {
	rows := make([][]string, len(exs))
	for i, e := range exs {
		if e.Filter >= 0 {
			rows[i] = []string{e.Figure, "—", fmt.Sprintf("filter %d", e.Filter), "", "", "", "click to see the filter"}
			continue
		}
		rows[i] = []string{e.Figure, e.Split, fmt.Sprint(e.Index), e.Gold, orDash(e.Pred), orDash(e.After), e.Quote}
	}
	return rows
}

// retrainCols are the columns of retrainRows.
var retrainCols = []string{"confirming half", "texts", "this model", "retrained", "right only with this model", "right only retrained",
	"two-sided exact McNemar p"}

// retrainRows are the two models on the confirming half of the test split
// as it is and without the cues.
func retrainRows(rt *audit.Retrained) [][]string {
	row := func(what string, mp audit.ModelPair) []string {
		return []string{what, fmt.Sprint(rt.Texts), accInterval(mp.Before), accInterval(mp.After), fmt.Sprint(mp.OnlyBefore),
			fmt.Sprint(mp.OnlyAfter), pvalue(mp.P)}
	}
	return [][]string{row("as it is", rt.Original), row("without the cues", rt.Counterfactual)}
}

// retrainedStatus is the status line after retraining without the cues:
// whether the two-sided exact McNemar test tells the two models' accuracies
// apart on the confirming half as it is, then both accuracies with their
// 95% Wilson intervals, all as audit.Retrain measured them (rt.Original).
// The verdict is audit's (ModelPair.Direction at audit.RetrainAlpha): a
// difference the test does not find reads as no clear difference, never as
// a gain or a loss. The verdict and p come first: the status bar
// ends a line too long for a small screen in "…".
func retrainedStatus(rt *audit.Retrained) string {
	mp := rt.Original
	verdict := map[audit.Direction]string{audit.NotClearlyDifferent: "not clearly different from", audit.Lower: "lower than",
		audit.Higher: "higher than"}[mp.Direction(audit.RetrainAlpha)]
	return fmt.Sprintf("Retrained without %s: accuracy on the confirming half %s the model audited's (two-sided exact McNemar p = %s): "+
		"%s against %s, 95%% intervals.",
		wording.Count(len(rt.Patterns), "cue", "cues"), verdict, pvalue(mp.P), accInterval(mp.After), accInterval(mp.Before))
}

// windowStory is the story of audit r for the window: its lines, broken to
// fit a terminal, joined again (reflow); the held-out split called the
// test split, as the window gives it (inWindowWords); and the terminal's
// commands (the paragraph "What to do: …") replaced by what to do here.
func windowStory(r *audit.Result) string {
	it := them(len(r.Action.Cues))
	var paras []string
	for _, p := range strings.Split(r.Story(), "\n\n") {
		if strings.HasPrefix(p, "What to do:") {
			p = fmt.Sprintf("What to do here: retrain without %s and compare both models on the confirming half of the test split with and without %s "+
				"(What to do), and mark each cue as an artifact or as the task to keep your verdict with the model.", it, it)
		}
		paras = append(paras, reflow(p))
	}
	return inWindowWords(strings.Join(paras, "\n\n"))
}

// inWindowWords is the audit's prose in the window's words: the audit
// calls the split it was given "held-out"; the window gives it the test
// split.
func inWindowWords(s string) string { return strings.ReplaceAll(s, "held-out", "test") }

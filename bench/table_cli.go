package main

import (
	"fmt"
	"io"
	"slices"
	"strings"
)

// cliGoals are the floors of the command-line table (the speed goals set
// for the command line; shown beside each row, never asserted in tests).
var cliGoals = map[string]string{
	"predict":       "≥ 30×",
	"train":         "≥ 5× (within 1/5 of the reference's wall time)",
	"train-eps":     "≥ 8×",
	"filters":       "< 20 s per 1M texts",
	"explain":       "< 1 ms",
	"audit":         "100k texts < 180 s",
	"predict-bytes": "bounded (streaming)",
}

// noBaseline ends the case of a train run with --baseline=false; its rows
// are set beside the reference's runs of the case without it.
const noBaseline = ", --baseline=false"

// writeCLITable prints the "command line end to end" table of the results
// of bench cli and of the reference's torch-forward and torch-text runs:
// one group of rows per case (in the order first seen), medians of the runs,
// the 1-minute load average of every run, and ratios that all read "higher
// is better" (telltale's speed over the reference's).
func writeCLITable(w io.Writer, rs []cliResult) {
	var cases []string
	for _, r := range rs {
		if !slices.Contains(cases, r.Case) {
			cases = append(cases, r.Case)
		}
	}
	if len(cases) == 0 {
		return
	}
	fmt.Fprintln(w, "| command line end to end | measure | telltale (median) | reference (median) | telltale/reference speed (higher is better) | goal | runs telltale/reference | 1-min load, each run (telltale / reference) |")
	fmt.Fprintln(w, "|---|---|---|---|---|---|---|---|")
	for _, c := range cases {
		var ours, ref []cliResult
		refCase := strings.TrimSuffix(c, noBaseline) // a train case without the baseline shares the reference's runs
		for _, r := range rs {
			switch {
			case r.Case == c && r.Impl == "cli":
				ours = append(ours, r)
			case r.Case == refCase && r.Impl != "cli":
				ref = append(ref, r)
			}
		}
		writeCLICase(w, c, ours, ref)
	}
}

// writeCLICase prints the rows of case c from telltale's runs ours and the
// reference's runs ref.
func writeCLICase(w io.Writer, c string, ours, ref []cliResult) {
	row := func(measure, o, r, ratio, goal string, no, nr int, lo, lr string) {
		fmt.Fprintf(w, "| %s | %s | %s | %s | %s | %s | %d/%d | %s / %s |\n", c, measure, o, r, ratio, goal, no, nr, lo, lr)
	}
	lo, lr := cliLoads(ours), cliLoads(ref)
	secs := func(r cliResult) float64 { return r.Seconds }
	rate := func(r cliResult) float64 {
		if r.Seconds <= 0 {
			return 0
		}
		return float64(r.Texts) / r.Seconds
	}
	rss := func(r cliResult) float64 { return r.PeakRSSMB }
	texts := 0
	if len(ours) > 0 {
		texts = ours[0].Texts
	}
	switch cmd, _, _ := strings.Cut(c, " "); cmd {
	case "predict":
		o, r := cliMedian(ours, rate), cliMedian(ref, rate)
		if len(ref) == 0 {
			row(fmt.Sprintf("texts/s (%d texts)", texts), num(o, ""), "", "", "", len(ours), 0, lo, "")
		} else {
			row(fmt.Sprintf("texts/s (%d texts; reference: eval forward alone, batches of 100)", texts), num(o, ""), num(r, ""), ratioText(o, r), cliGoals["predict"], len(ours), len(ref), lo, lr)
		}
		row("peak RSS MiB", num(cliMedian(ours, rss), ""), "", "", cliGoals["predict-bytes"], len(ours), 0, lo, "")
	case "train":
		if len(ours) == 0 {
			return // the reference's runs, shown with telltale's
		}
		o, r := cliMedian(ours, secs), cliMedian(ref, secs)
		what := "the linear baseline's fit included"
		if strings.HasSuffix(c, noBaseline) {
			what = "no linear baseline"
		}
		row(fmt.Sprintf("wall seconds, %d texts from text to saved model (tokenizing, dev evaluation each epoch; %s)", texts, what), num(o, "s"), num(r, "s"), ratioText(r, o), cliGoals["train"], len(ours), len(ref), lo, lr)
		oe := cliMedian(ours, func(r cliResult) float64 { return r.Numbers["examples_per_second"] })
		re := cliMedian(ref, func(r cliResult) float64 { return r.Numbers["steady_eps"] })
		row("training examples/s, steady state (epochs after the first; the first alone with one epoch)", num(oe, ""), num(re, ""), ratioText(oe, re), cliGoals["train-eps"], len(ours), len(ref), lo, lr)
		if t := cliMedian(ref, func(r cliResult) float64 { return r.Numbers["tokenize_seconds"] }); t > 0 {
			row("reference's tokenizing and vocabulary, seconds", "", num(t, "s"), "", "", 0, len(ref), "", lr)
		}
		row("peak RSS MiB", num(cliMedian(ours, rss), ""), num(cliMedian(ref, rss), ""), ratioText(cliMedian(ref, rss), cliMedian(ours, rss)), "", len(ours), len(ref), lo, lr)
	case "explain":
		one, many := splitByTexts(ours)
		so, sm := cliMedian(one, secs), cliMedian(many, secs)
		row("one text: process wall ms (start and model load included)", num(1000*so, ""), "", "", "", len(one), 0, cliLoads(one), "")
		if len(many) > 0 && len(one) > 0 {
			k := many[0].Texts
			row(fmt.Sprintf("ms per text beyond the first: (wall of %d texts − wall of 1) / %d", k, k-1),
				num(1000*(sm-so)/float64(k-1), ""), "", "", cliGoals["explain"], len(many), 0, cliLoads(many), "")
		}
	default: // filters, audit
		o := cliMedian(ours, secs)
		row(fmt.Sprintf("wall seconds (%d texts)", texts), num(o, "s"), "", "", cliGoals[cmd], len(ours), 0, lo, "")
		row("texts/s", num(cliMedian(ours, rate), ""), "", "", "", len(ours), 0, lo, "")
		row("peak RSS MiB", num(cliMedian(ours, rss), ""), "", "", "", len(ours), 0, lo, "")
	}
}

// splitByTexts separates the one-text runs from the others.
func splitByTexts(rs []cliResult) (one, many []cliResult) {
	for _, r := range rs {
		if r.Texts == 1 {
			one = append(one, r)
		} else {
			many = append(many, r)
		}
	}
	return one, many
}

// cliMedian is the median of f over the runs where it is positive.
func cliMedian(rs []cliResult, f func(cliResult) float64) float64 {
	var xs []float64
	for _, r := range rs {
		if v := f(r); v > 0 {
			xs = append(xs, v)
		}
	}
	return median(xs)
}

// cliLoads lists the 1-minute load average of each run.
func cliLoads(rs []cliResult) string {
	var s []string
	for _, r := range rs {
		s = append(s, strings.Fields(r.Load + " ?")[0])
	}
	return strings.Join(s, ",")
}

// ratioText is a/b as "N.NN×", or "–" when either is unknown.
func ratioText(a, b float64) string {
	if a <= 0 || b <= 0 {
		return "–"
	}
	return fmt.Sprintf("%.2f×", a/b)
}

package main

import (
	"bufio"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"slices"
	"strings"
)

// cmdTable reads result files (JSON lines of train runs of both
// implementations, of tools runs and of command-line runs) and prints, per
// corpus, the medians of each implementation and the ratios, all of them
// "higher is better": ours/reference for rates, reference/ours for seconds
// and memory.
func cmdTable(args []string) error {
	runs, tools, clis, err := readResultFiles(args)
	if err != nil {
		return err
	}
	var corpora []string
	for _, r := range runs {
		if !slices.Contains(corpora, r.Corpus) {
			corpora = append(corpora, r.Corpus)
		}
	}
	w := os.Stdout
	writeCLITable(w, clis)
	if len(clis) > 0 && len(corpora) > 0 {
		fmt.Fprintln(w)
	}
	if len(corpora) > 0 {
		fmt.Fprintln(w, "| corpus | texts | measure (through the Go API, shared ids) | ours (median) | reference (median) | speed ratio (higher is better) | runs ours/ref | load avg |")
		fmt.Fprintln(w, "|---|---|---|---|---|---|---|---|")
	}
	for _, c := range corpora {
		writeCorpusRows(w, c, runs)
	}
	writeToolTable(w, tools)
	return nil
}

// readResultFiles reads the JSON lines of the result files at paths, in
// order, sorting them by their "Impl" into train runs, tools runs and
// command-line runs; lines that do not parse are skipped.
func readResultFiles(paths []string) (runs []result, tools []toolResult, clis []cliResult, err error) {
	for _, path := range paths {
		f, err := os.Open(path)
		if err != nil {
			return nil, nil, nil, err
		}
		sc := bufio.NewScanner(f)
		sc.Buffer(nil, 1<<20)
		for sc.Scan() {
			line := sc.Bytes()
			var probe struct{ Impl string }
			if json.Unmarshal(line, &probe) != nil {
				continue
			}
			if probe.Impl == "cli" || strings.HasPrefix(probe.Impl, "torch-") {
				var c cliResult
				if json.Unmarshal(line, &c) == nil {
					clis = append(clis, c)
				}
				continue
			}
			if probe.Impl == "tools" {
				var t toolResult
				if json.Unmarshal(line, &t) == nil {
					tools = append(tools, t)
				}
				continue
			}
			var r result
			if json.Unmarshal(line, &r) == nil {
				runs = append(runs, r)
			}
		}
		f.Close()
	}
	return runs, tools, clis, nil
}

// writeCorpusRows writes to w the rows of the corpus table for corpus c,
// from the runs of every corpus.
func writeCorpusRows(w io.Writer, c string, runs []result) {
	var ours, ref, cli []result
	for _, r := range runs {
		if r.Corpus != c {
			continue
		}
		switch r.Impl {
		case "ours":
			ours = append(ours, r)
		case "ours-cli":
			cli = append(cli, r)
		default:
			ref = append(ref, r)
		}
	}
	med := func(rs []result, f func(result) float64) float64 {
		var xs []float64
		for _, r := range rs {
			if v := f(r); v > 0 {
				xs = append(xs, v)
			}
		}
		return median(xs)
	}
	loads := func(rs []result) string {
		var s []string
		for _, r := range rs {
			s = append(s, strings.Fields(r.Load + " ?")[0])
		}
		return strings.Join(s, ",")
	}
	texts := 0
	if len(ours) > 0 {
		texts = ours[0].Texts
	} else if len(ref) > 0 {
		texts = ref[0].Texts
	}
	// row prints one measure; lower marks one where less is better
	// (seconds, memory), whose ratio is then reference/ours.
	row := func(name, unit string, lower bool, f func(result) float64) {
		o, r := med(ours, f), med(ref, f)
		ratio := ratioText(o, r)
		if lower {
			ratio = ratioText(r, o)
		}
		fmt.Fprintf(w, "| %s | %d | %s | %s | %s | %s | %d/%d | %s / %s |\n", c, texts, name,
			num(o, unit), num(r, unit), ratio, len(ours), len(ref), loads(ours), loads(ref))
	}
	row("training examples/s (steady)", "", false, func(r result) float64 { return r.SteadyEPS })
	row("end-to-end seconds to a trained model", "s", true, func(r result) float64 {
		if len(r.EpochTexts) > 0 && r.EpochTexts[len(r.EpochTexts)-1] < r.Texts {
			return 0 // a partial run times throughput only
		}
		return r.E2ESeconds
	})
	if len(cli) > 0 {
		o := med(cli, func(r result) float64 { return r.E2ESeconds })
		rr := med(ref, func(r result) float64 { return r.E2ESeconds })
		fmt.Fprintf(w, "| %s | %d | end-to-end seconds via `telltale train` (tokenizing, 10%% dev held out and evaluated) | %s | %s | %s | %d/%d | %s |\n",
			c, texts, num(o, "s"), num(rr, "s"), ratioText(rr, o), len(cli), len(ref), loads(cli))
	}
	row("inference examples/s (batch 100)", "", false, func(r result) float64 { return r.InferEPS })
	row("inference examples/s, first pass (ours: table built)", "", false, func(r result) float64 { return r.InferCold })
	row("peak RSS MiB (ratio: reference/ours)", "", true, func(r result) float64 { return r.PeakRSSMB })
	if len(ours) > 0 {
		fmt.Fprintf(w, "| %s | %d | our GFLOP/s dense-equivalent / executed | %.0f / %.0f | | | | |\n", c, texts,
			med(ours, func(r result) float64 { return r.DenseGFLOPs }), med(ours, func(r result) float64 { return r.ExecGFLOPs }))
	}
}

// writeToolTable writes to w the table of the tools runs, preceded by a
// blank line; nothing when there are none.
func writeToolTable(w io.Writer, tools []toolResult) {
	if len(tools) == 0 {
		return
	}
	fmt.Fprintln(w)
	fmt.Fprintln(w, "| tool alone | measure | result | target | load avg |")
	fmt.Fprintln(w, "|---|---|---|---|---|")
	for _, t := range tools {
		if t.ProfileTexts > 0 {
			fmt.Fprintf(w, "| filter profiles, %s (%d texts) | seconds | %.1f | < 20 per 1M texts | %s |\n", t.ProfileCorpus, t.ProfileTexts, t.ProfileSeconds, t.Load)
		}
		if t.ExplainTokens > 0 {
			fmt.Fprintf(w, "| explain, %d tokens, exact + all single-token occlusions | ms (median of %d) | %.2f | < 1 | %s |\n", t.ExplainTokens, t.ExplainRuns, t.ExplainMs, t.Load)
		}
		if t.AuditTexts > 0 {
			fmt.Fprintf(w, "| SpamAssassin audit (%d texts; tokenizing %.1f s more) | seconds | %.1f | 100k texts < 180 | %s |\n", t.AuditTexts, t.AuditPrepSecond, t.AuditSeconds, t.Load)
		}
	}
}

func num(v float64, unit string) string {
	switch {
	case v == 0:
		return "–"
	case unit == "s":
		return fmt.Sprintf("%.1f s", v)
	case v >= 100:
		return fmt.Sprintf("%.0f", v)
	}
	return fmt.Sprintf("%.2f", v)
}

package explain

import (
	"fmt"
	"io"
	"math"
	"strings"
)

// WriteText writes a readable summary of p: a header line, then per filter
// its vote and margin, how often it fired, its purity threshold with the
// windows above it, its top n-grams with the slot score of every word,
// its families and, per slot, the words that switch it on and off. Top
// bounds the n-grams and slot words shown per filter (0 or less: all the
// n-grams kept and 5 words). It returns the first write error.
func (p *Profiles) WriteText(w io.Writer, top int) error {
	ew := &errWriter{w: w}
	words := 5
	if top > 0 {
		words = top
	}
	ew.printf("%d filters profiled over %d texts (purity share %.2f)\n", len(p.Filters), p.Texts, p.Purity)
	for i := range p.Filters {
		f := &p.Filters[i]
		state := ""
		if f.Idle {
			state = "  [idle]"
		}
		if f.Masked {
			state += "  [masked]"
		}
		thr := "none"
		if !math.IsInf(f.Threshold, 0) {
			thr = fmt.Sprintf("%.3f", f.Threshold)
			if !f.ThresholdExact {
				thr = "≈" + thr
			}
		}
		ew.printf("\nfilter %d  width %d  votes %s (margin %.3f)  fired in %d of %d texts, max %.3f%s\n",
			f.Filter, f.Width, f.Label, f.Margin, f.Fired, p.Texts, f.MaxActivation, state)
		ew.printf("  threshold %s: %d windows above, %.0f%% in texts assigned %s; %d families\n",
			thr, f.Above, 100*f.AbovePurity, f.Label, len(f.Families))
		ngrams := f.TopNgrams
		if top > 0 && len(ngrams) > top {
			ngrams = ngrams[:top]
		}
		for _, n := range ngrams {
			parts := make([]string, len(n.Tokens))
			for s, t := range n.Tokens {
				parts[s] = fmt.Sprintf("%s(%+.2f)", t, n.Slots[s])
			}
			ew.printf("  %8.3f  ×%-5d %s\n", n.Activation, n.Count, strings.Join(parts, " "))
		}
		for _, fam := range f.Families {
			ew.printf("  family %-36s %d n-grams in %d texts\n", fam.Pattern, fam.Ngrams, fam.Count)
		}
		for _, s := range f.Slots {
			ew.printf("  slot %d  on: %s\n          off: %s\n", s.Slot, scoreList(s.Triggers, words), scoreList(s.Suppressors, words))
		}
	}
	return ew.err
}

func scoreList(ws []WordScore, n int) string {
	if len(ws) == 0 {
		return "-"
	}
	parts := make([]string, 0, min(n, len(ws)))
	for _, x := range ws[:min(n, len(ws))] {
		parts = append(parts, fmt.Sprintf("%s %+.2f", x.Word, x.Score))
	}
	return strings.Join(parts, ", ")
}

// errWriter keeps the first write error and skips the writes after it.
type errWriter struct {
	w   io.Writer
	err error
}

func (e *errWriter) printf(format string, args ...any) {
	if e.err == nil {
		_, e.err = fmt.Fprintf(e.w, format, args...)
	}
}

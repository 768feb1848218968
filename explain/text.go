package explain

import (
	"fmt"
	"io"
	"math"
	"strings"
)

// WriteText writes a readable summary of p: a header line, then per filter
// its vote margin, how often it fired, its selectivity threshold with the
// held-out purity and test, its top n-grams with the slot score of every
// word, its negative n-grams, its families with their shares and
// stability and, per slot, the words that switch it on and off. Top bounds
// the n-grams and slot words shown per filter (0 or less: all the n-grams
// kept and 5 words). It returns the first write error.
func (p *Profiles) WriteText(w io.Writer, top int) error {
	ew := &errWriter{w: w}
	words := 5
	if top > 0 {
		words = top
	}
	ew.printf("%d filters profiled over %d texts (thresholds chosen on %d, tested on the other %d: purity %.2f of the way from the base rate to 1, one-sided binomial test, Holm-corrected, α = %g)\n",
		len(p.Filters), p.Texts, p.Halves[0], p.Halves[1], p.Selective, p.Alpha)
	for i := range p.Filters {
		f := &p.Filters[i]
		state := ""
		if !f.Selectivity.Selective {
			state = "  [not selective]"
		}
		if f.Masked {
			state += "  [masked]"
		}
		ew.printf("\nfilter %d  width %d  votes %s (margin %.3f)  fired in %d of %d texts, max %.3f%s\n",
			f.Filter, f.Width, f.Label, f.Margin, f.Fired, p.Texts, f.MaxActivation, state)
		ew.printf("  %s\n", selectivityLine(&f.Selectivity, f.Label))
		ngrams := f.TopNgrams
		if top > 0 && len(ngrams) > top {
			ngrams = ngrams[:top]
		}
		for _, n := range ngrams {
			ew.printf("  %8.3f  ×%-5d %s\n", n.Activation, n.Count, slotString(n.Tokens, n.Slots))
		}
		negs := f.Negatives
		if top > 0 && len(negs) > top {
			negs = negs[:top]
		}
		for _, n := range negs {
			ew.printf("  held down %.3f (%.3f → %.3f)  ×%-5d %s\n", n.HeldDown, n.Positive, n.Activation, n.Count, slotString(n.Tokens, n.Slots))
		}
		for _, fam := range f.Families {
			stab := "-"
			if fam.Stability != nil {
				stab = fmt.Sprintf("%.2f", *fam.Stability)
			}
			ew.printf("  family %-36s %.0f%% [%.0f%%, %.0f%%] of windows above, %d n-grams sampled, stability %s\n",
				fam.Pattern, 100*fam.Share, 100*fam.ShareLow, 100*fam.ShareHigh, fam.Ngrams, stab)
		}
		for _, s := range f.Slots {
			ew.printf("  slot %d  on: %s\n          off: %s\n", s.Slot, scoreList(s.Triggers, words), scoreList(s.Suppressors, words))
		}
	}
	return ew.err
}

// selectivityLine describes a filter's threshold and its held-out test.
func selectivityLine(s *Selectivity, label string) string {
	if math.IsInf(s.Threshold, 0) {
		return fmt.Sprintf("no threshold: no activation reaches purity %.2f for %s on the choosing half", s.Target, label)
	}
	thr := fmt.Sprintf("%.3f", s.Threshold)
	if !s.ThresholdExact {
		thr = "≈" + thr
	}
	if s.Windows == 0 {
		return fmt.Sprintf("threshold %s (%d windows above): no held-out window above it", thr, s.Above)
	}
	return fmt.Sprintf("threshold %s (%d windows above): held out %d of %d in %s = %.2f [%.2f, %.2f], base rate %.2f, p = %.2g (Holm %.2g)",
		thr, s.Above, s.InClass, s.Windows, label, s.Purity, s.PurityLow, s.PurityHigh, s.BaseRate, s.P, s.PHolm)
}

func slotString(tokens []string, slots []float64) string {
	parts := make([]string, len(tokens))
	for s, t := range tokens {
		parts[s] = fmt.Sprintf("%s(%+.2f)", t, slots[s])
	}
	return strings.Join(parts, " ")
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

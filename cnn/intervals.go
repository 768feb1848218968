package cnn

import (
	"fmt"
	"math"
)

// checkBootstrap panics on a bootstrap asked for no resample or a level
// outside (0, 1); caller names the function for the message.
func checkBootstrap(caller string, resamples int, level float64) {
	if resamples < 1 || !(level > 0 && level < 1) {
		panic(fmt.Sprintf("cnn: %s: %d resamples at level %g: need 1 or more and a level in (0, 1)", caller, resamples, level))
	}
}

// F1Intervals are the F1 figures of a confusion matrix with their
// percentile bootstrap intervals over texts, all from the same resamples.
type F1Intervals struct {
	Macro    Interval
	Weighted Interval
	PerClass []Interval // one per class, in the matrix's order
}

// BootstrapF1s is the macro-F1, the support-weighted F1 and every class's F1
// of the confusion matrix (rows gold, columns predicted, as
// Metrics.Confusion) with their percentile bootstrap intervals over texts,
// drawn as BootstrapMacroF1 draws them (so Macro is BootstrapMacroF1's
// interval for the same arguments). Each figure follows ComputeMetrics in
// every resample: the macro-F1 averages the classes present in the
// resample's gold or predicted labels, the weighted F1 weights each class
// by its gold count in the resample, and a class's F1 is undefined in a
// resample that drew none of its gold texts, so its interval is of the
// resamples that drew some. A class with no gold text has an undefined F1
// (UndefinedInterval). Preconditions as BootstrapMacroF1's. With no text
// the macro and weighted intervals are 0 in [0, 1], and every class's
// undefined.
func BootstrapF1s(confusion [][]int, resamples int, level float64, seed uint64) F1Intervals {
	k := len(confusion)
	checkBootstrap("BootstrapF1s", resamples, level)
	cells := textCells(confusion, "BootstrapF1s")
	if len(cells) == 0 {
		out := F1Intervals{Macro: Interval{High: 1}, Weighted: Interval{High: 1}, PerClass: make([]Interval, k)}
		for c := range out.PerClass {
			out.PerClass[c] = UndefinedInterval()
		}
		return out
	}
	flat := make([]int, k*k)
	perClass := make([]float64, k)
	figures := func(out []float64) {
		out[0] = macroF1Of(flat, k)
		out[1] = weightedF1Of(flat, k, perClass)
		copy(out[2:], perClass)
	}
	ivs := bootstrapPercentiles(len(cells), 2+k, resamples, level, seed, func(w []int, out []float64) {
		countCells(flat, cells, w)
		figures(out)
	})
	countCells(flat, cells, nil)
	est := make([]float64, 2+k)
	figures(est)
	for j := range ivs {
		ivs[j].Estimate = est[j]
		if math.IsNaN(est[j]) || math.IsNaN(ivs[j].Low) || math.IsNaN(ivs[j].High) {
			ivs[j] = UndefinedInterval()
		}
	}
	return F1Intervals{Macro: ivs[0], Weighted: ivs[1], PerClass: ivs[2:]}
}

// weightedF1Of is the support-weighted F1 of the k×k confusion counts flat
// (row-major, rows gold) as ComputeMetrics computes it; it writes each
// class's F1 into f1 (length k), NaN for a class with no gold text.
func weightedF1Of(flat []int, k int, f1 []float64) float64 {
	n, sum := 0, 0.0
	for c := range k {
		tp, fp, fn := classCounts(flat, k, c)
		f1[c] = classF1(tp, fp, fn)
		if tp+fn > 0 {
			sum += f1[c] * float64(tp+fn)
			n += tp + fn
		}
	}
	if n == 0 {
		return 0
	}
	return sum / float64(n)
}

// BootstrapECE is the expected calibration error of the predictions (conf[i]
// the confidence of prediction i, correct[i] whether it was right) over bins
// equal-width bins, corrected for its bias, with its basic (reverse
// percentile) bootstrap interval over texts at the two-sided level
// (Davison & Hinkley 1997, "Bootstrap Methods and their Application",
// §5.2): resamples sets of len(conf) texts drawn with replacement, seeded
// by seed, as every bootstrap interval of the tool draws them. With θ̂ the
// binned ECE of the texts (ComputeMetrics' ECE) and q(p) the p-quantile of
// its resampled values θ*, the interval is [2θ̂ − q((1+level)/2),
// 2θ̂ − q((1−level)/2)] and the Estimate is 2θ̂ − q(1/2), all clipped to
// [0, 1]: the Estimate is the interval at level 0, so it always lies in
// it.
//
// Why not the percentile interval: the binned ECE is biased upward on a
// finite sample (each bin's |accuracy − confidence| is inflated by its
// noise; Kumar, Liang & Ma 2019, "Verified Uncertainty Calibration",
// NeurIPS, recalled from memory), and a resample's ECE is inflated again over θ̂, so the
// percentile interval [q((1−level)/2), q((1+level)/2)] sits above θ̂ and
// may leave it out: for a well-calibrated model it never reaches 0. The
// basic interval reads θ* − θ̂ as the error of θ̂ and takes it off θ̂,
// which corrects the bias to first order, and reaches 0 when 2θ̂ is below
// the upper quantile. The bias-corrected and accelerated interval (Efron
// 1987) was not chosen: its endpoints are quantiles of the θ* themselves,
// so it can never reach below the smallest resampled ECE. The Estimate is
// not θ̂ (ComputeMetrics' ECE, which CalibrationFigure shows beside it):
// an interval that corrects θ̂'s bias may lie below θ̂. Near an ECE
// of 0, where |·| is not smooth, the correction is partial: on simulated
// sets of 400 texts mostly confident (TestBootstrapECEHoldsEstimate) the
// 95% interval covers a true ECE of 0.1 in 92% of them (the percentile
// interval in 81%) and a true ECE of 0 in 43% (the percentile interval in
// none). The tool shows it with CalibrationTest, which holds its level at
// any ECE. Preconditions: equal lengths, confidences in [0, 1], resamples ≥ 1,
// 0 < level < 1; bins ≤ 0 means DefaultBins. With no text it is 0 in
// [0, 1].
func BootstrapECE(conf []float64, correct []bool, bins, resamples int, level float64, seed uint64) Interval {
	if len(conf) != len(correct) {
		panic("cnn: BootstrapECE: conf and correct differ in length")
	}
	checkBootstrap("BootstrapECE", resamples, level)
	if len(conf) == 0 {
		return Interval{High: 1}
	}
	est, sorted := eceDraws(conf, correct, bins, resamples, seed)
	return basicInterval(est, sorted, level)
}

// eceDraws is the binned ECE of the texts as ComputeMetrics computes it and
// its values over resamples resamples of them (bootstrapDraws, seeded by
// seed), sorted. Preconditions: those of BootstrapECE, and at least one
// text.
func eceDraws(conf []float64, correct []bool, bins, resamples int, seed uint64) (est float64, sorted []float64) {
	bin, k := occupiedBins(conf, bins)
	gap := make([]float64, k) // Σ (right − conf) of each occupied bin
	vals := bootstrapDraws(len(conf), 1, resamples, seed, func(w []int, out []float64) {
		clear(gap)
		for i, n := range w {
			if n > 0 {
				d := -conf[i]
				if correct[i] {
					d++
				}
				gap[bin[i]] += float64(n) * d
			}
		}
		e := 0.0
		for _, g := range gap {
			e += math.Abs(g)
		}
		out[0] = e / float64(len(conf))
	})
	return binnedECE(conf, correct, bin, k), vals[0]
}

// basicInterval is the basic bootstrap interval of a figure est in [0, 1]
// from its sorted resampled values at the two-sided level, with the
// figure corrected by the resamples' median as Estimate, all clipped to
// [0, 1] (see BootstrapECE). Precondition: sorted is not empty.
func basicInterval(est float64, sorted []float64, level float64) Interval {
	clip := func(x float64) float64 { return min(max(x, 0), 1) }
	return Interval{
		Estimate: clip(2*est - quantileSorted(sorted, 0.5)),
		Low:      clip(2*est - quantileSorted(sorted, (1+level)/2)),
		High:     clip(2*est - quantileSorted(sorted, (1-level)/2)),
		Method:   MethodBasicBootstrap,
	}
}

// MetricIntervals are the intervals of the figures of Metrics beside the
// headline's (accuracy and macro-F1, in Figures): weighted F1, ECE and every
// class's precision, recall and F1, all at IntervalLevel.
type MetricIntervals struct {
	WeightedF1 Interval `json:"weighted_f1"` // percentile bootstrap over texts; exact bound where fewer than 10 texts are errors or right (F1IntervalsOf)
	// ECE is BootstrapECE (the bias-corrected ECE with its basic
	// bootstrap interval over texts) beside the ECE of the texts, with the
	// p-value of CalibrationTest; nil when the metrics carry no
	// confidences (read back from JSON, or computed without).
	ECE      *CalibrationFigure `json:"ece,omitempty"`
	PerClass []ClassIntervals   `json:"per_class"`
}

// ClassIntervals are one class's precision and recall with their Wilson
// intervals (shares of a count: right predictions of the predicted texts,
// of the gold texts) and its F1 with the percentile bootstrap interval
// over texts, or the exact interval where none of its texts is an error or
// none is right (F1IntervalsOf). A figure with nothing to measure (ClassMetrics) has
// UndefinedInterval, null in JSON.
type ClassIntervals struct {
	Label     string   `json:"label"`
	Precision Interval `json:"precision"`
	Recall    Interval `json:"recall"`
	F1        Interval `json:"f1"`
}

// shareInterval is k of n with its Wilson interval at IntervalLevel, or
// UndefinedInterval when n is 0.
func shareInterval(k, n int) Interval {
	if n == 0 {
		return UndefinedInterval()
	}
	return WilsonInterval(k, n, IntervalLevel)
}

// IntervalsOf is the intervals of m's figures: Wilson for each class's
// precision and recall, F1IntervalsOf for the F1s (BootstrapF1s, with
// exact intervals where a class has few errors or few right texts) and BootstrapECE with
// CalibrationTest for the ECE (with the bins m was computed with), each with
// BootstrapResamples resamples seeded by BootstrapSeed, as HeadlineOf.
// Each Estimate is m's own figure, but the ECE's, which is corrected for
// its bias (BootstrapECE; m's ECE is its Observed).
func IntervalsOf(m Metrics) MetricIntervals {
	f1 := F1IntervalsOf(m.Confusion, BootstrapResamples, IntervalLevel, BootstrapSeed)
	out := MetricIntervals{WeightedF1: f1.Weighted}
	for c, row := range m.Confusion {
		predicted := 0
		for g := range m.Confusion {
			predicted += m.Confusion[g][c]
		}
		support := 0
		for _, n := range row {
			support += n
		}
		out.PerClass = append(out.PerClass, ClassIntervals{Label: m.Labels[c],
			Precision: shareInterval(row[c], predicted), Recall: shareInterval(row[c], support), F1: f1.PerClass[c]})
	}
	if m.conf != nil {
		e := BootstrapECE(m.conf, m.correct, m.bins, BootstrapResamples, IntervalLevel, BootstrapSeed)
		cal := NewCalibrationFigure(m.ECE, e, CalibrationTest(m.conf, m.correct, m.bins, CalibrationDraws, BootstrapSeed), CalibrationDraws)
		out.ECE = &cal
	}
	return out
}

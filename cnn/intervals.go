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
// every resample: a class's F1 with no gold and no predicted text is 0, and
// the weighted F1 weights each class by its gold count in the resample.
// Preconditions as BootstrapMacroF1's. With no text every interval is 0 in
// [0, 1].
func BootstrapF1s(confusion [][]int, resamples int, level float64, seed uint64) F1Intervals {
	k := len(confusion)
	checkBootstrap("BootstrapF1s", resamples, level)
	cells := textCells(confusion, "BootstrapF1s")
	if len(cells) == 0 {
		out := F1Intervals{Macro: Interval{High: 1}, Weighted: Interval{High: 1}, PerClass: make([]Interval, k)}
		for c := range out.PerClass {
			out.PerClass[c].High = 1
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
	}
	return F1Intervals{Macro: ivs[0], Weighted: ivs[1], PerClass: ivs[2:]}
}

// weightedF1Of is the support-weighted F1 of the k×k confusion counts flat
// (row-major, rows gold) as ComputeMetrics computes it; it writes each
// class's F1 into f1 (length k).
func weightedF1Of(flat []int, k int, f1 []float64) float64 {
	n, sum := 0, 0.0
	for c := range k {
		tp, fp, fn := classCounts(flat, k, c)
		f1[c] = ratio(2*tp, 2*tp+fp+fn)
		sum += f1[c] * float64(tp+fn)
		n += tp + fn
	}
	if n == 0 {
		return 0
	}
	return sum / float64(n)
}

// BootstrapECE is the expected calibration error of the predictions (conf[i]
// the confidence of prediction i, correct[i] whether it was right) over bins
// equal-width bins, as ComputeMetrics computes it, with its percentile
// bootstrap interval over texts at the two-sided level: resamples sets of
// len(conf) texts drawn with replacement, seeded by seed, as every bootstrap
// interval of the tool draws them (Efron & Tibshirani 1993, ch. 13).
// Preconditions: equal lengths, confidences in [0, 1], resamples ≥ 1,
// 0 < level < 1; bins ≤ 0 means DefaultBins. With no text it is 0 in [0, 1].
//
// Caution: the binned ECE is biased upward on a finite sample (each bin's
// |accuracy − confidence| is inflated by its noise; Kumar, Liang & Ma 2019,
// "Verified Uncertainty Calibration", NeurIPS, recalled from memory), and
// the percentile interval inherits the bias: for a model whose true ECE is
// near 0 it falls short of its level, and for a perfectly calibrated one it
// never reaches 0. It is checked against SciPy, not by coverage; the
// tool shows it with CalibrationTest, which holds its level at any ECE.
func BootstrapECE(conf []float64, correct []bool, bins, resamples int, level float64, seed uint64) Interval {
	if len(conf) != len(correct) {
		panic("cnn: BootstrapECE: conf and correct differ in length")
	}
	checkBootstrap("BootstrapECE", resamples, level)
	if len(conf) == 0 {
		return Interval{High: 1}
	}
	bin, k := occupiedBins(conf, bins)
	gap := make([]float64, k) // Σ (right − conf) of each occupied bin
	ivs := bootstrapPercentiles(len(conf), 1, resamples, level, seed, func(w []int, out []float64) {
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
	ivs[0].Estimate = binnedECE(conf, correct, bin, k)
	return ivs[0]
}

// MetricIntervals are the intervals of the figures of Metrics beside the
// headline's (accuracy and macro-F1, in Figures): weighted F1, ECE and every
// class's precision, recall and F1, all at IntervalLevel.
type MetricIntervals struct {
	WeightedF1 Interval `json:"weighted_f1"` // percentile bootstrap over texts
	// ECE is the percentile bootstrap over texts with the p-value of
	// CalibrationTest; nil when the metrics carry no confidences (read
	// back from JSON, or computed without).
	ECE      *CalibrationFigure `json:"ece,omitempty"`
	PerClass []ClassIntervals   `json:"per_class"`
}

// ClassIntervals are one class's precision and recall with their Wilson
// intervals (shares of a count: right predictions of the predicted texts,
// of the gold texts) and its F1 with the percentile bootstrap interval
// over texts.
type ClassIntervals struct {
	Label     string   `json:"label"`
	Precision Interval `json:"precision"`
	Recall    Interval `json:"recall"`
	F1        Interval `json:"f1"`
}

// IntervalsOf is the intervals of m's figures: Wilson for each class's
// precision and recall, BootstrapF1s for the F1s and BootstrapECE with
// CalibrationTest for the ECE (with the bins m was computed with), each with
// BootstrapResamples resamples seeded by BootstrapSeed, as HeadlineOf.
// Each Estimate is m's own figure.
func IntervalsOf(m Metrics) MetricIntervals {
	f1 := BootstrapF1s(m.Confusion, BootstrapResamples, IntervalLevel, BootstrapSeed)
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
			Precision: WilsonInterval(row[c], predicted, IntervalLevel),
			Recall:    WilsonInterval(row[c], support, IntervalLevel), F1: f1.PerClass[c]})
	}
	if m.conf != nil {
		e := BootstrapECE(m.conf, m.correct, m.bins, BootstrapResamples, IntervalLevel, BootstrapSeed)
		cal := NewCalibrationFigure(e, CalibrationTest(m.conf, m.correct, m.bins, CalibrationDraws, BootstrapSeed), CalibrationDraws)
		out.ECE = &cal
	}
	return out
}

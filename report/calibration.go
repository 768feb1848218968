package report

import "math"

// ReliabilityBin is one bar of a reliability diagram: the predictions whose
// confidence lies in (Lo, Hi], their mean confidence and their accuracy.
type ReliabilityBin struct {
	Lo, Hi     float64
	Count      int
	Confidence float64 // mean confidence of the bin's predictions (0 when empty)
	Accuracy   float64 // share of them that are correct (0 when empty)
}

// Reliability groups predictions into bins equal-width confidence bins
// ((m−1)/M, m/M], a confidence of exactly 0 in the first, as in the expected
// calibration error of cnn.ComputeMetrics (Guo et al. 2017, "On Calibration
// of Modern Neural Networks", ICML, section 2), so that
// Σ_m Count_m/n · |Accuracy_m − Confidence_m| is that ECE. Conf and correct
// must have the same length; bins ≤ 0 means cnn.DefaultBins.
func Reliability(conf []float64, correct []bool, bins int) []ReliabilityBin {
	if len(conf) != len(correct) {
		panic("report: Reliability: conf and correct differ in length")
	}
	if bins <= 0 {
		bins = defaultBins
	}
	out := make([]ReliabilityBin, bins)
	for m := range out {
		out[m].Lo = float64(m) / float64(bins)
		out[m].Hi = float64(m+1) / float64(bins)
	}
	for i, c := range conf {
		m := max(0, min(bins-1, int(math.Ceil(c*float64(bins)))-1))
		out[m].Count++
		out[m].Confidence += c
		if correct[i] {
			out[m].Accuracy++
		}
	}
	for m := range out {
		if n := float64(out[m].Count); n > 0 {
			out[m].Confidence /= n
			out[m].Accuracy /= n
		}
	}
	return out
}

package cnn

import "math"

// ReliabilityBin is one bin of a reliability diagram: the predictions whose
// confidence lies in (Lo, Hi] (the first bin also holds a confidence of
// exactly 0), how many there are, their mean confidence and their accuracy.
// Conf and Acc are 0 for an empty bin.
type ReliabilityBin struct {
	Lo, Hi float64
	Count  int
	Conf   float64
	Acc    float64
}

// Reliability groups predictions into bins equal-width confidence bins, the
// same bins as the expected calibration error of ComputeMetrics (Guo et al.
// 2017, "On Calibration of Modern Neural Networks", ICML): bin m holds the
// confidences in ((m−1)/M, m/M]. Conf[i] is the confidence of prediction i
// (the probability of the predicted class) and correct[i] whether it was
// right; the lengths must be equal. Bins ≤ 0 means DefaultBins.
//
// ECE = Σ_m Count_m/n · |Acc_m − Conf_m| over the returned bins.
func Reliability(conf []float64, correct []bool, bins int) []ReliabilityBin {
	if len(conf) != len(correct) {
		panic("cnn: Reliability: conf and correct differ in length")
	}
	if bins <= 0 {
		bins = DefaultBins
	}
	out := make([]ReliabilityBin, bins)
	for b := range out {
		out[b].Lo, out[b].Hi = float64(b)/float64(bins), float64(b+1)/float64(bins)
	}
	for i, c := range conf {
		b := int(math.Ceil(c*float64(bins))) - 1
		b = max(0, min(bins-1, b))
		out[b].Count++
		out[b].Conf += c
		if correct[i] {
			out[b].Acc++
		}
	}
	for b := range out {
		if n := out[b].Count; n > 0 {
			out[b].Conf /= float64(n)
			out[b].Acc /= float64(n)
		}
	}
	return out
}

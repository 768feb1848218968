package cnn

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// DefaultBins is the number of equal-width confidence bins of the expected
// calibration error.
const DefaultBins = 15

// Metrics is the evaluation of a classifier on a labeled split.
type Metrics struct {
	Labels     []string       `json:"labels"`
	N          int            `json:"n"`
	Accuracy   float64        `json:"accuracy"`
	MacroF1    float64        `json:"macro_f1"`
	WeightedF1 float64        `json:"weighted_f1"`
	ECE        float64        `json:"ece"`
	PerClass   []ClassMetrics `json:"per_class"`
	Confusion  [][]int        `json:"confusion"` // rows gold, columns predicted
}

// ClassMetrics is precision, recall and F1 of one class.
type ClassMetrics struct {
	Label     string  `json:"label"`
	Precision float64 `json:"precision"`
	Recall    float64 `json:"recall"`
	F1        float64 `json:"f1"`
	Support   int     `json:"support"` // gold items of the class
}

// ComputeMetrics evaluates predictions pred against gold (class indices into
// labels, same length). Conf holds the confidence of each prediction (its
// probability), used for the expected calibration error with bins
// equal-width bins (0 means DefaultBins); conf may be nil, giving ECE 0.
//
// Conventions follow scikit-learn's precision_recall_fscore_support: a
// precision, recall or F1 whose denominator is zero is 0; the macro average
// is over the classes that occur in gold or pred (scikit-learn's default
// labels=None); the weighted average weights each class by its support.
func ComputeMetrics(labels []string, gold, pred []int, conf []float64, bins int) Metrics {
	if len(gold) != len(pred) || (conf != nil && len(conf) != len(gold)) {
		panic("cnn: ComputeMetrics: gold, pred and conf differ in length")
	}
	k := len(labels)
	mt := Metrics{Labels: append([]string(nil), labels...), N: len(gold), Confusion: make([][]int, k)}
	for i := range mt.Confusion {
		mt.Confusion[i] = make([]int, k)
	}
	correct := 0
	for i, g := range gold {
		mt.Confusion[g][pred[i]]++
		if g == pred[i] {
			correct++
		}
	}
	if len(gold) > 0 {
		mt.Accuracy = float64(correct) / float64(len(gold))
	}
	present, sumF1, sumW := 0, 0.0, 0.0
	for c := 0; c < k; c++ {
		tp, fp, fn := mt.Confusion[c][c], 0, 0
		for o := 0; o < k; o++ {
			if o != c {
				fp += mt.Confusion[o][c]
				fn += mt.Confusion[c][o]
			}
		}
		cm := ClassMetrics{Label: labels[c], Support: tp + fn}
		cm.Precision = ratio(tp, tp+fp)
		cm.Recall = ratio(tp, tp+fn)
		cm.F1 = ratio(2*tp, 2*tp+fp+fn)
		if tp+fp+fn > 0 {
			present++
			sumF1 += cm.F1
		}
		sumW += cm.F1 * float64(cm.Support)
		mt.PerClass = append(mt.PerClass, cm)
	}
	if present > 0 {
		mt.MacroF1 = sumF1 / float64(present)
	}
	if len(gold) > 0 {
		mt.WeightedF1 = sumW / float64(len(gold))
	}
	if conf != nil {
		ok := make([]bool, len(gold))
		for i := range gold {
			ok[i] = gold[i] == pred[i]
		}
		mt.ECE = expectedCalibrationError(conf, ok, bins)
	}
	return mt
}

func ratio(a, b int) float64 {
	if b == 0 {
		return 0
	}
	return float64(a) / float64(b)
}

// expectedCalibrationError is ECE = Σ_m |B_m|/n · |acc(B_m) − conf(B_m)| over
// equal-width bins B_m = ((m−1)/M, m/M] (Guo et al. 2017, "On Calibration of
// Modern Neural Networks", ICML); a confidence of exactly 0 goes to the first
// bin.
func expectedCalibrationError(conf []float64, correct []bool, bins int) float64 {
	if bins <= 0 {
		bins = DefaultBins
	}
	if len(conf) == 0 {
		return 0
	}
	cnt := make([]int, bins)
	sumC := make([]float64, bins)
	sumA := make([]float64, bins)
	for i, c := range conf {
		b := int(math.Ceil(c*float64(bins))) - 1
		b = max(0, min(bins-1, b))
		cnt[b]++
		sumC[b] += c
		if correct[i] {
			sumA[b]++
		}
	}
	var e float64
	for b := range cnt {
		if cnt[b] > 0 {
			e += math.Abs(sumA[b]-sumC[b]) / float64(len(conf))
		}
	}
	return e
}

// Evaluate runs m on every text of d with threads goroutines (0 means
// GOMAXPROCS) and returns the metrics and the predicted class of each text
// (the first class of highest probability).
func Evaluate(m *Model, d Data, threads int) (Metrics, []int, error) {
	return evaluate(m, d, threads, true)
}

// evaluate is Evaluate; without cached it leaves the model's persistent
// slot table alone (Train's dev evaluations: the weights change after each).
func evaluate(m *Model, d Data, threads int, cached bool) (Metrics, []int, error) {
	if err := d.check(m.Config, "evaluation"); err != nil {
		return Metrics{}, nil, err
	}
	probs := m.probabilities(d.IDs, threads, cached)
	pred := make([]int, len(probs))
	conf := make([]float64, len(probs))
	for i, p := range probs {
		pred[i], conf[i] = argmax(p)
	}
	return ComputeMetrics(m.Labels, d.Labels, pred, conf, DefaultBins), pred, nil
}

// argmax returns the index of the first largest value and that value.
func argmax(p []float32) (int, float64) {
	best := 0
	for i, v := range p {
		if v > p[best] {
			best = i
		}
	}
	return best, float64(p[best])
}

// Data is a labeled split encoded as vocabulary ids.
type Data struct {
	IDs    [][]int32 // one text per entry
	Labels []int     // class index of each text
}

// Len is the number of texts.
func (d Data) Len() int { return len(d.IDs) }

// check validates d against cfg.
func (d Data) check(cfg Config, name string) error {
	if len(d.IDs) != len(d.Labels) {
		return fmt.Errorf("cnn: %s data: %d texts but %d labels", name, len(d.IDs), len(d.Labels))
	}
	for i, ids := range d.IDs {
		if l := d.Labels[i]; l < 0 || l >= cfg.Classes {
			return fmt.Errorf("cnn: %s data: text %d has class %d, the model has %d classes", name, i, l, cfg.Classes)
		}
		for _, id := range ids {
			if id < 0 || int(id) >= cfg.VocabSize {
				return fmt.Errorf("cnn: %s data: text %d has word id %d outside the vocabulary of %d: encode texts with the model's vocabulary", name, i, id, cfg.VocabSize)
			}
		}
	}
	return nil
}

// McNemar is the exact McNemar test of two classifiers on the same texts
// (McNemar 1947, "Note on the sampling error of the difference between
// correlated proportions or percentages", Psychometrika; exact form:
// the discordant pairs are binomial with p = 1/2 under the null hypothesis
// of equal accuracy).
type McNemar struct {
	OnlyA int     `json:"only_a"` // texts A labels right and B wrong
	OnlyB int     `json:"only_b"` // texts B labels right and A wrong
	P     float64 `json:"p"`      // two-sided p-value: min(1, 2·P[X ≤ min(OnlyA, OnlyB)]), X ~ Binomial(OnlyA+OnlyB, 1/2)
}

// McNemarExact runs the exact McNemar test on the predictions predA and
// predB of gold (all the same length).
func McNemarExact(gold, predA, predB []int) McNemar {
	if len(gold) != len(predA) || len(gold) != len(predB) {
		panic("cnn: McNemarExact: gold and predictions differ in length")
	}
	var t McNemar
	for i, g := range gold {
		a, b := predA[i] == g, predB[i] == g
		switch {
		case a && !b:
			t.OnlyA++
		case b && !a:
			t.OnlyB++
		}
	}
	t.P = 1
	if n := t.OnlyA + t.OnlyB; n > 0 {
		bin := distuv.Binomial{N: float64(n), P: 0.5}
		t.P = min(1, 2*bin.CDF(float64(min(t.OnlyA, t.OnlyB))))
	}
	return t
}

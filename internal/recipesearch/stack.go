package main

import (
	"fmt"
	"math"

	"telltale/cnn"
	"telltale/corpus"
)

// Stacking: the CNN's and the linear baseline's log-probabilities joined
// as a·log p_CNN + b·log p_baseline, the weights (a, b) fitted on the dev
// split by mean log-loss (stacked generalization, Wolpert 1992, "Stacked
// generalization", Neural Networks 5(2); the weighted mix of a neural and
// a linear text classifier as in Mesnil, Mikolov, Ranzato & Bengio 2014,
// "Ensemble of generative and discriminative techniques for sentiment
// analysis of movie reviews"). It is measured here only, to decide
// whether such a join is worth building into the model.

// stackScores are each text's log-probabilities under the CNN and under
// the baseline, with its gold label.
type stackScores struct {
	cnn, lin [][]float64
	gold     []int
}

// stackScoresOf scores ds with m (which must carry a baseline), the
// baseline seeing the tokenizer's words cut to maxLen as in training.
func stackScoresOf(m *cnn.Model, enc *corpus.Encoder, ds *corpus.Dataset, maxLen, threads int) (stackScores, error) {
	d, err := cnn.EncodeDataset(enc, ds, m.Labels, threads)
	if err != nil {
		return stackScores{}, err
	}
	pc := m.Probabilities(d.IDs, threads)
	docs := make([][]string, len(ds.Examples))
	for i, t := range ds.Texts() {
		toks := enc.Tok.Tokenize(t)
		if maxLen > 0 && len(toks) > maxLen {
			toks = toks[:maxLen]
		}
		for _, tk := range toks {
			docs[i] = append(docs[i], tk.Text)
		}
	}
	pl := m.Baseline.Probabilities(docs)
	s := stackScores{gold: d.Labels}
	for i := range pc {
		a, b := make([]float64, len(pc[i])), make([]float64, len(pc[i]))
		for c := range pc[i] {
			a[c], b[c] = logf(float64(pc[i][c])), logf(pl[i][c])
		}
		s.cnn, s.lin = append(s.cnn, a), append(s.lin, b)
	}
	return s, nil
}

// label returns text i's joined label under weights (a, b) and its
// log-loss.
func (s stackScores) label(i int, a, b float64) (int, float64) {
	z := make([]float64, len(s.cnn[i]))
	best := 0
	for c := range z {
		z[c] = a*s.cnn[i][c] + b*s.lin[i][c]
		if z[c] > z[best] {
			best = c
		}
	}
	var sum float64
	for _, v := range z {
		sum += math.Exp(v - z[best])
	}
	return best, math.Log(sum) - (z[s.gold[i]] - z[best])
}

// stackGrid is the weights tried: 0 and 2^(k/4) for k = −32 … 12.
var stackGrid = func() []float64 {
	g := []float64{0}
	for k := -32; k <= 12; k++ {
		g = append(g, math.Pow(2, float64(k)/4))
	}
	return g
}()

// fit returns the weights of the grid with the least mean log-loss on the
// texts idx.
func (s stackScores) fit(idx []int) (a, b float64) {
	a, best := 1, math.Inf(1)
	for _, wa := range stackGrid {
		for _, wb := range stackGrid {
			var loss float64
			for _, i := range idx {
				_, l := s.label(i, wa, wb)
				loss += l
			}
			if loss < best {
				a, b, best = wa, wb, loss
			}
		}
	}
	return a, b
}

// metrics scores the joined labels of the texts idx under (a, b).
func (s stackScores) metrics(labels []string, idx []int, a, b float64) cnn.Metrics {
	gold, pred := make([]int, len(idx)), make([]int, len(idx))
	for k, i := range idx {
		gold[k] = s.gold[i]
		pred[k], _ = s.label(i, a, b)
	}
	return cnn.ComputeMetrics(labels, gold, pred, nil, 0)
}

// stackCells are the table cells of the join: its dev figures by two-fold
// cross-fitting (weights fitted on the even texts score the odd ones and
// the reverse), so no dev text scores weights it chose, and, with a test
// split, its test figures under the weights fitted on the whole dev split.
func stackCells(m *cnn.Model, enc *corpus.Encoder, sp splits, maxLen, threads int) (string, error) {
	dev, err := stackScoresOf(m, enc, sp.dev, maxLen, threads)
	if err != nil {
		return "", err
	}
	var halves [2][]int
	for i := range dev.gold {
		halves[i%2] = append(halves[i%2], i)
	}
	gold, pred := []int{}, []int{}
	for h := range halves {
		a, b := dev.fit(halves[1-h])
		for _, i := range halves[h] {
			p, _ := dev.label(i, a, b)
			gold, pred = append(gold, dev.gold[i]), append(pred, p)
		}
	}
	cv := cnn.ComputeMetrics(m.Labels, gold, pred, nil, 0)
	a, b := dev.fit(append(halves[0], halves[1]...))
	cells := fmt.Sprintf(" joined dev (two-fold) %.4f / %.4f, weights %.3g, %.3g |", cv.Accuracy, cv.MacroF1, a, b)
	if sp.test == nil {
		return cells, nil
	}
	ts, err := stackScoresOf(m, enc, sp.test, maxLen, threads)
	if err != nil {
		return "", err
	}
	all := make([]int, len(ts.gold))
	for i := range all {
		all[i] = i
	}
	mt := ts.metrics(m.Labels, all, a, b)
	return cells + fmt.Sprintf(" joined test %.4f / %.4f |", mt.Accuracy, mt.MacroF1), nil
}

package cnn

import (
	"context"
	"fmt"
	"math/rand/v2"
	"slices"

	"telltale/corpus"
	"telltale/linear"
)

// The fitted start of the wide path (TrainConfig.WideFit): before the
// first step the word and bigram weights are set to the L2-regularised
// multinomial logistic regression on the wide path's own features, its C
// chosen on the dev split as the baseline's is (or fixed by
// TrainConfig.WideFitC), and the filters' output
// weights to zero, so training starts from that linear model and the
// filters learn what it leaves (the wide and deep parts of Cheng et al.
// 2016 trained jointly, the wide one started where it fits alone; a
// linear start for a residual as in gradient boosting, Friedman 2001,
// "Greedy Function Approximation: A Gradient Boosting Machine").

// wideFitGradTol is where the start's L-BFGS stops (linear.SolverConfig's
// GradTol): a start need not be as tight as the baseline's 1e-8, which
// took minutes on the demo, and at 1e-6 the probabilities stay within
// 1e-3 of scikit-learn's optimum (TestWideFitAgainstScikitLearn).
const wideFitGradTol = 1e-6

// wideFeatures is the number of columns of wideRows: one per word id, then
// one per bigram of the model's set.
func (m *Model) wideFeatures() int { return m.Config.VocabSize + len(m.Bigrams) }

// wideRows returns each text's wide-path features: word id w's column holds
// its count over N+M and bigram row r's (column VocabSize+r) its count over
// N+M, N the text's non-PAD ids and M its pairs found in the bigram set, so
// that a row's dot product with the model's wide weights is the wide term
// addWide adds; a text without a non-PAD id gets UNK's column at 1, as
// addWide adds UNK's row for it. M must have the wide path; ids must be
// below VocabSize.
func (m *Model) wideRows(d Data) []linear.Row {
	rows := make([]linear.Row, d.Len())
	pairRows := make([]int32, 0, 64)
	for i, ids := range d.IDs {
		if cap(pairRows) < len(ids) {
			pairRows = make([]int32, len(ids))
		}
		pr := pairRows[:len(ids)]
		if !m.Config.WideBigrams {
			pr = nil
		}
		n, pairs := m.wideCounts(ids, pr)
		if n == 0 {
			rows[i] = linear.Row{Index: []int32{corpus.UNK}, Value: []float64{1}}
			continue
		}
		counts := make(map[int32]float64, n+pairs)
		for t, id := range ids {
			if id == corpus.PAD {
				continue
			}
			counts[id]++
			if pr != nil && pr[t] >= 0 {
				counts[int32(m.Config.VocabSize)+pr[t]]++
			}
		}
		rows[i] = sparseRow(counts, 1/float64(n+pairs))
	}
	return rows
}

// sparseRow is counts as a row with ascending columns, each value scaled.
func sparseRow(counts map[int32]float64, scale float64) linear.Row {
	r := linear.Row{Index: make([]int32, 0, len(counts)), Value: make([]float64, 0, len(counts))}
	for j := range counts {
		r.Index = append(r.Index, j)
	}
	slices.Sort(r.Index)
	for _, j := range r.Index {
		r.Value = append(r.Value, counts[j]*scale)
	}
	return r
}

// checkWideFit refuses a fitted start (tc.WideFit) for a model without the
// word weights.
func checkWideFit(cfg Config, tc TrainConfig) error {
	if tc.WideFit && !cfg.Wide {
		return fmt.Errorf("cnn: a fitted start of the word weights needs the word weights: turn Config.Wide on or TrainConfig.WideFit off")
	}
	return nil
}

// startWide reports PhaseWideFit and fits m's start when tc.WideFit is set
// (fitWideStart), and with tc.WideFitFolds the out-of-fold wide terms of
// train (wideOutOfFold; nil otherwise); cancelled says that ctx ended the
// fit, m unchanged.
func startWide(ctx context.Context, m *Model, train, dev Data, tc TrainConfig, progress func(Progress)) (oof []float32, cancelled bool, err error) {
	if !tc.WideFit {
		return nil, false, nil
	}
	if progress != nil {
		progress(Progress{Phase: PhaseWideFit})
	}
	fit := func() error {
		clf, err := m.fitWideStart(ctx, train, dev, tc)
		if err != nil || tc.WideFitFolds < 2 {
			return err
		}
		oof, err = m.wideOutOfFold(ctx, train, tc, clf)
		return err
	}
	if err := fit(); err != nil {
		if ctx.Err() == nil {
			return nil, false, err
		}
		return nil, true, nil
	}
	return oof, false, nil
}

// wideFit is the logistic regression of m's wide features that the fitted
// start uses, over the grid cs (the one C of tc.WideFitC when it is
// positive).
func (m *Model) wideFit(tc TrainConfig, cs []float64) linear.RowsFit {
	if tc.WideFitC > 0 {
		cs = []float64{tc.WideFitC}
	}
	return linear.RowsFit{Features: m.wideFeatures(), Classes: m.Config.Classes, Cs: cs,
		Solver: linear.SolverConfig{Threads: tc.Threads, GradTol: wideFitGradTol},
		Score:  func(gold, pred []int) float64 { return ComputeMetrics(m.Labels, gold, pred, nil, 0).MacroF1 }}
}

// fitWideStart sets m's word and bigram weights and OutB to the logistic
// regression fitted on train's wide features, times tc.WideFitShrink when
// it is positive (C tc.WideFitC when it is positive; else of the
// baseline's grid, the best dev macro-F1, the middle one without a dev
// split), and OutW to zero, and returns that fit (unshrunk). M must have the wide path; train and dev
// must have passed check.
func (m *Model) fitWideStart(ctx context.Context, train, dev Data, tc TrainConfig) (*linear.Classifier, error) {
	if err := checkWideFit(m.Config, tc); err != nil {
		return nil, err
	}
	C, p := m.Config.Classes, m.wideFeatures()
	fit := m.wideFit(tc, linear.DefaultConfig().Cs)
	if tc.ClassWeight == "balanced" {
		fit.ClassWeight = linear.BalancedWeights(train.Labels, C)
	}
	clf, _, err := fit.Fit(ctx, m.wideRows(train), train.Labels, m.wideRows(dev), dev.Labels)
	if err != nil {
		return nil, fmt.Errorf("cnn: fitted start of the wide path: %w", err)
	}
	V, nu := m.Config.VocabSize, or(tc.WideFitShrink, 1)
	for c := range C {
		coef := clf.Coef[c*p : (c+1)*p]
		for w := range V {
			m.Wide[w*C+c] = float32(nu * coef[w])
		}
		for r := range len(m.Bigrams) {
			m.WideBigram[r*C+c] = float32(nu * coef[V+r])
		}
		m.OutB[c] = float32(nu * clf.Intercept[c])
	}
	clear(m.OutW)
	m.Invalidate()
	return clf, nil
}

// wideOutOfFold cuts train into tc.WideFitFolds folds (a permutation drawn
// from tc.Seed), refits the logistic regression of full (the fitted start)
// at full's C on all folds but one, and returns, for each training text
// i, row i×Classes of the result: the wide term plus intercept of the fit
// that did not see it, less full's intercept (which OutB holds). The
// trainer adds it in place of the model's wide term (Model.addWide), so a
// step sees logits OutW·h + OutB + that row. Train must have at least
// tc.WideFitFolds texts.
func (m *Model) wideOutOfFold(ctx context.Context, train Data, tc TrainConfig, full *linear.Classifier) ([]float32, error) {
	k, n, C, p := tc.WideFitFolds, train.Len(), m.Config.Classes, m.wideFeatures()
	if n < k {
		return nil, fmt.Errorf("cnn: %d training texts for %d folds of the fitted start: lower the folds", n, k)
	}
	rows := m.wideRows(train)
	fold := make([]int, n)
	for j, i := range rand.New(rand.NewPCG(tc.Seed^0x13198a2e03707344, tc.Seed)).Perm(n) {
		fold[i] = j % k
	}
	out := make([]float32, n*C)
	for f := range k {
		var X []linear.Row
		var y []int
		for i := range n {
			if fold[i] != f {
				X, y = append(X, rows[i]), append(y, train.Labels[i])
			}
		}
		fc := m.wideFit(tc, nil)
		fc.Cs = []float64{full.C} // the C the full fit was chosen with
		if tc.ClassWeight == "balanced" {
			fc.ClassWeight = linear.BalancedWeights(y, C)
		}
		clf, _, err := fc.Fit(ctx, X, y, nil, nil)
		if err != nil {
			return nil, fmt.Errorf("cnn: fold %d of the fitted start: %w", f+1, err)
		}
		for i := range n {
			if fold[i] != f {
				continue
			}
			r := rows[i]
			for c := range C {
				z := clf.Intercept[c] - full.Intercept[c]
				coef := clf.Coef[c*p : (c+1)*p]
				for j, col := range r.Index {
					z += coef[col] * r.Value[j]
				}
				out[i*C+c] = float32(z)
			}
		}
	}
	return out, nil
}

// wideTerm adds text i's wide term in training to t.z: the model's
// (trainer.addWide), or its out-of-fold one (wideOOF), times the learned
// scale when there is one, keeping the unscaled term in t.wz for the
// scale's gradient.
func (tr *trainer) wideTerm(t *threadBuf, i int, ids []int32) {
	C := tr.m.Config.Classes
	z := t.z
	if tr.scale != nil {
		t.wz = grow(t.wz, C)
		clear(t.wz)
		z = t.wz
	}
	if tr.wideOOF != nil {
		j := tr.batchIdx[i] * C
		addTo(z, tr.wideOOF[j:j+C])
	} else {
		tr.addWide(i, ids, z)
	}
	if tr.scale != nil {
		axpy(tr.scale[0], t.wz, t.z)
	}
}

// scatterWideGrads moves the step's gradients of the wide path where the
// optimizer reads them: the word and bigram tables' (when they train)
// and the learned scale's.
func (tr *trainer) scatterWideGrads() {
	if tr.gWide != nil {
		tr.scatterWide()
	}
	if tr.gBig != nil {
		tr.scatterBigrams()
	}
	if tr.scale != nil {
		tr.sumScaleGrad()
	}
}

// sumScaleGrad sums the threads' gradients of the learned scale into
// gScale, in thread order.
func (tr *trainer) sumScaleGrad() {
	var g float32
	for k := range tr.th {
		g += tr.th[k].dScale
		tr.th[k].dScale = 0
	}
	tr.gScale[0] = g
}

// foldWideScale moves the learned scale (TrainConfig.WideFitScale) into
// the word and bigram weights and the out-of-fold terms, and sets it to 1:
// the model's wide term is then the one training used.
func (tr *trainer) foldWideScale() {
	if tr.scale == nil || tr.scale[0] == 1 {
		return
	}
	s := tr.scale[0]
	for _, w := range [][]float32{tr.m.Wide, tr.m.WideBigram, tr.wideOOF} {
		for j := range w {
			w[j] *= s
		}
	}
	tr.scale[0] = 1
}

package main

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/linear"
)

// The dev split chooses the CNN's kept epoch (among up to 20) and the
// baseline's C (among five), and the row's dev figures are those of the
// choices, so they flatter each model by as much as its choice was fitted
// to the dev split's noise: more for the CNN, with more and noisier
// choices. With -halves each row also scores both choices cross-fitted: the
// dev split is halved at random (seeded, the same halves for every
// candidate), the choice made on one half is scored on the other, and the
// two scores are averaged (the choice of a model by cross-validation, as
// in Stone 1974, "Cross-Validatory Choice and Assessment of Statistical
// Predictions", JRSS B 36). The run's early stopping still reads the whole
// dev split, so the CNN's epochs are those of the row.

// halvesSeed seeds the dev split's halves.
const halvesSeed = 20261205

// epochPredictions records the predictions of each epoch's model on the
// dev split (Progress.Model), encoded and cut as TrainText encodes and
// Train cuts it.
type epochPredictions struct {
	enc     *corpus.Encoder // TrainText's, built the same way
	dev     cnn.Data
	threads int
	preds   [][]int // per epoch, per dev text
}

// newEpochPredictions encodes sp's dev split as TrainText will for r, or
// returns nil when on is not set (no -halves).
func newEpochPredictions(on bool, r cnn.Recipe, sp splits) (*epochPredictions, error) {
	if !on {
		return nil, nil
	}
	if r.Members > 1 {
		return nil, fmt.Errorf("-halves with %d members: each member reports its own epochs; score one member", r.Members)
	}
	enc, err := corpus.TrainEncoder(r.Tokenizer, sp.train.Texts())
	if err != nil {
		return nil, err
	}
	dev, err := cnn.EncodeDataset(enc, sp.dev, sp.train.Labels, r.Train.Threads)
	if err != nil {
		return nil, err
	}
	return &epochPredictions{enc: enc, dev: dev.Truncate(r.Train.MaxLen), threads: r.Train.Threads}, nil
}

// progressFunc is TrainText's progress function: nil for a nil e (no
// -halves), else e.progress.
func (e *epochPredictions) progressFunc() func(cnn.Progress) {
	if e == nil {
		return nil
	}
	return e.progress
}

// progress records the predictions at the end of every epoch.
func (e *epochPredictions) progress(p cnn.Progress) {
	if p.Phase != "epoch" || p.Model == nil {
		return
	}
	pred := make([]int, e.dev.Len())
	for i, probs := range p.Model.Probabilities(e.dev.IDs, e.threads) {
		for c, q := range probs {
			if q > probs[pred[i]] {
				pred[i] = c // the first highest, as the metrics take it
			}
		}
	}
	e.preds = append(e.preds, pred)
}

// halves returns the dev split's two halves (indexes of n texts).
func halves(n int) [2][]int {
	perm := rand.New(rand.NewPCG(halvesSeed, 1)).Perm(n)
	return [2][]int{perm[:n/2], perm[n/2:]}
}

// crossFitted is the mean over the two halves of the score, on one half,
// of the candidate the other half chose: candidate c's predictions are
// preds[c]; the choice is the first highest macro-F1.
func crossFitted(labels []string, gold []int, preds [][]int) float64 {
	h := halves(len(gold))
	f1 := func(c int, idx []int) float64 {
		g, p := make([]int, len(idx)), make([]int, len(idx))
		for j, i := range idx {
			g[j], p[j] = gold[i], preds[c][i]
		}
		return cnn.ComputeMetrics(labels, g, p, nil, 0).MacroF1
	}
	var sum float64
	for k := range 2 {
		best, bestScore := 0, -1.0
		for c := range preds {
			if s := f1(c, h[k]); s > bestScore {
				best, bestScore = c, s
			}
		}
		sum += f1(best, h[1-k])
	}
	return sum / 2
}

// baselinePredictions fits the baseline of r on sp's training split at
// each C of its grid and returns each fit's predictions on the dev split,
// the tokens as the pipeline gives them (enc's words, cut to the training
// length).
func baselinePredictions(ctx context.Context, r cnn.Recipe, sp splits, enc *corpus.Encoder) ([][]int, error) {
	docs := func(ds *corpus.Dataset) [][]string {
		out := make([][]string, len(ds.Examples))
		for i, text := range ds.Texts() {
			toks := enc.Tok.Tokenize(text)
			if n := r.Train.MaxLen; n > 0 && len(toks) > n {
				toks = toks[:n]
			}
			for _, t := range toks {
				out[i] = append(out[i], t.Text)
			}
		}
		return out
	}
	y, err := sp.train.LabelIndex(sp.train.Labels)
	if err != nil {
		return nil, err
	}
	train, dev := linear.Split{Docs: docs(sp.train), Labels: y}, docs(sp.dev)
	cfg := *r.Baseline
	var out [][]int
	for _, c := range cfg.Cs {
		one := cfg
		one.Cs = []float64{c}
		one.ClassWeight = r.Train.ClassWeight
		bm, err := linear.Fit(ctx, train, linear.Split{}, sp.train.Labels, one, nil, nil)
		if err != nil {
			return nil, fmt.Errorf("baseline at C %g: %w", c, err)
		}
		out = append(out, bm.Predict(dev))
	}
	return out, nil
}

// halvesCells is the row's cells of the cross-fitted dev macro-F1 of the
// CNN's epoch choice (e's predictions) and, when r has a baseline, of the
// baseline's choice of C. As a check of the recorded predictions, the
// whole dev split's macro-F1 of the kept epoch's must be the one the model
// records, and the best of the refitted baseline's the one its model
// records (an error otherwise).
func halvesCells(ctx context.Context, r cnn.Recipe, m *cnn.Model, sp splits, e *epochPredictions) (string, error) {
	gold, err := sp.dev.LabelIndex(sp.train.Labels)
	if err != nil {
		return "", err
	}
	labels := sp.train.Labels
	whole := func(pred []int) float64 { return cnn.ComputeMetrics(labels, gold, pred, nil, 0).MacroF1 }
	if k := m.Info.BestEpoch; k < 1 || k > len(e.preds) || whole(e.preds[k-1]) != m.Info.Dev.MacroF1 {
		return "", fmt.Errorf("-halves: the recorded predictions of the kept epoch %d do not give its dev macro-F1 %g", k, m.Info.Dev.MacroF1)
	}
	cell := fmt.Sprintf(" halves: CNN %.4f", crossFitted(labels, gold, e.preds))
	if r.Baseline != nil && m.Baseline != nil {
		bp, err := baselinePredictions(ctx, r, sp, e.enc)
		if err != nil {
			return "", err
		}
		best, recorded := 0.0, 0.0
		for i, pred := range bp {
			best = max(best, whole(pred))
			recorded = max(recorded, m.Baseline.Dev[i].Score)
		}
		if math.Abs(best-recorded) > 1e-12 {
			return "", fmt.Errorf("-halves: the refitted baseline's best dev macro-F1 %g, the model's %g", best, recorded)
		}
		cell += fmt.Sprintf(", baseline %.4f", crossFitted(labels, gold, bp))
	}
	return cell + " |", nil
}

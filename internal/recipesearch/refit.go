package main

import (
	"context"
	"fmt"

	"telltale/cnn"
	"telltale/corpus"
)

// innerDevShare is the share of a rotation's training split that the
// nested refit measure holds out as its inner dev split: a ninth, the
// dev:training ratio of the rotations (300:2,400 on reviews3).
const innerDevShare = 1.0 / 9

// refitRecipe is r set to fit again with the choices of a first fit
// fixed (common practice, no source; a grid search's refit): the CNN
// trains for the kept epoch count with no dev split, so its last epoch is
// kept, and the baseline fits at its chosen C alone.
func refitRecipe(r cnn.Recipe, first *cnn.Model, keptEpoch int) cnn.Recipe {
	r.Train.Epochs = keptEpoch
	if r.Baseline != nil && first.Baseline != nil {
		b := *r.Baseline
		b.Cs = []float64{first.Baseline.Classifier.C}
		r.Baseline = &b
	}
	return r
}

// measureRefit is the row of the refit measure. Nested (sp.test nil): the
// training split is cut into an inner training and dev split
// (innerDevShare, stratified, seed 1); the first fit trains on the inner
// training split with its choices made on the inner dev split, the refit
// trains on the whole training split with those choices fixed, and both
// are scored on sp.dev, which neither saw. Full (sp.test set, only to
// check a choice already made): the first fit is the usual one on the
// training and dev splits, the refit trains on both, and both are scored
// on the test split.
func measureRefit(which, name string, r cnn.Recipe, sp splits) (string, error) {
	// A choice the refit does not fix: the fitted start's C, chosen on dev
	// (a learning-rate decay needs nothing: epoch e's rate does not depend
	// on the number of epochs).
	if r.Train.WideFit && r.Train.WideFitC == 0 {
		return "", fmt.Errorf("-refit %s: the refit cannot fix a fitted start's C chosen on dev: set cnn.TrainConfig.WideFitC, or leave the fitted start out", name)
	}
	ctx := context.Background()
	firstTrain, firstDev, scoreOn, refitOn := sp.train, sp.dev, sp.dev, sp.train
	form, what := "nested", "dev"
	if sp.test != nil {
		scoreOn, refitOn, form, what = sp.test, corpus.Join(sp.train, sp.dev), "full", "test"
	} else {
		firstTrain, firstDev = sp.train.Split(innerDevShare, 1)
	}
	first, err := cnn.TrainText(ctx, firstTrain, firstDev, r, nil)
	if err != nil {
		return "", err
	}
	kept := first.Result.BestEpoch
	second, err := cnn.TrainText(ctx, refitOn, nil, refitRecipe(r, first.Model, kept), nil)
	if err != nil {
		return "", err
	}
	row := fmt.Sprintf("| %s | %s | %d | %s | first fit %d/%d, refit %d texts, kept epoch %d/%d |", which, name, r.Train.Seed, form,
		len(firstTrain.Examples), len(firstDev.Examples), len(refitOn.Examples), kept, len(first.Result.Epochs))
	for _, m := range []*cnn.Model{first.Model, second.Model} {
		cells, err := scoreCells(m, scoreOn, what, r.Train.Threads)
		if err != nil {
			return "", err
		}
		row += cells
		if which == "demo" && sp.test == nil {
			if cells, err = spreadCells(m, sp.dev, r.Train.Threads); err != nil {
				return "", err
			}
			row += cells
		}
	}
	return row, nil
}

// scoreCells is m's accuracy and macro-F1 on d (named what in the row)
// and, when m carries a baseline, the baseline's.
func scoreCells(m *cnn.Model, d *corpus.Dataset, what string, threads int) (string, error) {
	enc, err := m.Encoder()
	if err != nil {
		return "", err
	}
	return testCells(m, enc, d, what, threads)
}

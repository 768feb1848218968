package main

import (
	"telltale/corpus"
	"telltale/explain"
)

// maskTrainingText takes the cue tokens or patterns listed in file out of
// every training text and returns the masked copy with the number of matches.
func maskTrainingText(train *corpus.Dataset, file string) (*corpus.Dataset, int, error) {
	cm, err := explain.LoadCueMasker(file)
	if err != nil {
		return nil, 0, err
	}
	out := *train
	out.Examples = make([]corpus.Example, len(train.Examples))
	total := 0
	for i, e := range train.Examples {
		var n int
		e.Text, n = cm.Mask(e.Text)
		total += n
		out.Examples[i] = e
	}
	return &out, total, nil
}

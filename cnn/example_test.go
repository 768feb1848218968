package cnn_test

import (
	"context"
	"fmt"
	"math/rand/v2"

	"telltale/cnn"
)

// Train a tiny model on a toy task: texts of class "yes" contain word 2
// somewhere, texts of class "no" never do.
func Example() {
	toy := func(n int, seed uint64) cnn.Data {
		rng := rand.New(rand.NewPCG(seed, seed))
		var d cnn.Data
		for i := 0; i < n; i++ {
			t := make([]int32, 6)
			for j := range t {
				t[j] = 3 + rng.Int32N(20)
			}
			label := i % 2
			if label == 1 {
				t[(i/2)%6] = 2
			}
			d.IDs = append(d.IDs, t)
			d.Labels = append(d.Labels, label)
		}
		return d
	}
	cfg := cnn.Config{VocabSize: 23, Dim: 8, Widths: []int{2, 3}, Filters: 4, Classes: 2}
	m, err := cnn.New(cfg, nil, []string{"no", "yes"}, 1)
	if err != nil {
		panic(err)
	}
	res, err := cnn.Train(context.Background(), m, toy(200, 1), toy(60, 2),
		cnn.TrainConfig{Epochs: 15, Batch: 10, LR: 0.01, Seed: 1, Threads: 1, Patience: -1}, nil)
	if err != nil {
		panic(err)
	}
	mt, _, _ := cnn.Evaluate(m, toy(60, 3), 1)
	fmt.Printf("trained %d epochs, test accuracy %.2f\n", len(res.Epochs), mt.Accuracy)
	// Output:
	// trained 15 epochs, test accuracy 1.00
}

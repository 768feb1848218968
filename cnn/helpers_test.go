package cnn

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
)

// randModel returns a model with random weights of the given shape; weights
// are scaled up from the default initialisation so that activations spread.
func randModel(seed uint64, vocab, dim int, widths []int, filters, classes int) *Model {
	labels := make([]string, classes)
	for i := range labels {
		labels[i] = fmt.Sprintf("c%d", i)
	}
	words := make([]string, vocab)
	words[0], words[1] = "<pad>", "<unk>"
	for i := 2; i < vocab; i++ {
		words[i] = fmt.Sprintf("w%d", i)
	}
	m, err := New(Config{VocabSize: vocab, Dim: dim, Widths: widths, Filters: filters, Classes: classes}, words, labels, seed)
	if err != nil {
		panic(err)
	}
	return m
}

// randTexts returns n texts of lengths in [0, maxLen] over ids [1, vocab),
// with the occasional PAD inside.
func randTexts(rng *rand.Rand, n, maxLen, vocab int) [][]int32 {
	out := make([][]int32, n)
	for i := range out {
		l := rng.IntN(maxLen + 1)
		t := make([]int32, l)
		for j := range t {
			t[j] = int32(1 + rng.IntN(vocab-1))
			if rng.IntN(20) == 0 {
				t[j] = 0
			}
		}
		out[i] = t
	}
	return out
}

// close32 reports whether a and b agree within rel·max(|a|,|b|) + abs.
func close32(a, b float32, rel, abs float64) bool {
	d := math.Abs(float64(a) - float64(b))
	return d <= abs+rel*math.Max(math.Abs(float64(a)), math.Abs(float64(b)))
}

func bytesReader(b []byte) *bytes.Reader { return bytes.NewReader(b) }

package main

import (
	"fmt"

	"telltale/cnn"
	"telltale/corpus"
)

// loadVectors copies the pretrained vectors of the model's words from path
// into its embedding table and returns how many words were found.
func loadVectors(m *cnn.Model, path string) (int, error) {
	inVocab := make(map[string]bool, len(m.Vocab))
	for _, w := range m.Vocab[2:] {
		inVocab[w] = true
	}
	v, err := corpus.ReadVectors(path, func(w string) bool { return inVocab[w] })
	if err != nil {
		return 0, err
	}
	if v.Dim != m.Config.Dim {
		return 0, usagef("%s holds %d-dimensional vectors but the model has --dim %d: pass --dim %d", path, v.Dim, m.Config.Dim, v.Dim)
	}
	vecs := make([][]float32, len(v.Words))
	for i := range vecs {
		vecs[i] = v.Vector(i)
	}
	found, err := m.SetVectors(v.Words, vecs)
	if err != nil {
		return 0, fmt.Errorf("%s: %w", path, err)
	}
	return found, nil
}

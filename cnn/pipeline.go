package cnn

import (
	"context"
	"fmt"

	"telltale/corpus"
)

// Recipe is everything needed to train a model from labeled text: how to
// tokenize, the architecture (VocabSize and Classes are filled in from the
// data) and the training settings.
type Recipe struct {
	Tokenizer corpus.TokenizerConfig
	Model     Config
	Train     TrainConfig
	// VectorsPath, when set, names a word-vector file (corpus.ReadVectors)
	// whose vectors of vocabulary words are copied into the embedding table
	// before training; their dimension must equal Model.Dim.
	VectorsPath string
}

// Trained is the outcome of TrainText.
type Trained struct {
	Model   *Model
	Result  *TrainResult
	Encoder *corpus.Encoder
	// VectorsFound is how many vocabulary words had a pretrained vector.
	VectorsFound int
}

// TrainText builds the vocabulary of train, encodes both splits, initialises
// a model with r.Train.Seed and trains it with early stopping on dev (which
// may be nil or empty: then every epoch counts as the best so far). Every
// label of dev must occur in train. The command line and the window both
// train through here, so they give the same model for the same recipe.
func TrainText(ctx context.Context, train, dev *corpus.Dataset, r Recipe, progress func(Progress)) (*Trained, error) {
	if train == nil || len(train.Examples) == 0 {
		return nil, fmt.Errorf("cnn: the training split is empty: give a file with labeled texts")
	}
	enc, err := corpus.TrainEncoder(r.Tokenizer, train.Texts())
	if err != nil {
		return nil, err
	}
	threads := r.Train.Threads
	trainData, err := EncodeDataset(enc, train, train.Labels, threads)
	if err != nil {
		return nil, err
	}
	var devData Data
	if dev != nil && len(dev.Examples) > 0 {
		if devData, err = EncodeDataset(enc, dev, train.Labels, threads); err != nil {
			return nil, fmt.Errorf("%w (every dev label must occur in the training data)", err)
		}
	}
	cfg := r.Model
	cfg.VocabSize, cfg.Classes = enc.Vocab.Len(), len(train.Labels)
	m, err := New(cfg, enc.Vocab.Words, train.Labels, r.Train.Seed)
	if err != nil {
		return nil, err
	}
	m.Tokenizer = enc.Tok.Config()
	out := &Trained{Model: m, Encoder: enc}
	if r.VectorsPath != "" {
		if out.VectorsFound, err = setVectorsFrom(m, r.VectorsPath); err != nil {
			return nil, err
		}
	}
	res, err := Train(ctx, m, trainData, devData, r.Train, progress)
	if err != nil {
		return nil, err
	}
	out.Result = res
	// Later texts are cut to the length the model was trained on, as the
	// encoder of a loaded model (Model.Encoder) does.
	out.Encoder.MaxTokens = m.Info.Recipe.MaxLen
	return out, nil
}

// setVectorsFrom copies the vectors of m's words found in the file at path.
func setVectorsFrom(m *Model, path string) (int, error) {
	inVocab := make(map[string]bool, len(m.Vocab))
	for _, w := range m.Vocab[2:] {
		inVocab[w] = true
	}
	v, err := corpus.ReadVectors(path, func(w string) bool { return inVocab[w] })
	if err != nil {
		return 0, err
	}
	if v.Dim != m.Config.Dim {
		return 0, fmt.Errorf("cnn: %s holds %d-dimensional vectors but the model's embedding dimension is %d: set it to %d (--dim %d)", path, v.Dim, m.Config.Dim, v.Dim, v.Dim)
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

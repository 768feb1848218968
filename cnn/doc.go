// Package cnn is the sentence-classification CNN of Kim (2014, "Convolutional
// Neural Networks for Sentence Classification", EMNLP): word embeddings,
// one-dimensional filters of several widths, ReLU, max-over-time pooling,
// dropout and a linear softmax layer, in pure Go float32.
//
// # Model
//
// A Model holds the Config, the label names, the vocabulary, the tokenizer
// settings, the weights and a training record (Info). The forward pass is
// defined in the Model doc comment; Forward computes it by direct convolution
// and is the reference every faster path is tested against. New builds a
// randomly initialised model, SetVectors loads pretrained word vectors.
//
// # Inference
//
// Predict, PredictBatch, Probabilities and the reusable Predictor compute the
// first layer once per distinct word of a group of texts: a slot table of
// every word's dot product with every filter slot (one matrix product), after
// which a window's pre-activations are a few additions of table rows (one
// SIMD kernel keeps each block of 16 filters' running maximum in registers).
// A model keeps a persistent table of its most frequent words between calls
// (at most 128 MiB), rebuilt after Train or Invalidate; the other words of a
// call get a per-call table. Both tables' memory is bounded; very long texts
// are processed in segments.
//
// # Training
//
// Train runs mini-batch training with Adam or Adadelta on length-bucketed
// batches, dropout on the pooled layer, an optional max-norm constraint and
// early stopping on dev macro-F1, using all cores with results that depend
// only on the seed and the thread count. Only the winning window of each
// filter receives gradient, so the backward pass is sparse. Progress is
// reported through a callback and a context cancels training, keeping the
// best weights so far.
//
// Unknown words are learned, not left at random: with TrainConfig.WordDropout
// each training occurrence of a word seen #w times becomes UNK with
// probability α/(#w+α) (Kiperwasser & Goldberg 2016), so the UNK vector is
// trained on the rare words that unknown words resemble (with every training
// word in the vocabulary it would otherwise never occur in training). With
// subword pieces (corpus.TokenizerConfig.Subword) the words seen once are
// split into pieces in the training texts too, so the pieces that test-time
// unknown words are split into have trained vectors. TrainConfig.ClassWeight
// "balanced" weights the loss by n/(k·n_c) for imbalanced labels.
//
// # Character-aware word vectors
//
// With Config.Chars a model's word vectors are the word table's row and a
// character part side by side: a small character CNN per word, max-pooled
// over the word's characters, tanh (dos Santos & Zadrozny 2014; Kim,
// Jernite, Sontag & Rush 2016; charcnn.go). It is trained through the same
// step as the rest, and the vocabulary's character parts are kept in Emb
// (FillChars), so everything that reads word vectors reads them unchanged.
// WithUnseen gives the words of given texts that are not in the vocabulary
// rows of their own ([UNK's table row ; their character part]) in a longer
// model used for those texts only; predict, eval, compare and explain use
// it, so a misspelled or unseen word is not the one UNK vector.
//
// # The linear baseline
//
// A model can carry a linear baseline (package linear: TF-IDF n-grams and
// logistic regression) fitted by TrainText on the same training split and
// tokens, its regularisation chosen on the same dev split; the model file
// keeps it. CompareBaseline evaluates both on a test split and runs the
// exact McNemar test between them (McNemarExact).
//
// # Evaluation and files
//
// ComputeMetrics and Evaluate give accuracy, per-class precision, recall and
// F1, macro- and weighted-F1, the confusion matrix and the expected
// calibration error. Save and Load write and read one checksummed model file
// (see file.go for the layout), atomically.
//
// The numerics are checked against central finite differences and against
// PyTorch (testdata/torch_check.py), the metrics against scikit-learn.
package cnn

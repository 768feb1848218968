// Package cnn is the sentence-classification CNN of Kim (2014): word
// embeddings, one-dimensional filters of several widths, ReLU, max-over-time
// pooling, dropout and a linear softmax layer, in pure Go float32.
package cnn

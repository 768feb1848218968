package explain

import (
	"telltale/cnn"
	"telltale/corpus"
)

// ErrCuePattern is corpus.ErrCuePattern: the cue masker moved to package
// corpus (masking text before retraining is text work).
var ErrCuePattern = corpus.ErrCuePattern

// CueMasker is corpus.CueMasker, kept here for the callers of this package.
type CueMasker = corpus.CueMasker

// MaskFilters returns m.MaskedCopy(filters): model surgery lives in package
// cnn.
func MaskFilters(m *cnn.Model, filters []int) (*cnn.Model, error) { return m.MaskedCopy(filters) }

// MaskTokens is corpus.MaskTokens.
func MaskTokens(patterns []string) (*CueMasker, error) { return corpus.MaskTokens(patterns) }

// LoadCueMasker is corpus.LoadCueMasker.
func LoadCueMasker(path string) (*CueMasker, error) { return corpus.LoadCueMasker(path) }

// ParseCueMasker is corpus.ParseCueMasker.
func ParseCueMasker(name string, data []byte) (*CueMasker, error) {
	return corpus.ParseCueMasker(name, data)
}

package torchmodel

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/floats/scalar"

	"telltale/cnn"
)

// ErrMismatch: the imported model's logits differ from the reference
// logits computed by the original model.
var ErrMismatch = errors.New("torchmodel: logits differ from the reference")

// CheckTolerance is the absolute-or-relative tolerance of CheckLogits: both
// sides compute in float32, summing in different orders.
const CheckTolerance = 1e-4

// CheckLogits runs m on texts (with its own tokenizer and vocabulary) and
// compares its logits with want, the logits the original model computed
// for the same texts, one row per text: a column per output, or one column
// for a sigmoid unit (compared with the difference of m's two logits). It
// returns the largest absolute difference, and an error naming the first
// text (line of source, counted from 1) that differs by more than
// CheckTolerance. A mismatch means the original forward pass is not the
// one Import assumes (another activation, pooling, padding, truncation,
// tokenization or concatenation order). len(want) must be len(texts).
func CheckLogits(m *cnn.Model, texts []string, want [][]float32, source string) (float64, error) {
	if len(want) != len(texts) {
		panic(fmt.Sprintf("torchmodel: CheckLogits: %d rows of logits for %d texts", len(want), len(texts)))
	}
	enc, err := m.Encoder()
	if err != nil {
		return 0, err
	}
	worst := 0.0
	for i, text := range texts {
		_, ids := enc.Encode(text)
		got := m.Predict(ids).Logits
		if len(want[i]) == 1 && len(got) == 2 {
			got = []float32{got[1] - got[0]}
		}
		if len(want[i]) != len(got) {
			return worst, fmt.Errorf("torchmodel: %s line %d: %d reference logits, the model has %d outputs: %w", source, i+1, len(want[i]), len(got), ErrMismatch)
		}
		for k, w := range want[i] {
			worst = max(worst, math.Abs(float64(got[k])-float64(w)))
			if !scalar.EqualWithinAbsOrRel(float64(got[k]), float64(w), CheckTolerance, CheckTolerance) {
				return worst, fmt.Errorf("torchmodel: %s line %d: logit %d is %.6g here and %.6g in the reference (%d tokens): the model's forward pass, padding, truncation or tokenization is not the one assumed (see telltale help import): %w",
					source, i+1, k, got[k], w, len(ids), ErrMismatch)
			}
		}
	}
	return worst, nil
}

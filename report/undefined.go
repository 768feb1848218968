package report

import (
	"fmt"
	"strings"

	"telltale/cnn"
	"telltale/internal/wording"
)

// DescribeUndefined says, when some label of m has no text or no
// prediction, what "–" stands for in its per-class table, and how the
// macro-F1 counts the labels without a text: scikit-learn's convention
// (cnn.ComputeMetrics). It is "" when every figure is defined. The command
// line prints it under eval's table and the report under its own.
func DescribeUndefined(m cnn.Metrics) string {
	predicted, absent := m.WithoutSupport()
	if len(predicted)+len(absent)+len(m.NeverPredicted()) == 0 {
		return ""
	}
	note := "– : nothing to measure (precision: no text predicted as the label; recall and F1: no text of the label here)."
	if len(predicted)+len(absent) == 0 {
		return note
	}
	note += " Macro-F1 is scikit-learn's (f1_score, average='macro'): the mean F1 of the labels among the gold or predicted labels"
	if len(predicted) > 0 {
		note += fmt.Sprintf("; %s, predicted but with no text here, %s with F1 0", strings.Join(predicted, ", "), wording.Noun(len(predicted), "counts", "count"))
	}
	if len(absent) > 0 {
		note += fmt.Sprintf("; %s, neither here nor predicted, %s left out", strings.Join(absent, ", "), wording.Noun(len(absent), "is", "are"))
	}
	return note + "."
}

package report

import (
	"strings"
	"testing"

	"telltale/cnn"
)

// The per-class table of test texts without some of the model's labels:
// "–" where a figure has nothing to measure, and the note that says so and
// how macro-F1 counts those labels (scikit-learn's convention, checked in
// cnn); no note when every figure is defined.
func TestMetricsUndefinedFigures(t *testing.T) {
	// Gold a and b only; c predicted once, d never.
	mt := cnn.ComputeMetrics([]string{"a", "b", "c", "d"}, []int{0, 0, 1, 1}, []int{0, 2, 1, 1}, nil, 0)
	mv, err := metrics(Input{Metrics: &mt})
	if err != nil {
		t.Fatal(err)
	}
	want := []classRow{
		{"c", "0.000 (0.000–0.793)", "–", "–", "0"},
		{"d", "–", "–", "–", "0"},
	}
	for i, w := range want {
		if got := mv.Rows[2+i]; got != w {
			t.Errorf("row %d: %+v, want %+v", 2+i, got, w)
		}
	}
	for _, w := range []string{"– : nothing to measure", "c, predicted but with no text here, counts with F1 0", "d, neither here nor predicted, is left out"} {
		if !strings.Contains(mv.Undefined, w) {
			t.Errorf("note %q lacks %q", mv.Undefined, w)
		}
	}
	all := cnn.ComputeMetrics([]string{"a", "b"}, []int{0, 1, 1}, []int{0, 1, 0}, nil, 0)
	if note := DescribeUndefined(all); note != "" {
		t.Errorf("every figure defined, yet the note %q", note)
	}
}

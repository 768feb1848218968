package report

import (
	"testing"

	"telltale/cnn"
)

// TestRecipeMaskTokens: the training settings list the patterns train
// --mask-tokens took out of the training text (cnn.TrainConfig.MaskTokens),
// as written, in their order; a recipe without them has no such row.
func TestRecipeMaskTokens(t *testing.T) {
	const key = "Taken out of the training text (--mask-tokens)"
	for _, c := range []struct {
		mask []string
		want string
	}{
		{nil, ""},
		{[]string{"tkref"}, "tkref"},
		{[]string{`/(?i)\btkref\s*-\s*[0-9]+\b/`, "kioskmail"}, `/(?i)\btkref\s*-\s*[0-9]+\b/   kioskmail`},
	} {
		m := &cnn.Model{Config: cnn.Config{Widths: []int{3}}, Info: cnn.Info{Recipe: &cnn.TrainConfig{Epochs: 3, MaskTokens: c.mask}}}
		got, n := "", 0
		for _, r := range recipe(Input{Model: m}).Train {
			if r.Key == key {
				got, n = r.Value, n+1
			}
		}
		if got != c.want || n > 1 || (n == 0) != (c.want == "") {
			t.Errorf("mask %q: %d rows %q, want %q", c.mask, n, got, c.want)
		}
	}
}

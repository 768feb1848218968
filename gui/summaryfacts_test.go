package gui

import (
	"math"
	"strings"
	"testing"

	"telltale/corpus"
)

// The Corpus view's digest says when there is no test token to count
// out-of-vocabulary words in (corpus.Summary's NaN), rather than a NaN or
// a 0.0%, and gives the rate when there is one.
func TestSummaryFactsOOV(t *testing.T) {
	for _, c := range []struct {
		rate float64
		want string
	}{{math.NaN(), "no test token to compare with it"}, {0.055, "5.5% of test tokens are not in it"}} {
		got := summaryFacts(&corpusState{Summary: corpus.Summary{TestOOVRate: c.rate}})
		if !strings.Contains(got, c.want) || strings.Contains(got, "NaN") {
			t.Errorf("rate %v: %q, want %q", c.rate, got, c.want)
		}
	}
}

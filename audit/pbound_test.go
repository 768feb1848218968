package audit

import (
	"encoding/json"
	"testing"
)

// TestPBelowInJSON: a p-value that underflows to 0 (Fisher's exact test of
// 2,000 texts all in the label against 2,000 all outside: the true p is
// 1/C(4000, 2000), about 1e-1203, far below the smallest double) is
// written as p 0 with p_below 1e-300, the bound the audit's words give;
// a p-value above the floor has no bound key, and neither has its
// adjusted value unless it too is below.
func TestPBelowInJSON(t *testing.T) {
	p := FisherGreater(2000, 0, 0, 2000)
	if p != 0 {
		t.Fatalf("FisherGreater = %g: the example no longer underflows", p)
	}
	for _, c := range []struct {
		a    CueAssociation
		want map[string]any // absent keys: nil
	}{
		{CueAssociation{P: p, Adjusted: p}, map[string]any{"p": 0.0, "adjusted_p": 0.0, "p_below": 1e-300, "adjusted_p_below": 1e-300}},
		{CueAssociation{P: 5e-301, Adjusted: 2e-300}, map[string]any{"p": 5e-301, "adjusted_p": 2e-300, "p_below": 1e-300, "adjusted_p_below": nil}},
		{CueAssociation{P: 0.01, Adjusted: 0.04}, map[string]any{"p": 0.01, "adjusted_p": 0.04, "p_below": nil, "adjusted_p_below": nil}},
	} {
		b, err := json.Marshal(c.a)
		if err != nil {
			t.Fatal(err)
		}
		var got map[string]any
		if err := json.Unmarshal(b, &got); err != nil {
			t.Fatal(err)
		}
		for k, v := range c.want {
			if got[k] != v {
				t.Errorf("%s: %s = %v, want %v", b, k, got[k], v)
			}
		}
		if _, ok := got["per_class"]; !ok || got["texts"] == nil {
			t.Errorf("%s: the association's other keys are missing", b)
		}
	}
}

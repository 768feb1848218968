package cnn

import (
	"slices"
	"strings"
	"testing"
)

func TestMaskedCopy(t *testing.T) {
	m := &Model{Config: Config{VocabSize: 4, Dim: 2, Widths: []int{1, 2}, Filters: 3, Classes: 2},
		Emb: make([]float32, 8), OutW: make([]float32, 12), OutB: make([]float32, 2),
		Convs: []Conv{{Width: 1, W: make([]float32, 6), B: make([]float32, 3)}, {Width: 2, W: make([]float32, 12), B: make([]float32, 3)}}}
	m.Masked = []bool{false, true, false, false, false, false}
	c, err := m.MaskedCopy([]int{4, 0})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(c.Masked, []bool{true, true, false, false, true, false}) {
		t.Errorf("masked %v", c.Masked)
	}
	if !slices.Equal(m.Masked, []bool{false, true, false, false, false, false}) {
		t.Errorf("the original changed: %v", m.Masked)
	}
	m.Masked = nil
	if c, _ := m.MaskedCopy([]int{5}); m.Masked != nil || !c.IsMasked(5) || c.IsMasked(4) {
		t.Errorf("from nil: original %v copy %v", m.Masked, c.Masked)
	}
	if _, err := m.MaskedCopy([]int{6}); err == nil || !strings.Contains(err.Error(), "0 … 5") {
		t.Errorf("filter 6 of 6: %v", err)
	}
	if _, err := m.MaskedCopy([]int{-1}); err == nil {
		t.Error("filter −1: no error")
	}
}

// Masking filter g takes exactly OutW[c][g]·h[g] off every logit: the
// layout's identity (Model's doc comment), checked on the direct forward
// pass of a random model.
func TestMaskedCopyLogits(t *testing.T) {
	cfg := Config{VocabSize: 20, Dim: 6, Widths: []int{2, 3}, Filters: 4, Classes: 3}
	m, err := New(cfg, nil, []string{"a", "b", "c"}, 3)
	if err != nil {
		t.Fatal(err)
	}
	ids := []int32{3, 7, 2, 9, 11, 4, 5}
	base := m.Forward(ids)
	for g := range cfg.NumFilters() {
		c, err := m.MaskedCopy([]int{g})
		if err != nil {
			t.Fatal(err)
		}
		got := c.Forward(ids)
		for k := range cfg.Classes {
			want := base.Logits[k] - m.OutW[k*cfg.NumFilters()+g]*base.Pooled[g]
			if d := got.Logits[k] - want; d > 1e-5 || d < -1e-5 {
				t.Errorf("filter %d class %d: logit %v, want %v", g, k, got.Logits[k], want)
			}
		}
	}
}

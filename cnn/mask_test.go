package cnn

import (
	"math"
	"math/rand/v2"
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

// Reading words as the unknown word in the word weights takes exactly
// (Wide[x][c] − Wide[UNK][c])/N off logit c for each of their tokens, on
// top of the masked filters' OutW[c][g]·h[g] (the layout's identity, Model's
// doc comment), checked on the direct forward pass of a random wide model;
// on a model without the wide path the words change nothing.
func TestMaskedWordsCopyWide(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	cfg := Config{VocabSize: 20, Dim: 6, Widths: []int{2, 3}, Filters: 4, Classes: 3, Wide: true}
	m, err := New(cfg, nil, []string{"a", "b", "c"}, 3)
	if err != nil {
		t.Fatal(err)
	}
	for i := cfg.Classes; i < len(m.Wide); i++ {
		m.Wide[i] = float32(rng.NormFloat64())
	}
	orig := slices.Clone(m.Wide)
	ids := []int32{3, 7, 0, 2, 9, 7, 1, 4, 5, 0}
	words := []int32{7, 4, 12, 1}
	gs := []int{1, 6}
	c, err := m.MaskedWordsCopy(gs, words)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(m.Wide, orig) {
		t.Fatal("the original's word weights changed")
	}
	base, got := m.Forward(ids), c.Forward(ids)
	nf, n := cfg.NumFilters(), 8 // 8 non-PAD tokens
	changed := 0.0
	for k := range cfg.Classes {
		want := base.Logits[k]
		for _, g := range gs {
			want -= m.OutW[k*nf+g] * base.Pooled[g]
		}
		for _, id := range ids {
			if slices.Contains(words, id) {
				want -= (m.WideRow(id)[k] - m.WideRow(1)[k]) / float32(n)
			}
		}
		if d := got.Logits[k] - want; d > 1e-5 || d < -1e-5 {
			t.Errorf("class %d: logit %v, want %v", k, got.Logits[k], want)
		}
		changed += math.Abs(float64(got.Logits[k] - base.Logits[k]))
	}
	if changed < 0.1 {
		t.Fatalf("logits moved by %v in all: the check checked little", changed)
	}
	for _, id := range words {
		if !slices.Equal(c.WideRow(id), c.WideRow(1)) {
			t.Errorf("word %d: row %v, unknown word's %v", id, c.WideRow(id), c.WideRow(1))
		}
	}

	bare := m.Clone()
	bare.Config.Wide, bare.Wide = false, nil
	a, _ := bare.MaskedCopy(gs)
	b, err := bare.MaskedWordsCopy(gs, words)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(a.Forward(ids).Logits, b.Forward(ids).Logits) {
		t.Error("without the wide path the words changed the logits")
	}
	for _, bad := range []int32{0, -1, 20} {
		if _, err := m.MaskedWordsCopy(nil, []int32{bad}); err == nil || !strings.Contains(err.Error(), "1 … 19") {
			t.Errorf("word %d: %v", bad, err)
		}
	}
}

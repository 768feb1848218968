package cnn

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"telltale/corpus"
)

// rows64 returns the float64 word vector of each id, computed afresh: for
// a model with a character layer, the word-table columns of Emb and the
// character part by direct convolution in float64 (the stored character
// columns are not read), and the pattern of winning character windows of
// every vocabulary word (for recognising kinks).
func rows64(m *Model) (func(id int32) []float64, []int) {
	cfg := m.Config
	d := cfg.Dim
	rows := make([][]float64, cfg.VocabSize)
	var pattern []int
	for id := range rows {
		r := make([]float64, d)
		for k, v := range m.Row(int32(id)) {
			r[k] = float64(v)
		}
		if c := cfg.Chars; c != nil {
			wd := cfg.WordDim()
			clear(r[wd:])
			if id > int(corpus.UNK) {
				cs := m.charIDs(nil, m.Vocab[id])
				for f := 0; f < c.Filters; f++ {
					best, bt := math.Inf(-1), 0
					for j := 0; j+c.Width <= len(cs); j++ {
						a := float64(m.Char.B[f])
						for s := 0; s < c.Width; s++ {
							for k := 0; k < c.Dim; k++ {
								a += float64(m.Char.W[(f*c.Width+s)*c.Dim+k]) * float64(m.Char.Emb[int(cs[j+s])*c.Dim+k])
							}
						}
						if a > best {
							best, bt = a, j
						}
					}
					r[wd+f] = math.Tanh(best)
					pattern = append(pattern, bt)
				}
			}
		}
		rows[id] = r
	}
	return func(id int32) []float64 { return rows[id] }, pattern
}

// randCharModel returns a model with a character layer over a vocabulary
// of random lower-case words (one longer than MaxChars, one shorter than
// the character width) and an alphabet that leaves out 'z', so that the
// shared vector of other runes is used too.
func randCharModel(seed uint64, vocab, wordDim int, widths []int, filters, classes int, cc CharConfig) *Model {
	rng := rand.New(rand.NewPCG(seed, 17))
	words := []string{corpus.PADWord, corpus.UNKWord}
	seen := map[string]bool{}
	for len(words) < vocab {
		n := 1 + rng.IntN(8)
		switch len(words) {
		case 2:
			n = cc.MaxChars + 3
		case 3:
			n = 1
		}
		var b strings.Builder
		for range n {
			b.WriteByte(byte('a' + rng.IntN(26)))
		}
		if w := b.String(); !seen[w] {
			seen[w] = true
			words = append(words, w)
		}
	}
	cc.Alphabet = strings.ReplaceAll(Alphabet(words), "z", "")
	labels := make([]string, classes)
	for i := range labels {
		labels[i] = fmt.Sprintf("c%d", i)
	}
	cfg := Config{VocabSize: vocab, Dim: wordDim + cc.Filters, Widths: widths, Filters: filters, Classes: classes, Chars: &cc}
	m, err := New(cfg, words, labels, seed)
	if err != nil {
		panic(err)
	}
	return m
}

// Gradients of the mean cross-entropy of a model with a character layer,
// with respect to every parameter (the character vectors, filters and
// biases included), agree with central finite differences of the float64
// reference loss, which computes every word's character part afresh by
// direct convolution (common practice, no source; same tolerance as
// TestGradientFiniteDifferences). The stored character columns of Emb get
// no gradient: they are a function of the layer, not parameters.
func TestCharGradientFiniteDifferences(t *testing.T) {
	const h = 1e-3
	for seed := uint64(1); seed <= 4; seed++ {
		cc := CharConfig{Filters: 3, Width: 2 + int(seed%2), Dim: 3, MaxChars: 5}
		m := randCharModel(seed, 12, 3, []int{1, 2, 3}, 3, 3, cc)
		for i := range m.OutW {
			m.OutW[i] *= 3
		}
		for i := range m.Char.W {
			m.Char.W[i] *= 2
		}
		m.FillChars()
		rng := rand.New(rand.NewPCG(seed, 99))
		texts := randTexts(rng, 5, 8, 12)
		texts[0] = []int32{2} // the word longer than MaxChars alone
		texts[1] = append(texts[1], 3, corpus.UNK)
		labels := make([]int, len(texts))
		for i := range labels {
			labels[i] = rng.IntN(3)
		}
		var drop []float32
		if seed%2 == 0 {
			drop = make([]float32, len(texts)*m.Config.NumFilters())
			for i := range drop {
				if rng.IntN(3) > 0 {
					drop[i] = 1.5
				}
			}
		}
		loss, tr := analytic(m, texts, labels, drop, 1+int(seed%2))
		ref, _ := ref64(m, texts, labels, drop)
		if math.Abs(loss-ref) > 1e-5*math.Abs(ref) {
			t.Fatalf("seed %d: loss %g, float64 reference %g", seed, loss, ref)
		}
		used := map[int]bool{}
		for _, ids := range texts {
			for _, id := range ids {
				used[int(id)] = true
			}
		}
		d, wd := m.Config.Dim, m.Config.WordDim()
		checked, skipped, charChecked := 0, 0, 0
		for _, pr := range gradParams(m, tr) {
			for i := range pr.p {
				if pr.name == "Emb" && (!used[i/d] || i < d || i%d >= wd) {
					if pr.g[i] != 0 {
						t.Fatalf("seed %d: gradient %g for embedding entry %d (unused, PAD or a character column)", seed, pr.g[i], i)
					}
					continue
				}
				if pr.name == "CharEmb" && i < cc.Dim {
					if pr.g[i] != 0 {
						t.Fatalf("seed %d: gradient %g for the zero character", seed, pr.g[i])
					}
					continue
				}
				p0 := pr.p[i]
				pr.p[i] = float32(float64(p0) + h)
				up := pr.p[i]
				pu, patU := ref64(m, texts, labels, drop)
				pr.p[i] = float32(float64(p0) - h)
				dn := pr.p[i]
				pd, patD := ref64(m, texts, labels, drop)
				pr.p[i] = p0
				if !slices.Equal(patU, patD) {
					skipped++
					continue
				}
				num := (pu - pd) / (float64(up) - float64(dn))
				a := float64(pr.g[i])
				if math.Abs(a-num) > 1e-4*math.Max(math.Abs(a), math.Abs(num))+1e-6 {
					t.Errorf("seed %d %s[%d]: analytic %g, finite difference %g", seed, pr.name, i, a, num)
				}
				checked++
				if strings.HasPrefix(pr.name, "Char") && a != 0 {
					charChecked++
				}
			}
		}
		if skipped > checked/10 {
			t.Errorf("seed %d: %d coordinates skipped at kinks, %d checked: too many to trust the check", seed, skipped, checked)
		}
		if charChecked < 20 {
			t.Errorf("seed %d: only %d nonzero character-layer gradients checked", seed, charChecked)
		}
	}
}

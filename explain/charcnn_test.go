package explain

import (
	"fmt"
	"math"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
)

// charModel is a random model with a character layer (cnn.CharConfig)
// over a small vocabulary of English words.
func charModel(t *testing.T, seed uint64) *cnn.Model {
	words := []string{corpus.PADWord, corpus.UNKWord, "the", "film", "was", "great", "terrible", "acting",
		"boring", "plot", "wonderful", "music", "awful", "and", "not", "good", "bad", "story"}
	cc := &cnn.CharConfig{Filters: 6, Width: 3, Dim: 5, MaxChars: 20, Alphabet: cnn.Alphabet(words)}
	cfg := cnn.Config{VocabSize: len(words), Dim: 8 + cc.Filters, Widths: []int{1, 2, 3}, Filters: 5, Classes: 3, Chars: cc}
	m, err := cnn.New(cfg, words, []string{"neg", "neu", "pos"}, seed)
	if err != nil {
		t.Fatal(err)
	}
	m.Tokenizer = corpus.TokenizerConfig{Lower: true, MinCount: 1}
	for i := range m.OutW {
		m.OutW[i] *= 4
	}
	for i := range m.Char.W {
		m.Char.W[i] *= 3
	}
	m.FillChars()
	m.Invalidate()
	return m
}

// directLogits is the forward pass in float64 by direct convolution over
// the word vectors given row by row.
func directLogits(m *cnn.Model, rows [][]float32) []float64 {
	cfg := m.Config
	L := max(len(rows), cfg.MaxWidth())
	zero := make([]float32, cfg.Dim)
	row := func(p int) []float32 {
		if p < len(rows) {
			return rows[p]
		}
		return zero
	}
	nf := cfg.NumFilters()
	h := make([]float64, nf)
	for g := 0; g < nf; g++ {
		w := m.FilterWidth(g)
		best := math.Inf(-1)
		for t := 0; t+w <= L; t++ {
			a := float64(m.FilterBias(g))
			for s := 0; s < w; s++ {
				for k, v := range m.FilterSlot(g, s) {
					a += float64(v) * float64(row(t + s)[k])
				}
			}
			best = math.Max(best, a)
		}
		h[g] = math.Max(best, 0)
	}
	z := make([]float64, cfg.Classes)
	for c := range z {
		z[c] = float64(m.OutB[c])
		for g := range h {
			z[c] += float64(m.OutW[c*nf+g]) * h[g]
		}
	}
	return z
}

// A model with a character layer explains a text full of unseen and
// misspelled words with each word's own vector (cnn.Model.WithUnseen:
// [E[UNK] ; its character vector]), not UNK's: no token is UNK, and the
// exact token shares (with the output and filter biases) sum to the
// logit difference, which equals a direct float64 forward pass over the
// vectors built independently from the original model (tolerance as
// TestValueIsForwardAndPartsSum: the float32 rounding of the model).
func TestCharSharesWithUnseenWords(t *testing.T) {
	texts := []string{
		"The flim was grate , teribble actng and bornig plott",
		"wonderfull musik ; awfull storey , not goood",
		"zyxxy qwrtp fillm ö-wörd film",
	}
	for seed := uint64(1); seed <= 3; seed++ {
		m := charModel(t, seed)
		wd := m.Config.WordDim()
		for _, text := range texts {
			mu, enc, err := m.WithUnseen(nil, []string{text})
			if err != nil {
				t.Fatal(err)
			}
			toks, ids := enc.Encode(text)
			rows := make([][]float32, len(ids))
			unseen := 0
			for i, id := range ids {
				if id == corpus.UNK {
					t.Fatalf("seed %d %q: token %q is UNK", seed, text, toks[i].Text)
				}
				if id < int32(m.Config.VocabSize) {
					rows[i] = m.Row(id)
					continue
				}
				unseen++
				r := append([]float32(nil), m.Row(corpus.UNK)[:wd]...)
				cv := make([]float32, m.Config.Chars.Filters)
				m.CharVector(toks[i].Text, cv)
				rows[i] = append(r, cv...)
			}
			if unseen < 3 {
				t.Fatalf("seed %d %q: only %d unseen words", seed, text, unseen)
			}
			e, err := Explain(mu, toks, ids, ExplainOptions{Occlusion: true, IG: true})
			if err != nil {
				t.Fatal(err)
			}
			z := directLogits(m, rows)
			for j, s := range append([]Shares{e.LogOdds}, e.Centred...) {
				ref := z[s.Class]
				if s.Against >= 0 {
					ref -= z[s.Against]
				} else {
					var mean float64
					for _, v := range z {
						mean += v / float64(len(z))
					}
					ref -= mean
				}
				scale := math.Abs(s.OutputBias)
				for _, v := range s.Filters {
					scale += math.Abs(v)
				}
				if !testref.Close(s.Parts(), ref, 1e-5*scale+1e-6, 1e-5) || !testref.Close(s.Value, ref, 1e-5*scale+1e-6, 1e-5) {
					t.Errorf("seed %d %q target %d: value %.9g, parts %.9g, direct forward %.9g", seed, text, j, s.Value, s.Parts(), ref)
				}
				if len(s.Tokens) != len(toks) {
					t.Fatalf("%d token shares for %d tokens", len(s.Tokens), len(toks))
				}
			}
			if seed == 1 {
				t.Logf("%q: %d unseen words; log-odds %s", text, unseen, fmt.Sprintf("%.4g", e.LogOdds.Value))
			}
		}
	}
}

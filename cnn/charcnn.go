package cnn

import (
	"fmt"
	"math"
	"runtime"
	"sync"
	"unicode/utf8"

	"telltale/corpus"
)

// Character-aware word vectors: a small character CNN per word, max-pooled
// over the word's characters (dos Santos & Zadrozny 2014, "Learning
// Character-level Representations for Part-of-Speech Tagging", ICML; Kim,
// Jernite, Sontag & Rush 2016, "Character-Aware Neural Language Models",
// AAAI). Its output is concatenated with the word-table vector: the vector
// of token t is
//
//	x(t) = [E[id(t)] ; charvec(t)],   charvec(t)[f] = tanh(max_j a_f(j))
//	a_f(j) = B[f] + Σ_s Σ_k W[f][s][k]·C[c_{j+s}][k]
//
// over the characters c of "⟨begin⟩ t ⟨end⟩" (the first MaxChars runes of
// t), padded with the zero character to at least Width. tanh is the
// nonlinearity of Kim et al. (2016)'s character CNN; it bounds the
// character part to (−1, 1), the scale of the word table's own values, and
// since it is increasing, tanh of the maximum is the maximum of the tanh,
// so only the winning window gets gradient. PAD's vector stays zero and
// UNK's character part is zero.
//
// A word's vector depends on the word alone, so the character part of
// every vocabulary word is stored in the last CharConfig.Filters columns of
// Emb (computed by FillChars; Train keeps it current) and everything that
// reads Emb (slot tables, explanations, the audit) reads it unchanged. A
// word outside the vocabulary gets its own row from WithUnseen.

// Reserved character ids; the alphabet's runes follow.
const (
	charPad   = 0 // the zero character that pads short words
	charBegin = 1
	charEnd   = 2
	charOther = 3 // a rune outside the alphabet
	charFirst = 4
)

// CharConfig is the character layer of a model (Config.Chars).
type CharConfig struct {
	Filters  int `json:"filters"`   // character filters: the columns of the character part
	Width    int `json:"width"`     // characters per filter window
	Dim      int `json:"dim"`       // character embedding dimension
	MaxChars int `json:"max_chars"` // runes of a word read; the rest are cut
	// Alphabet is the runes with a vector of their own, in id order from
	// charFirst; others share one vector.
	Alphabet string `json:"alphabet"`
}

// Defaults of the character layer: 50 filters of width 3 over
// 15-dimensional character vectors, as the small model of Kim et al.
// (2016, table 2: character embeddings of 15; their filters are wider and
// more numerous for language modelling), and words cut to 20 runes.
const (
	DefaultCharFilters = 50
	DefaultCharWidth   = 3
	DefaultCharDim     = 15
	DefaultMaxChars    = 20
)

// validate reports the first problem with c within a model of total
// word-vector dimension dim.
func (c *CharConfig) validate(dim int) error {
	switch {
	case c.Filters < 1 || c.Filters > 4096:
		return fmt.Errorf("cnn: %d character filters: must be between 1 and 4096", c.Filters)
	case c.Filters >= dim:
		return fmt.Errorf("cnn: %d character filters leave no word-table columns in a dimension of %d", c.Filters, dim)
	case c.Width < 1 || c.Width > 32:
		return fmt.Errorf("cnn: character filter width %d: must be between 1 and 32", c.Width)
	case c.Dim < 1 || c.Dim > 1024:
		return fmt.Errorf("cnn: character dimension %d: must be between 1 and 1024", c.Dim)
	case c.MaxChars < 1 || c.MaxChars > 1000:
		return fmt.Errorf("cnn: %d characters per word: must be between 1 and 1000", c.MaxChars)
	case !utf8.ValidString(c.Alphabet):
		return fmt.Errorf("cnn: the character alphabet is not valid UTF-8")
	}
	return nil
}

// Rows is the number of character vectors: the reserved ones and the alphabet's.
func (c *CharConfig) Rows() int { return charFirst + utf8.RuneCountInString(c.Alphabet) }

// numWeights is the number of float32 values of the character layer.
func (c *CharConfig) numWeights() int {
	return c.Rows()*c.Dim + c.Filters*c.Width*c.Dim + c.Filters
}

// WordDim is the number of word-table columns of a word vector: Dim, less
// the character part when the model has one.
func (c Config) WordDim() int {
	if c.Chars != nil {
		return c.Dim - c.Chars.Filters
	}
	return c.Dim
}

// CharLayer is the trained character CNN of a model.
//
// Emb is [char][Dim] (row charPad zero), W [filter][slot][Dim], B [filter].
type CharLayer struct {
	Emb, W, B []float32

	once  sync.Once
	index map[rune]int32 // alphabet rune → character id
}

// Alphabet returns the distinct runes of words in order of first
// occurrence, skipping the reserved words PAD and UNK.
func Alphabet(words []string) string {
	seen := map[rune]bool{}
	var out []rune
	for i, w := range words {
		if i == int(corpus.PAD) || i == int(corpus.UNK) {
			continue
		}
		for _, r := range w {
			if !seen[r] {
				seen[r] = true
				out = append(out, r)
			}
		}
	}
	return string(out)
}

// newCharLayer initialises c's layer as New does the word layers: character
// vectors uniform in ±0.25 (row charPad zero), filters and biases uniform in
// ±1/√(Width·Dim) (PyTorch's Conv1d default).
func newCharLayer(c *CharConfig, uni func([]float32, float64)) *CharLayer {
	l := &CharLayer{
		Emb: make([]float32, c.Rows()*c.Dim),
		W:   make([]float32, c.Filters*c.Width*c.Dim),
		B:   make([]float32, c.Filters),
	}
	uni(l.Emb[c.Dim:], 0.25)
	bound := 1 / math.Sqrt(float64(c.Width*c.Dim))
	uni(l.W, bound)
	uni(l.B, bound)
	return l
}

func (l *CharLayer) clone() *CharLayer {
	if l == nil {
		return nil
	}
	return &CharLayer{Emb: append([]float32(nil), l.Emb...), W: append([]float32(nil), l.W...), B: append([]float32(nil), l.B...)}
}

// charIDs appends the character ids of word as the layer reads them:
// begin mark, the first MaxChars runes, end mark, then charPad up to Width.
func (m *Model) charIDs(dst []int32, word string) []int32 {
	c, l := m.Config.Chars, m.Char
	l.once.Do(func() {
		l.index = make(map[rune]int32, len(c.Alphabet))
		i := int32(charFirst)
		for _, r := range c.Alphabet {
			l.index[r] = i
			i++
		}
	})
	dst = append(dst[:0], charBegin)
	n := 0
	for _, r := range word {
		if n == c.MaxChars {
			break
		}
		id, ok := l.index[r]
		if !ok {
			id = charOther
		}
		dst = append(dst, id)
		n++
	}
	dst = append(dst, charEnd)
	for len(dst) < c.Width {
		dst = append(dst, charPad)
	}
	return dst
}

// CharIDs returns the character ids of word as the layer reads them (see
// charIDs): 1 begins, 2 ends, 3 is a rune outside the alphabet, 4 on the
// alphabet's runes in order, 0 pads to Width. The model must have a
// character layer.
func (m *Model) CharIDs(word string) []int32 { return m.charIDs(nil, word) }

// charTable fills tab (grown as needed) with every character's dot
// products with every filter slot, tab[(c·Width + s)·Filters + f] =
// W[f][s]·C[c], and returns it: a window's pre-activations are then the
// bias plus Width rows of Filters values, as for the word layer (slots.go).
// Every path (training, FillChars, CharVector) computes a word's character
// part from this table in the same order, so its value does not depend on
// which path computed it.
func (m *Model) charTable(tab []float32) []float32 {
	c, l := m.Config.Chars, m.Char
	cd, w, F := c.Dim, c.Width, c.Filters
	tab = grow(tab, c.Rows()*w*F)
	for ch := 0; ch < c.Rows(); ch++ {
		e := l.Emb[ch*cd : (ch+1)*cd]
		for s := 0; s < w; s++ {
			row := tab[(ch*w+s)*F : (ch*w+s+1)*F]
			for f := range row {
				ws := l.W[(f*w+s)*cd : (f*w+s+1)*cd]
				var a float32
				for k, v := range ws {
					a += v * e[k]
				}
				row[f] = a
			}
		}
	}
	return tab
}

// charForward writes charvec of the word of character ids cs into out
// (Filters values) and the winning window of each filter into arg, given
// charTable's tab and scratch acc of Filters values; with pre not nil,
// also the winning pre-activations into pre.
func (m *Model) charForward(tab, acc []float32, cs []int32, out, pre []float32, arg []int32) {
	c, l := m.Config.Chars, m.Char
	w, F := c.Width, c.Filters
	best := out // the running maxima, before tanh
	for f := range best {
		best[f] = float32(math.Inf(-1))
	}
	for j := 0; j+w <= len(cs); j++ {
		copy(acc, l.B)
		for s := 0; s < w; s++ {
			r := (int(cs[j+s])*w + s) * F
			addTo(acc[:F], tab[r:r+F])
		}
		maxUpdate(best, arg, acc[:F], int32(j))
	}
	if pre != nil {
		copy(pre, best)
	}
	for f, b := range best {
		out[f] = float32(math.Tanh(float64(b)))
	}
}

// charBackward adds to gTab (charTable's shape) and gB the gradient of the
// loss through the character part of one word, whose forward gave out and
// arg, given the loss gradient gOut with respect to that part. charUntable
// turns gTab into the gradients of the character vectors and filters.
func (m *Model) charBackward(cs []int32, out []float32, arg []int32, gOut, gTab, gB []float32) {
	w, F := m.Config.Chars.Width, m.Config.Chars.Filters
	for f, g := range gOut {
		if g == 0 {
			continue
		}
		g *= 1 - out[f]*out[f] // tanh′
		gB[f] += g
		j := int(arg[f])
		for s := 0; s < w; s++ {
			gTab[(int(cs[j+s])*w+s)*F+f] += g
		}
	}
}

// charUntable adds to gEmb and gW the gradients that the table gradient
// gTab stands for: tab[c][s][f] = W[f][s]·C[c], so ∂/∂W[f][s] gains
// Σ_c gTab[c][s][f]·C[c] and ∂/∂C[c] gains Σ_{s,f} gTab[c][s][f]·W[f][s].
// The zero character is fixed and gets none.
func (m *Model) charUntable(gTab, gEmb, gW []float32) {
	c, l := m.Config.Chars, m.Char
	cd, w, F := c.Dim, c.Width, c.Filters
	for ch := charPad + 1; ch < c.Rows(); ch++ {
		e, ge := l.Emb[ch*cd:(ch+1)*cd], gEmb[ch*cd:(ch+1)*cd]
		for s := 0; s < w; s++ {
			for f, g := range gTab[(ch*w+s)*F : (ch*w+s+1)*F] {
				if g == 0 {
					continue
				}
				wo := (f*w + s) * cd
				axpy(g, e, gW[wo:wo+cd])
				axpy(g, l.W[wo:wo+cd], ge)
			}
		}
	}
}

// CharVector writes the character part of word's vector into dst
// (Config.Chars.Filters values). The model must have a character layer.
func (m *Model) CharVector(word string, dst []float32) {
	F := m.Config.Chars.Filters
	m.charForward(m.charTable(nil), make([]float32, F), m.charIDs(nil, word), dst, nil, make([]int32, F))
}

// FillChars recomputes the character part of every vocabulary word's row
// of Emb from the character layer (UNK's and PAD's stay zero). It does
// nothing for a model without one. Train calls it after every epoch; callers
// that change the character layer themselves must call it (and Invalidate).
func (m *Model) FillChars() {
	if m.Config.Chars == nil {
		return
	}
	m.fillCharRows(int(corpus.UNK)+1, m.Config.VocabSize)
	clear(m.Row(corpus.UNK)[m.Config.WordDim():])
	clear(m.Row(corpus.PAD))
}

// fillCharRows sets the character part of rows lo..hi−1 from their words,
// on GOMAXPROCS goroutines.
func (m *Model) fillCharRows(lo, hi int) {
	wd := m.Config.WordDim()
	tab := m.charTable(nil)
	threads := max(1, min(runtime.GOMAXPROCS(0), (hi-lo)/64))
	var wg sync.WaitGroup
	for k := 0; k < threads; k++ {
		a, b := lo+k*(hi-lo)/threads, lo+(k+1)*(hi-lo)/threads
		wg.Add(1)
		go func() {
			defer wg.Done()
			var cs []int32
			acc := make([]float32, m.Config.Chars.Filters)
			arg := make([]int32, m.Config.Chars.Filters)
			for id := a; id < b; id++ {
				cs = m.charIDs(cs, m.Vocab[id])
				m.charForward(tab, acc, cs, m.Row(int32(id))[wd:], nil, arg)
			}
		}()
	}
	wg.Wait()
}

// WithUnseen returns, for a model with a character layer, a model whose
// vocabulary also holds every word of texts that enc (m's encoder; nil
// builds it) maps to UNK, each with the vector [E[UNK] ; charvec(word)]
// (and, with the wide path, UNK's word weights): the table knows nothing
// of the word, its characters do; and the encoder
// of that model (enc's tokenizer, the longer vocabulary). Since a token's
// vector still depends on the token alone, everything computed from the
// returned model (predictions, explanations and their exact token shares)
// is computed as for any model, with texts encoded by the returned
// encoder. The returned model shares m's filters and head (read-only) and
// must not be saved in m's place. For a model without a character layer,
// or texts without unseen words, it returns m and enc themselves, so that
// path costs nothing when characters are off.
func (m *Model) WithUnseen(enc *corpus.Encoder, texts []string) (*Model, *corpus.Encoder, error) {
	if enc == nil {
		var err error
		if enc, err = m.Encoder(); err != nil {
			return nil, nil, err
		}
	}
	if m.Config.Chars == nil || len(texts) == 0 {
		return m, enc, nil
	}
	seen := map[string]bool{}
	var add []string
	for _, text := range texts {
		toks, ids := enc.Encode(text)
		for i, id := range ids {
			if w := toks[i].Text; id == corpus.UNK && !seen[w] && w != corpus.UNKWord {
				seen[w] = true
				add = append(add, w)
			}
		}
	}
	if len(add) == 0 {
		return m, enc, nil
	}
	d, v := m.Config.Dim, m.Config.VocabSize
	x := *m
	x.Config.VocabSize = v + len(add)
	x.Vocab = append(append(make([]string, 0, v+len(add)), m.Vocab...), add...)
	x.Emb = make([]float32, (v+len(add))*d)
	copy(x.Emb, m.Emb)
	unk := m.Row(corpus.UNK)[:m.Config.WordDim()]
	for i := range add {
		copy(x.Emb[(v+i)*d:], unk)
	}
	if m.Config.Wide { // the wide table knows nothing of the words either: UNK's weights
		c := m.Config.Classes
		x.Wide = make([]float32, (v+len(add))*c)
		copy(x.Wide, m.Wide)
		for i := range add {
			copy(x.Wide[(v+i)*c:], m.Wide[int(corpus.UNK)*c:int(corpus.UNK)*c+c])
		}
	}
	x.cache, x.version = nil, 0
	x.fillCharRows(v, v+len(add))
	return &x, &corpus.Encoder{Tok: enc.Tok, Vocab: corpus.NewVocab(x.Vocab, nil), MaxTokens: enc.MaxTokens}, nil
}

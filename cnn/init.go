package cnn

import (
	"fmt"
	"math"
	"math/rand/v2"

	"telltale/corpus"
)

// New returns a randomly initialised model for cfg. Vocab lists the words by
// id (Vocab[0] PAD, Vocab[1] UNK) and must have cfg.VocabSize entries, or be
// nil to leave the words unnamed; labels must have cfg.Classes entries.
//
// Initialisation follows the published recipes: embeddings uniform in
// [−0.25, 0.25] as in Kim (2014)'s code for words without a pretrained vector,
// the PAD row zero; convolution and output weights and biases uniform in
// [−1/√fan_in, 1/√fan_in], which is PyTorch's default for Conv1d and Linear
// (kaiming_uniform with a=√5; fan_in = Dim·Width for a convolution, NumFilters
// for the output layer). The wide path's table (Config.Wide) starts at zero,
// so a new model's predictions are its filters' alone; with
// Config.WideBigrams its bigram set starts empty (SetBigrams gives it the
// training split's). The same seed gives the same model.
func New(cfg Config, vocab []string, labels []string, seed uint64) (*Model, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	if vocab != nil && len(vocab) != cfg.VocabSize {
		return nil, fmt.Errorf("cnn: %d vocabulary words for a vocabulary size of %d", len(vocab), cfg.VocabSize)
	}
	if len(labels) != cfg.Classes {
		return nil, fmt.Errorf("cnn: %d label names for %d classes", len(labels), cfg.Classes)
	}
	cfg.Widths = append([]int(nil), cfg.Widths...)
	rng := rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15))
	uni := func(dst []float32, bound float64) {
		for i := range dst {
			dst[i] = float32((2*rng.Float64() - 1) * bound)
		}
	}
	d, nf := cfg.Dim, cfg.NumFilters()
	m := &Model{
		Config: cfg,
		Labels: append([]string(nil), labels...),
		Vocab:  append([]string(nil), vocab...),
		Emb:    make([]float32, cfg.VocabSize*d),
		Convs:  make([]Conv, len(cfg.Widths)),
		OutW:   make([]float32, cfg.Classes*nf),
		OutB:   make([]float32, cfg.Classes),
	}
	if vocab == nil {
		m.Vocab = nil
	}
	if cfg.Wide {
		m.Wide = make([]float32, cfg.VocabSize*cfg.Classes)
	}
	if cfg.WideBigrams {
		if err := m.SetBigrams([]uint64{}); err != nil {
			return nil, err
		}
	}
	uni(m.Emb[d:], 0.25)
	for b, w := range cfg.Widths {
		c := Conv{Width: w, W: make([]float32, cfg.Filters*w*d), B: make([]float32, cfg.Filters)}
		bound := 1 / math.Sqrt(float64(w*d))
		uni(c.W, bound)
		uni(c.B, bound)
		m.Convs[b] = c
	}
	bound := 1 / math.Sqrt(float64(nf))
	uni(m.OutW, bound)
	uni(m.OutB, bound)
	if cfg.Chars != nil {
		if vocab == nil {
			return nil, fmt.Errorf("cnn: a model with a character layer needs its vocabulary")
		}
		c := *cfg.Chars
		m.Config.Chars = &c
		m.Char = newCharLayer(&c, uni)
		m.FillChars()
	}
	return m, nil
}

// SetVectors copies pretrained word vectors into the embedding table: for
// every model word found in words, its row becomes the matching entry of vecs.
// Every vector must have Dim values. PAD keeps its zero row and UNK keeps its
// random one. It returns how many model words were found. The model needs its
// Vocab.
func (m *Model) SetVectors(words []string, vecs [][]float32) (int, error) {
	if len(words) != len(vecs) {
		return 0, fmt.Errorf("cnn: %d words but %d vectors", len(words), len(vecs))
	}
	if len(m.Vocab) != m.Config.VocabSize {
		return 0, fmt.Errorf("cnn: the model has no vocabulary to match vectors against")
	}
	d, wd := m.Config.Dim, m.Config.WordDim()
	index := make(map[string]int, len(words))
	for i, w := range words {
		if len(vecs[i]) != wd {
			return 0, fmt.Errorf("cnn: vector %d (%q) has %d values, the model's embedding dimension is %d: use --dim %d or a matching vector file", i+1, w, len(vecs[i]), wd, len(vecs[i]))
		}
		if _, dup := index[w]; !dup {
			index[w] = i
		}
	}
	found := 0
	for id, w := range m.Vocab {
		if int32(id) == corpus.PAD || int32(id) == corpus.UNK {
			continue
		}
		if i, ok := index[w]; ok {
			copy(m.Emb[id*d:id*d+wd], vecs[i])
			found++
		}
	}
	m.Invalidate()
	return found, nil
}

// Clone returns a deep copy of m.
func (m *Model) Clone() *Model {
	c := *m
	c.Config.Widths = append([]int(nil), m.Config.Widths...)
	c.Labels = append([]string(nil), m.Labels...)
	if m.Vocab != nil {
		c.Vocab = append([]string(nil), m.Vocab...)
	}
	c.Emb = append([]float32(nil), m.Emb...)
	c.Convs = make([]Conv, len(m.Convs))
	for i, cv := range m.Convs {
		c.Convs[i] = Conv{Width: cv.Width, W: append([]float32(nil), cv.W...), B: append([]float32(nil), cv.B...)}
	}
	c.OutW = append([]float32(nil), m.OutW...)
	c.OutB = append([]float32(nil), m.OutB...)
	if m.Wide != nil {
		c.Wide = append([]float32(nil), m.Wide...)
	}
	if m.Bigrams != nil { // the index only reads the keys, which are equal: shared
		c.Bigrams = append([]uint64{}, m.Bigrams...)
		c.WideBigram = append([]float32{}, m.WideBigram...)
	}
	if m.Masked != nil {
		c.Masked = append([]bool(nil), m.Masked...)
	}
	if m.Config.Chars != nil {
		cc := *m.Config.Chars
		c.Config.Chars = &cc
	}
	c.Char = m.Char.clone()
	c.cache = nil
	return &c
}

// checkShapes reports whether the weight slices match the config.
func (m *Model) checkShapes() error {
	cfg := m.Config
	if err := cfg.Validate(); err != nil {
		return err
	}
	d, nf := cfg.Dim, cfg.NumFilters()
	switch {
	case len(m.Emb) != cfg.VocabSize*d:
		return fmt.Errorf("cnn: embedding table has %d values, want %d×%d", len(m.Emb), cfg.VocabSize, d)
	case len(m.Convs) != len(cfg.Widths):
		return fmt.Errorf("cnn: %d filter banks for %d widths", len(m.Convs), len(cfg.Widths))
	case len(m.OutW) != cfg.Classes*nf || len(m.OutB) != cfg.Classes:
		return fmt.Errorf("cnn: output layer has %d+%d values, want %d×%d+%d", len(m.OutW), len(m.OutB), cfg.Classes, nf, cfg.Classes)
	case cfg.Wide && len(m.Wide) != cfg.VocabSize*cfg.Classes:
		return fmt.Errorf("cnn: wide word-weight table has %d values, want %d×%d", len(m.Wide), cfg.VocabSize, cfg.Classes)
	case !cfg.Wide && m.Wide != nil:
		return fmt.Errorf("cnn: a wide word-weight table without Config.Wide")
	case cfg.WideBigrams && (m.Bigrams == nil || m.bigramIx == nil || len(m.WideBigram) != len(m.Bigrams)*cfg.Classes):
		return fmt.Errorf("cnn: bigram weight table has %d values for %d bigrams × %d classes (give the set with SetBigrams)", len(m.WideBigram), len(m.Bigrams), cfg.Classes)
	case !cfg.WideBigrams && (m.Bigrams != nil || m.WideBigram != nil):
		return fmt.Errorf("cnn: bigram weights without Config.WideBigrams")
	case m.Masked != nil && len(m.Masked) != nf:
		return fmt.Errorf("cnn: mask has %d entries for %d filters", len(m.Masked), nf)
	case len(m.Labels) != cfg.Classes:
		return fmt.Errorf("cnn: %d label names for %d classes", len(m.Labels), cfg.Classes)
	case m.Vocab != nil && len(m.Vocab) != cfg.VocabSize:
		return fmt.Errorf("cnn: %d vocabulary words for a vocabulary size of %d", len(m.Vocab), cfg.VocabSize)
	}
	for b, c := range m.Convs {
		if c.Width != cfg.Widths[b] || len(c.W) != cfg.Filters*c.Width*d || len(c.B) != cfg.Filters {
			return fmt.Errorf("cnn: filter bank %d (width %d) has the wrong shape", b, cfg.Widths[b])
		}
	}
	if cc := cfg.Chars; cc != nil {
		l := m.Char
		if l == nil || len(l.Emb) != cc.Rows()*cc.Dim || len(l.W) != cc.Filters*cc.Width*cc.Dim || len(l.B) != cc.Filters {
			return fmt.Errorf("cnn: the character layer is missing or has the wrong shape")
		}
		if len(m.Vocab) != cfg.VocabSize {
			return fmt.Errorf("cnn: a model with a character layer needs its vocabulary")
		}
	} else if m.Char != nil {
		return fmt.Errorf("cnn: a character layer without a character configuration")
	}
	return nil
}

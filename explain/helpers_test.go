package explain

import (
	"math"
	"math/rand/v2"
	"testing"

	"telltale/cnn"
)

// randomModel makes a model with random weights. PAD's embedding row is zero,
// as the model layout requires.
func randomModel(rng *rand.Rand, cfg cnn.Config) *cnn.Model {
	d, nf := cfg.Dim, cfg.NumFilters()
	m := &cnn.Model{
		Config: cfg,
		Emb:    make([]float32, cfg.VocabSize*d),
		OutW:   make([]float32, cfg.Classes*nf),
		OutB:   make([]float32, cfg.Classes),
	}
	for c := 0; c < cfg.Classes; c++ {
		m.Labels = append(m.Labels, string(rune('a'+c)))
	}
	m.Vocab = []string{"<pad>", "<unk>"}
	for i := 2; i < cfg.VocabSize; i++ {
		m.Vocab = append(m.Vocab, "w"+itoa(i))
	}
	for i := d; i < len(m.Emb); i++ {
		m.Emb[i] = float32(rng.NormFloat64())
	}
	scale := 1 / math.Sqrt(float64(d))
	for _, w := range cfg.Widths {
		c := cnn.Conv{Width: w, W: make([]float32, cfg.Filters*w*d), B: make([]float32, cfg.Filters)}
		for i := range c.W {
			c.W[i] = float32(rng.NormFloat64() * scale)
		}
		for i := range c.B {
			c.B[i] = float32(rng.NormFloat64() * 0.5)
		}
		m.Convs = append(m.Convs, c)
	}
	for i := range m.OutW {
		m.OutW[i] = float32(rng.NormFloat64() * 0.5)
	}
	for i := range m.OutB {
		m.OutB[i] = float32(rng.NormFloat64() * 0.2)
	}
	return m
}

// withWide turns the wide path of m on with a table of seeded random
// values (normal, sd 1, about the size of the filters' part of a logit;
// PAD's row zero, as the model layout requires) and returns m.
func withWide(m *cnn.Model, seed uint64) *cnn.Model {
	rng := rand.New(rand.NewPCG(seed, 0x5eed))
	C := m.Config.Classes
	m.Config.Wide = true
	m.Wide = make([]float32, m.Config.VocabSize*C)
	for i := C; i < len(m.Wide); i++ {
		m.Wide[i] = float32(rng.NormFloat64())
	}
	return m
}

// withBigrams turns the wide path of m on (withWide) with bigram weights:
// each pair of word ids (neither PAD nor UNK) is in the set with
// probability 0.3, so random texts hold some, and the table is seeded
// random like the word rows. It returns m.
func withBigrams(t testing.TB, m *cnn.Model, seed uint64) *cnn.Model {
	t.Helper()
	m = withWide(m, seed)
	rng := rand.New(rand.NewPCG(seed, 0xb16))
	var keys []uint64
	for a := int32(2); int(a) < m.Config.VocabSize; a++ {
		for b := int32(2); int(b) < m.Config.VocabSize; b++ {
			if rng.Float64() < 0.3 {
				keys = append(keys, cnn.BigramKey(a, b))
			}
		}
	}
	if err := m.SetBigrams(keys); err != nil {
		t.Fatal(err)
	}
	for i := range m.WideBigram {
		m.WideBigram[i] = float32(rng.NormFloat64())
	}
	return m
}

// randomConfig draws a small architecture.
func randomConfig(rng *rand.Rand) cnn.Config {
	widths := []int{}
	for _, w := range rng.Perm(5)[:1+rng.IntN(3)] {
		widths = append(widths, w+1)
	}
	return cnn.Config{
		VocabSize: 10 + rng.IntN(60),
		Dim:       1 + rng.IntN(12),
		Widths:    widths,
		Filters:   1 + rng.IntN(7),
		Classes:   2 + rng.IntN(3),
	}
}

// randomText draws ids of length 0 … maxLen, PAD excluded, UNK included.
func randomText(rng *rand.Rand, vocab, maxLen int) []int32 {
	ids := make([]int32, rng.IntN(maxLen+1))
	for i := range ids {
		ids[i] = int32(1 + rng.IntN(vocab-1))
	}
	return ids
}

func itoa(i int) string {
	if i == 0 {
		return "0"
	}
	var b []byte
	for ; i > 0; i /= 10 {
		b = append([]byte{byte('0' + i%10)}, b...)
	}
	return string(b)
}

// near reports whether a and b agree within abs + rel·max(|a|,|b|).
func near(a, b, abs, rel float64) bool {
	return math.Abs(a-b) <= abs+rel*math.Max(math.Abs(a), math.Abs(b))
}

// directWindow is a window's pre-activation computed in float64 straight
// from the model layout (cnn.Model doc comment).
func directWindow(m *cnn.Model, x []int32, g, t int) float64 {
	a := float64(m.FilterBias(g))
	for s := 0; s < m.FilterWidth(g); s++ {
		a += directSlot(m, g, s, x[t+s])
	}
	return a
}

func directSlot(m *cnn.Model, g, s int, id int32) float64 {
	var a float64
	w, e := m.FilterSlot(g, s), m.Row(id)
	for k := range w {
		a += float64(w[k]) * float64(e[k])
	}
	return a
}

func mustTable(t testing.TB, m *cnn.Model, opt TableOptions) *SlotTable {
	t.Helper()
	st, err := NewSlotTable(m, opt)
	if err != nil {
		t.Fatal(err)
	}
	return st
}

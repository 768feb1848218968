package cnn

import (
	"runtime"
	"sync"
	"unsafe"
)

// A frozen model's slot table (slots.go) can be kept between calls: the
// inference paths (Predictor, Predict, PredictBatch, Probabilities,
// Evaluate) share one persistent table per model holding the rows of the
// most frequent words (the lowest ids, as BuildVocab orders them), bounded
// to cacheFloats values; the other words of a call get a per-call table as
// before. The table depends on the embeddings and the convolution weights
// only (biases, masks and the head are read at every call). It is rebuilt
// when Train has changed the weights, after Invalidate, and when the
// weight slices themselves were replaced.

// cacheFloats bounds the persistent table of one model (in float32 values:
// 128 MiB; 27,962 words for widths 3, 4, 5 × 100 filters).
const cacheFloats = 1 << 25

// slotCache is the persistent table of the words 0 … words−1: word id's row
// starts at tab[id·nrows]. It is read-only once built.
type slotCache struct {
	key   cacheKey
	sw    slotWeights
	words int
	tab   []float32
}

// cacheKey identifies the weights a table was built from.
type cacheKey struct {
	version uint64
	emb     *float32
	embLen  int
	w       [8]*float32 // first weight of each bank (up to 8 banks are checked)
	banks   int
	words   int
}

var cacheMu sync.Mutex // guards Model.cache and Model.version of every model

// Invalidate tells the model's inference paths that its embeddings or
// convolution weights were changed in place, so the persistent slot table
// must be rebuilt. Train calls it itself; callers that write into Emb or
// Convs[b].W directly between predictions must call it.
func (m *Model) Invalidate() {
	cacheMu.Lock()
	m.version++
	m.cache = nil
	cacheMu.Unlock()
}

func (m *Model) cacheKey(words int) cacheKey {
	k := cacheKey{version: m.version, embLen: len(m.Emb), banks: len(m.Convs), words: words}
	if len(m.Emb) > 0 {
		k.emb = unsafe.SliceData(m.Emb)
	}
	for b := range min(len(m.Convs), len(k.w)) {
		k.w[b] = unsafe.SliceData(m.Convs[b].W)
	}
	return k
}

// slotTable returns m's persistent table of the first words ids (at most
// what cacheFloats allows; words < 0 means that many), building it with up
// to GOMAXPROCS goroutines when it is missing or stale. It returns nil when
// no word would be tabled.
func (m *Model) slotTable(words int) *slotCache {
	cfg := m.Config
	nr := 0
	for _, w := range cfg.Widths {
		nr += w * cfg.Filters
	}
	if nr == 0 {
		return nil
	}
	limit := min(cfg.VocabSize, cacheFloats/nr)
	if words < 0 || words > limit {
		words = limit
	}
	if words <= 0 {
		return nil
	}
	cacheMu.Lock()
	defer cacheMu.Unlock()
	key := m.cacheKey(words)
	if c := m.cache; c != nil && c.key == key {
		return c
	}
	m.cache = buildCache(m, key, words)
	return m.cache
}

// buildCache tables the words 0 … words−1 of m.
func buildCache(m *Model, key cacheKey, words int) *slotCache {
	c := &slotCache{key: key, words: words}
	c.sw.build(m)
	d := m.Config.Dim
	c.tab = make([]float32, tableLen(&c.sw, words))
	threads := max(1, min(runtime.GOMAXPROCS(0), words/64))
	var wg sync.WaitGroup
	for k := range threads {
		lo, hi := k*words/threads, (k+1)*words/threads
		wg.Go(func() { tableRows(&c.sw, m.Emb[:words*d], c.tab, d, lo, hi) })
	}
	wg.Wait()
	return c
}

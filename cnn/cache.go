package cnn

import (
	"sync"
	"sync/atomic"
	"unsafe"
)

// A frozen model's slot table (slots.go) is kept between calls: the
// inference paths (Predictor, Predict, PredictBatch, Probabilities,
// Evaluate) share one persistent table per model, filled lazily: a word's
// row is computed the first time a call meets the word and kept for every
// later call, up to cacheFloats values; the words met after the table is
// full get a per-call table as before. Nothing is computed for words no
// call uses, so a process that labels a few texts pays for their words
// only, and one that labels many pays once per distinct word.
//
// Every row, kept or per-call, is computed alone (f32.StableRows), so a
// word's row has the same value bit for bit whoever computed it, in
// whatever batch and order: the results do not depend on which words the
// table already holds, on the threads or on the batches.
//
// The table depends on the embeddings and the convolution weights only
// (biases, masks and the head are read at every call). It is rebuilt when
// Train has changed the weights, after Invalidate, and when the weight
// slices themselves were replaced.

// cacheFloats bounds the persistent table of one model (in float32 values:
// 256 MiB; 55,924 words for widths 3, 4, 5 × 100 filters). Only the rows of
// words met are ever allocated.
const cacheFloats = 1 << 26

// chunkRows is the number of rows allocated at once.
const chunkRows = 256

// slotCache is the persistent table. Word id's row, once it has one, is
// rowOf[id] ≥ 0, and row r lies in chunks[r/chunkRows]. Rows are written
// once, under mu, before their index is published in rowOf, and never
// change afterwards, so readers need no lock.
type slotCache struct {
	key     cacheKey
	sw      slotWeights
	maxRows int
	rowOf   []atomic.Int32 // by word id: its row, −1 while it has none
	full    atomic.Bool    // every row is taken

	mu     sync.Mutex
	used   int         // rows taken; guarded by mu
	chunks [][]float32 // chunkRows rows each (and windowMax's slack); an entry is set under mu before any row in it is published
}

// cacheKey identifies the weights a table was built from.
type cacheKey struct {
	version uint64
	emb     *float32
	embLen  int
	w       [8]*float32 // first weight of each bank (up to 8 banks are checked)
	banks   int
	rows    int
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

func (m *Model) cacheKey(rows int) cacheKey {
	k := cacheKey{version: m.version, embLen: len(m.Emb), banks: len(m.Convs), rows: rows}
	if len(m.Emb) > 0 {
		k.emb = unsafe.SliceData(m.Emb)
	}
	for b := range min(len(m.Convs), len(k.w)) {
		k.w[b] = unsafe.SliceData(m.Convs[b].W)
	}
	return k
}

// slotTable returns m's persistent table, which holds at most rows words
// (at most what cacheFloats allows; rows < 0 means that many), making a new
// empty one when it is missing or stale. It returns nil when no word would
// be tabled.
func (m *Model) slotTable(rows int) *slotCache {
	cfg := m.Config
	nr := 0
	for _, w := range cfg.Widths {
		nr += w * cfg.Filters
	}
	if nr == 0 {
		return nil
	}
	limit := min(cfg.VocabSize, cacheFloats/nr)
	if rows < 0 || rows > limit {
		rows = limit
	}
	if rows <= 0 {
		return nil
	}
	cacheMu.Lock()
	defer cacheMu.Unlock()
	key := m.cacheKey(rows)
	if c := m.cache; c != nil && c.key == key {
		return c
	}
	c := &slotCache{key: key, maxRows: rows, rowOf: make([]atomic.Int32, cfg.VocabSize),
		chunks: make([][]float32, (rows+chunkRows-1)/chunkRows)}
	for i := range c.rowOf {
		c.rowOf[i].Store(-1)
	}
	c.sw.build(m)
	m.cache = c
	return c
}

// rowAt returns the start of row r (published in rowOf).
func (c *slotCache) rowAt(r int32) *float32 {
	return &c.chunks[r/chunkRows][int(r%chunkRows)*c.sw.nrows]
}

// add keeps the rows of words, tab[i·nrows:(i+1)·nrows] being the row of
// words[i] computed alone (f32.StableRows), for the words that have no row
// yet, while rows are left.
func (c *slotCache) add(words []int32, tab []float32) {
	if c.full.Load() {
		return
	}
	nr := c.sw.nrows
	c.mu.Lock()
	defer c.mu.Unlock()
	for i, id := range words {
		if c.rowOf[id].Load() >= 0 {
			continue // added by another goroutine meanwhile
		}
		if c.used == c.maxRows {
			c.full.Store(true)
			return
		}
		r := c.used
		ch := c.chunks[r/chunkRows]
		if ch == nil {
			ch = make([]float32, chunkRows*nr+winLanes)
			c.chunks[r/chunkRows] = ch
		}
		copy(ch[(r%chunkRows)*nr:(r%chunkRows+1)*nr], tab[i*nr:(i+1)*nr])
		c.used++
		c.rowOf[id].Store(int32(r))
	}
}

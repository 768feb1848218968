package cnn

import (
	"runtime"

	"sync"
	"sync/atomic"
	"telltale/corpus"
)

// tableFloats bounds the slot table of one Predictor (in float32 values, 32
// MiB; 6990 distinct words for widths 3, 4, 5 × 100 filters).
const tableFloats = 1 << 23

// Predictor runs a model on batches of texts with the word-slot table (see
// slots.go): the model's persistent table for its most frequent words
// (cache.go) and a per-call table for the others. It reuses its scratch
// memory, so steady-state calls with reusable outputs do not allocate. It
// reads the biases, masks and output layer at every call; after the
// embeddings or convolution weights were changed in place outside Train,
// call Model.Invalidate. A Predictor is not safe for concurrent use; make
// one per goroutine.
type Predictor struct {
	m  *Model
	sw slotWeights
	ws wordSet

	emb, tab, bias []float32
	best           []float32 // per text of the call: NumFilters
	arg            []int32
	bestP          []float32 // windowMax scratch
	argP           []int32
	code           []int32 // per token: cached word id (≥ 0), PAD (−1) or −2−local index
	rows           []*float32
	spans          []span
	h              []float32
	maxTokens      int // distinct uncached words per group; 0 means the default from tableFloats
	cacheWords     int // words of the persistent table: 0 the default bound, −1 none (tests)

	cache *slotCache // of the current call
	csw   *slotWeights
}

// span is a run of windows of one text processed within one group.
type span struct {
	text, t0, t1, base, locOff, locLen, lp int
}

// NewPredictor returns a Predictor for m.
func (m *Model) NewPredictor() *Predictor { return &Predictor{m: m} }

// groupWords is the largest number of distinct uncached words one group may
// hold.
func (p *Predictor) groupWords() int {
	if p.maxTokens > 0 {
		return max(p.maxTokens, 2*p.m.Config.MaxWidth())
	}
	return max(tableFloats/max(p.csw.nrows, 1), 4*p.m.Config.MaxWidth()+64)
}

// Run computes the output of every text into outs (same length as texts),
// reusing the slices already in each Output when they have the right
// capacity. Ids must be in [0, VocabSize). The results equal Forward's up to
// float32 rounding of the summation order; window ties are broken the same
// way (first maximum).
func (p *Predictor) Run(texts [][]int32, outs []Output) {
	if len(outs) != len(texts) {
		panic("cnn: Predictor.Run: len(outs) != len(texts)")
	}
	m := p.m
	cfg := m.Config
	nf, maxW := cfg.NumFilters(), cfg.MaxWidth()
	p.runPre(texts)
	for i := range texts {
		o := &outs[i]
		o.Logits = grow(o.Logits, cfg.Classes)
		o.Probs = grow(o.Probs, cfg.Classes)
		o.Pooled = grow(o.Pooled, nf)
		o.Pre = grow(o.Pre, nf)
		o.Argmax = grow(o.Argmax, nf)
		o.Len = max(len(texts[i]), maxW)
		copy(o.Pre, p.best[i*nf:(i+1)*nf])
		for g, a := range p.arg[i*nf : (i+1)*nf] {
			o.Argmax[g] = int(a)
		}
		m.pool(o.Pre, o.Pooled)
		m.Head(o.Pooled, o.Logits)
		m.addWide(texts[i], o.Logits)
		Softmax(o.Logits, o.Probs)
	}
}

// Probs writes the class probabilities of every text into dst
// (len(texts)·Classes values, text-major) without keeping the other outputs.
func (p *Predictor) Probs(texts [][]int32, dst []float32) {
	cfg := p.m.Config
	if len(dst) != len(texts)*cfg.Classes {
		panic("cnn: Predictor.Probs: len(dst) != len(texts)*Classes")
	}
	nf := cfg.NumFilters()
	p.runPre(texts)
	p.h = grow(p.h, nf+cfg.Classes)
	h, z := p.h[:nf], p.h[nf:]
	for i := range texts {
		p.m.pool(p.best[i*nf:(i+1)*nf], h)
		p.m.Head(h, z)
		p.m.addWide(texts[i], z)
		Softmax(z, dst[i*cfg.Classes:(i+1)*cfg.Classes])
	}
}

// runPre fills p.best and p.arg for texts.
//
// Words of the persistent table need no work per call. The other words are
// grouped so that a group's per-call table has at most groupWords rows:
// short texts share a group, a long text gets a group of its own when its
// uncached words fit, and only a text with more distinct uncached words
// than that is split into overlapping segments of windows. Identical
// windows tie exactly within a group; across the segments of one split text
// their sums may differ in the last bit, so there a tie between identical
// windows is broken within float32 rounding rather than strictly by
// position.
func (p *Predictor) runPre(texts [][]int32) {
	m := p.m
	cfg := m.Config
	nf, minW, maxW := cfg.NumFilters(), cfg.Widths[0], cfg.MaxWidth()
	for _, w := range cfg.Widths {
		minW = min(minW, w)
	}
	p.cache = nil
	if p.cacheWords >= 0 {
		want := -1
		if p.cacheWords > 0 {
			want = p.cacheWords
		}
		p.cache = m.slotTable(want)
	}
	if p.cache != nil {
		p.csw = &p.cache.sw
	} else {
		p.sw.build(m)
		p.csw = &p.sw
	}
	p.bias = padBias(m, p.bias)
	p.ws.init(cfg.VocabSize)
	p.bestP = grow(p.bestP, padLanes(cfg.Filters))
	p.argP = grow(p.argP, padLanes(cfg.Filters))
	p.best = grow(p.best, len(texts)*nf)
	p.arg = grow(p.arg, len(texts)*nf)
	resetBest(p.best, p.arg)
	capW := p.groupWords()
	for i, ids := range texts {
		lp := max(len(ids), maxW)
		if len(p.ws.words)+len(ids) > capW && len(p.spans) > 0 {
			p.flush()
		}
		if p.addWhole(i, ids, lp, capW) {
			continue
		}
		// More distinct uncached words than a table holds: segments of seg
		// windows need at most capW tokens each.
		seg := capW - (maxW - 1)
		nwin := lp - minW + 1
		for t0 := 0; t0 < nwin; t0 += seg {
			t1 := min(t0+seg, nwin)
			tokEnd := min(len(ids), t1-1+maxW)
			ntok := max(0, tokEnd-t0)
			if len(p.ws.words)+ntok > capW {
				p.flush()
			}
			sp := span{text: i, t0: t0, t1: t1, base: t0, locOff: len(p.code), locLen: ntok, lp: lp}
			for q := t0; q < tokEnd; q++ {
				p.code = append(p.code, p.codeOf(ids[q]))
			}
			p.spans = append(p.spans, sp)
		}
		p.flush()
	}
	p.flush()
	p.cache = nil
}

// codeOf returns the code of word id: its row when the persistent table
// holds it, −1 for PAD, else −2 − its index in the per-call word set.
func (p *Predictor) codeOf(id int32) int32 {
	if id == corpus.PAD {
		return -1
	}
	if p.cache != nil {
		if r := p.cache.rowOf[id].Load(); r >= 0 {
			return r
		}
	}
	return -2 - p.ws.add(id)
}

// addWhole adds text i as one span if its uncached words fit in the current
// group (which must be empty unless len(ids) words certainly fit) and
// reports whether it did; on failure the group is left empty.
func (p *Predictor) addWhole(i int, ids []int32, lp, capW int) bool {
	mark := len(p.code)
	for _, id := range ids {
		p.code = append(p.code, p.codeOf(id))
		if len(p.ws.words) > capW {
			p.code = p.code[:mark]
			p.ws.reset()
			return false
		}
	}
	p.spans = append(p.spans, span{text: i, t0: 0, t1: lp, base: 0, locOff: mark, locLen: len(ids), lp: lp})
	return true
}

// flush computes the per-call table of the current group and scans its
// spans.
func (p *Predictor) flush() {
	m := p.m
	nf, maxW := m.Config.NumFilters(), m.Config.MaxWidth()
	sw := p.csw
	nw := len(p.ws.words)
	if nw > 0 {
		p.emb, p.tab = wordRows(m, sw, p.ws.words, p.emb, p.tab)
		if p.cache != nil {
			p.cache.add(p.ws.words, p.tab)
		}
	}
	nr := sw.nrows
	zero := &sw.zero[0]
	for _, sp := range p.spans {
		code := p.code[sp.locOff : sp.locOff+sp.locLen]
		p.rows = grow(p.rows, sp.lp)
		end := min(sp.lp, sp.t1-1+maxW)
		for q := sp.t0; q < end; q++ {
			r := zero
			if k := q - sp.base; k < len(code) {
				switch c := code[k]; {
				case c >= 0:
					r = p.cache.rowAt(c)
				case c <= -2:
					r = &p.tab[int(-2-c)*nr]
				}
			}
			p.rows[q] = r
		}
		scanRows(m, sw, p.bias, p.rows, sp.lp, sp.t0, sp.t1, p.bestP, p.argP,
			p.best[sp.text*nf:(sp.text+1)*nf], p.arg[sp.text*nf:(sp.text+1)*nf])
	}
	p.ws.reset()
	p.spans = p.spans[:0]
	p.code = p.code[:0]
}

var predictorPool sync.Pool // of *Predictor, rebound to the model on use

func (m *Model) getPredictor() *Predictor {
	p, _ := predictorPool.Get().(*Predictor)
	if p == nil {
		p = &Predictor{}
	}
	p.m = m
	return p
}

func putPredictor(p *Predictor) {
	p.m = nil
	predictorPool.Put(p)
}

// Predict runs the model on one text with the fast path. Ids must be in
// [0, VocabSize). It agrees with Forward up to float32 rounding.
func (m *Model) Predict(ids []int32) Output {
	p := m.getPredictor()
	var out [1]Output
	p.Run([][]int32{ids}, out[:])
	putPredictor(p)
	return out[0]
}

// predictChunk is the most texts one goroutine takes at a time; a call with
// fewer than threads·predictChunk texts is cut into smaller chunks (at
// least minChunk texts) so that every goroutine gets a share.
const (
	predictChunk = 64
	minChunk     = 8
)

// PredictBatch runs the model on every text using threads goroutines (0 means
// GOMAXPROCS). The result is the same for any thread count.
func (m *Model) PredictBatch(texts [][]int32, threads int) []Output {
	outs := make([]Output, len(texts))
	m.parallelChunks(len(texts), threads, func(p *Predictor, lo, hi int) {
		p.Run(texts[lo:hi], outs[lo:hi])
	})
	return outs
}

// Probabilities returns the class probabilities of every text, computed with
// threads goroutines (0 means GOMAXPROCS). Row i has Classes values; all rows
// share one backing array.
func (m *Model) Probabilities(texts [][]int32, threads int) [][]float32 {
	return m.probabilities(texts, threads, true)
}

// probabilities is Probabilities; without cached only per-call tables are
// used.
func (m *Model) probabilities(texts [][]int32, threads int, cached bool) [][]float32 {
	c := m.Config.Classes
	flat := make([]float32, len(texts)*c)
	m.parallelChunks(len(texts), threads, func(p *Predictor, lo, hi int) {
		if !cached {
			p.cacheWords = -1
			defer func() { p.cacheWords = 0 }()
		}
		p.Probs(texts[lo:hi], flat[lo*c:hi*c])
	})
	rows := make([][]float32, len(texts))
	for i := range rows {
		rows[i] = flat[i*c : (i+1)*c : (i+1)*c]
	}
	return rows
}

// parallelChunks calls fn on chunks of [0, n) from threads goroutines, each
// with its own Predictor.
func (m *Model) parallelChunks(n, threads int, fn func(p *Predictor, lo, hi int)) {
	if threads <= 0 {
		threads = runtime.GOMAXPROCS(0)
	}
	size := predictChunk
	if threads > 1 {
		size = min(size, max(minChunk, (n+2*threads-1)/(2*threads)))
	}
	chunks := (n + size - 1) / size
	threads = max(1, min(threads, chunks))
	var next atomic.Int64
	work := func() {
		p := m.getPredictor()
		for {
			c := int(next.Add(1) - 1)
			if c >= chunks {
				break
			}
			fn(p, c*size, min(n, (c+1)*size))
		}
		putPredictor(p)
	}
	var wg sync.WaitGroup
	for t := 1; t < threads; t++ {
		wg.Go(work)
	}
	work()
	wg.Wait()
}

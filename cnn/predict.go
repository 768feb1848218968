package cnn

import (
	"runtime"
	"sync"
	"sync/atomic"
)

// tableFloats bounds the slot table of one Predictor (in float32 values, 32
// MiB; 6990 distinct words for widths 3, 4, 5 × 100 filters).
const tableFloats = 1 << 23

// Predictor runs a model on batches of texts with the word-slot table (see
// slots.go). It reuses its scratch memory, so steady-state calls with
// reusable outputs do not allocate. It reads the model's weights at every
// call, so it stays correct after they change. A Predictor is not safe for
// concurrent use; make one per goroutine.
type Predictor struct {
	m  *Model
	sw slotWeights
	ws wordSet

	emb, tab, acc []float32
	best          []float32 // per text of the call: NumFilters
	arg           []int32
	loc           []int32
	spans         []span
	h             []float32
	maxTokens     int // distinct words per group; 0 means the default from tableFloats
}

// span is a run of windows of one text processed within one group.
type span struct {
	text, t0, t1, base, locOff, locLen, lp int
}

// NewPredictor returns a Predictor for m.
func (m *Model) NewPredictor() *Predictor { return &Predictor{m: m} }

// groupWords is the largest number of distinct words one group may hold.
func (p *Predictor) groupWords() int {
	if p.maxTokens > 0 {
		return max(p.maxTokens, 2*p.m.Config.MaxWidth())
	}
	return max(tableFloats/max(p.sw.nrows, 1), 4*p.m.Config.MaxWidth()+64)
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
		Softmax(z, dst[i*cfg.Classes:(i+1)*cfg.Classes])
	}
}

// runPre fills p.best and p.arg for texts.
//
// Texts are grouped so that a group's slot table has at most groupWords rows:
// short texts share a group, a long text gets a group of its own when its
// distinct words fit, and only a text with more distinct words than that is
// split into overlapping segments of windows. Identical windows tie exactly
// within a group; across the segments of one split text their sums may
// differ in the last bit, so there a tie between identical windows is broken
// within float32 rounding rather than strictly by position.
func (p *Predictor) runPre(texts [][]int32) {
	m := p.m
	cfg := m.Config
	nf, minW, maxW := cfg.NumFilters(), cfg.Widths[0], cfg.MaxWidth()
	for _, w := range cfg.Widths {
		minW = min(minW, w)
	}
	p.sw.build(m)
	p.ws.init(cfg.VocabSize)
	p.acc = grow(p.acc, cfg.Filters)
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
		// More distinct words than a table holds: segments of seg windows
		// need at most capW tokens each.
		seg := capW - (maxW - 1)
		nwin := lp - minW + 1
		for t0 := 0; t0 < nwin; t0 += seg {
			t1 := min(t0+seg, nwin)
			tokEnd := min(len(ids), t1-1+maxW)
			ntok := max(0, tokEnd-t0)
			if len(p.ws.words)+ntok > capW {
				p.flush()
			}
			sp := span{text: i, t0: t0, t1: t1, base: t0, locOff: len(p.loc), locLen: ntok, lp: lp}
			for q := t0; q < tokEnd; q++ {
				p.loc = append(p.loc, p.ws.add(ids[q]))
			}
			p.spans = append(p.spans, sp)
		}
		p.flush()
	}
	p.flush()
}

// addWhole adds text i as one span if its words fit in the current group
// (which must be empty unless len(ids) words certainly fit) and reports
// whether it did; on failure the group is left empty.
func (p *Predictor) addWhole(i int, ids []int32, lp, capW int) bool {
	mark := len(p.loc)
	for _, id := range ids {
		p.loc = append(p.loc, p.ws.add(id))
		if len(p.ws.words) > capW {
			p.loc = p.loc[:mark]
			p.ws.reset()
			return false
		}
	}
	p.spans = append(p.spans, span{text: i, t0: 0, t1: lp, base: 0, locOff: mark, locLen: len(ids), lp: lp})
	return true
}

// flush computes the slot table of the current group and scans its spans.
func (p *Predictor) flush() {
	m := p.m
	d, nf := m.Config.Dim, m.Config.NumFilters()
	nw := len(p.ws.words)
	p.emb = grow(p.emb, nw*d)
	p.tab = grow(p.tab, nw*p.sw.nrows)
	gatherRows(m, p.ws.words, p.emb, 0, nw)
	tableRows(&p.sw, p.emb, p.tab, d, 0, nw)
	for _, sp := range p.spans {
		scanWindows(m, &p.sw, p.tab, p.loc[sp.locOff:sp.locOff+sp.locLen], sp.base, sp.lp, sp.t0, sp.t1,
			p.acc, p.best[sp.text*nf:(sp.text+1)*nf], p.arg[sp.text*nf:(sp.text+1)*nf])
	}
	p.ws.reset()
	p.spans = p.spans[:0]
	p.loc = p.loc[:0]
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

// predictChunk is the number of texts one goroutine takes at a time.
const predictChunk = 64

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
	c := m.Config.Classes
	flat := make([]float32, len(texts)*c)
	m.parallelChunks(len(texts), threads, func(p *Predictor, lo, hi int) {
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
	chunks := (n + predictChunk - 1) / predictChunk
	threads = max(1, min(threads, chunks))
	var next atomic.Int64
	work := func() {
		p := m.getPredictor()
		for {
			c := int(next.Add(1) - 1)
			if c >= chunks {
				break
			}
			fn(p, c*predictChunk, min(n, (c+1)*predictChunk))
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

package explain

import (
	"context"
	"math"
	"runtime"
	"sync"
	"sync/atomic"

	"telltale/cnn"
	"telltale/corpus"
)

// Pass is the result of one forward pass through a SlotTable. Its slices are
// owned by the Runner that produced it and are overwritten by the next Run.
type Pass struct {
	Pre    []float32 // NumFilters: pre-activation of the winning window
	Start  []int32   // NumFilters: start of the winning window (first maximum)
	Pooled []float32 // NumFilters: relu(Pre), 0 when the filter is masked
	Logits []float32 // Classes
	Probs  []float32 // Classes
	Pred   int       // argmax of Logits (first maximum)
	Len    int       // padded length L' = max(len(ids), MaxWidth)
	IDs    []int32   // the padded ids, Len of them; window g is IDs[Start[g]:Start[g]+width]
}

// Runner runs texts through a SlotTable with reusable buffers. A Runner is not
// safe for concurrent use; make one per goroutine.
type Runner struct {
	st    *SlotTable
	x     []int32
	rows  [][][]float32 // [bank][position] → width·filters slot scores
	extra [][]float32   // [bank] scratch for words not tabled
	win   [][]float32   // [bank] windows × filters pre-activations (kept when keep)
	keep  bool
	p     Pass
	// screen, when not nil, makes pool collect the windows that pass each
	// bank's negative-window screen into cands (see poolBankNegGo).
	screen []bankScreen
	cands  [][]negCand // [bank]
	// negativesOnly, with screen, makes Run search only: banks and groups
	// of filters whose screen passes nothing are skipped, and the Pass
	// holds only the padded ids (the search again once the thresholds are
	// known needs nothing else).
	negativesOnly bool
	// occPM and occSM are the occluder's prefix and suffix maxima, kept
	// for the next explanation.
	occPM, occSM [][]float32
	// touched keeps touchRows's result, so that its reads are not dropped.
	touched uint32
}

// NewRunner returns a Runner over st.
func (st *SlotTable) NewRunner() *Runner {
	cfg := st.m.Config
	nf := cfg.NumFilters()
	r := &Runner{
		st:    st,
		rows:  make([][][]float32, len(st.banks)),
		extra: make([][]float32, len(st.banks)),
		win:   make([][]float32, len(st.banks)),
		p: Pass{
			Pre: make([]float32, nf), Start: make([]int32, nf), Pooled: make([]float32, nf),
			Logits: make([]float32, cfg.Classes), Probs: make([]float32, cfg.Classes),
		},
	}
	return r
}

// Run computes the pass of one text. Ids must be < VocabSize. The result
// agrees with cnn.Model.Forward up to float rounding (the sums are taken in a
// different order).
func (r *Runner) Run(ids []int32) *Pass {
	r.load(ids)
	r.pool()
	return &r.p
}

// load pads ids and resolves every position's slot-score rows.
func (r *Runner) load(ids []int32) {
	st := r.st
	cfg := st.m.Config
	n := max(len(ids), cfg.MaxWidth())
	r.x = append(r.x[:0], ids...)
	for len(r.x) < n {
		r.x = append(r.x, corpus.PAD)
	}
	r.p.Len = n
	r.p.IDs = r.x
	for b := range st.banks {
		if r.skipsBank(b) {
			continue
		}
		tb := &st.banks[b]
		k := tb.width * tb.filters
		if cap(r.rows[b]) < n {
			r.rows[b] = make([][]float32, n)
		}
		rows := r.rows[b][:n]
		need := 0
		for _, id := range r.x {
			if st.rows[id] < 0 {
				need += k
			}
		}
		if cap(r.extra[b]) < need {
			r.extra[b] = make([]float32, need)
		}
		ex := r.extra[b][:need]
		for i, id := range r.x {
			if st.rows[id] >= 0 {
				rr := int(st.rows[id]) * k
				rows[i] = tb.t[rr : rr+k]
			} else {
				rows[i] = st.wordRow(b, id, ex[:k])
				ex = ex[k:]
			}
		}
		r.rows[b] = rows
		r.touched ^= touchRows(rows)
	}
}

// skipsBank reports whether Run leaves bank b out: in negativesOnly mode,
// when its screen passes no window of any of its filters.
func (r *Runner) skipsBank(b int) bool {
	if !r.negativesOnly || r.screen == nil {
		return false
	}
	for _, lo := range r.screen[b].pc[0] {
		if lo != posInf {
			return false
		}
	}
	return true
}

// touchRows reads one value from every cache line of rows and returns
// their bits combined. The reads are independent, so the processor has
// many of the rows' cache misses under way at once, where the kernels,
// which walk the rows a few lines at a time between their arithmetic,
// would wait for most of them one after another: on a table much larger
// than the cache this pass made the forward pass about a third faster.
//
// A row need not start on a line (a row of width 3 × 100 filters is 1200
// bytes, 18.75 lines), so one read every 16 values from its start can
// miss its last line: its last value is read too.
func touchRows(rows [][]float32) uint32 {
	var x uint32
	for _, row := range rows {
		for i := 0; i < len(row); i += 16 { // 16 float32: a 64-byte line
			x ^= math.Float32bits(row[i])
		}
		if len(row) > 0 {
			x ^= math.Float32bits(row[len(row)-1])
		}
	}
	return x
}

// pool computes every window's pre-activation, max-pools and applies the head.
func (r *Runner) pool() {
	st := r.st
	n := r.p.Len
	for b := range st.banks {
		tb := &st.banks[b]
		F, w := tb.filters, tb.width
		var win []float32
		if r.keep {
			nw := n - w + 1
			if cap(r.win[b]) < nw*F {
				r.win[b] = make([]float32, nw*F)
			}
			r.win[b] = r.win[b][:nw*F]
			win = r.win[b]
		}
		if r.skipsBank(b) {
			r.cands[b] = r.cands[b][:0]
			continue
		}
		if r.screen != nil {
			r.screen[b].skipIdle = r.negativesOnly
			r.cands[b] = poolBankNeg(r.p.Pre[b*F:(b+1)*F], r.p.Start[b*F:(b+1)*F], tb.bias, r.rows[b][:n], w, F, &r.screen[b], r.cands[b][:0])
			continue
		}
		poolBank(r.p.Pre[b*F:(b+1)*F], r.p.Start[b*F:(b+1)*F], tb.bias, r.rows[b][:n], w, F, win)
	}
	if r.negativesOnly && r.screen != nil {
		return
	}
	r.head()
}

// head turns the pooled maxima in r.p.Pre into the pooled units (ReLU,
// masked filters zero), the logits (with the wide path's term of the
// text, whose padding counts for nothing), the probabilities and the
// prediction.
func (r *Runner) head() {
	m := r.st.m
	for g, a := range r.p.Pre {
		if a > 0 && !m.IsMasked(g) {
			r.p.Pooled[g] = a
		} else {
			r.p.Pooled[g] = 0
		}
	}
	m.Head(r.p.Pooled, r.p.Logits)
	m.AddWide(r.x, r.p.Logits)
	cnn.Softmax(r.p.Logits, r.p.Probs)
	r.p.Pred = argmax32(r.p.Logits)
}

func argmax32(v []float32) int {
	best := 0
	for i, x := range v {
		if x > v[best] {
			best = i
		}
	}
	return best
}

// Progress is called from time to time during long work with the number of
// items done and the total. It must be safe to call from several goroutines
// and should return quickly.
type Progress func(done, total int)

// Scan runs every text of ids through st in parallel and calls fn with each
// text's pass. Fn is called concurrently from up to workers goroutines
// (worker is its goroutine's number, 0 ≤ worker < workers) and must not keep
// the Pass past its return. Workers ≤ 0 means GOMAXPROCS. Scan returns
// ctx.Err() when ctx is cancelled before the end.
func Scan(ctx context.Context, st *SlotTable, ids [][]int32, workers int, progress Progress,
	fn func(worker, text int, p *Pass)) error {
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	const chunk = 256
	var next, done atomic.Int64
	total := len(ids)
	var wg sync.WaitGroup
	for wk := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			r := st.NewRunner()
			for {
				if ctx.Err() != nil {
					return
				}
				lo := int(next.Add(chunk)) - chunk
				if lo >= total {
					return
				}
				hi := min(lo+chunk, total)
				for i := lo; i < hi; i++ {
					fn(wk, i, r.Run(ids[i]))
				}
				d := done.Add(int64(hi - lo))
				if progress != nil {
					progress(int(d), total)
				}
			}
		}()
	}
	wg.Wait()
	return ctx.Err()
}

var (
	negInf = float32(math.Inf(-1))
	posInf = float32(math.Inf(1))
)

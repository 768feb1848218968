package explain

import (
	"fmt"
	"runtime"
	"sync"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/f32"
)

// DefaultTableBytes is the default memory bound of a SlotTable (256 MiB).
const DefaultTableBytes = 256 << 20

// TableOptions controls which words a SlotTable holds.
type TableOptions struct {
	// Words lists the vocabulary ids to table, most important first (for
	// example by descending corpus count). Nil tables the whole vocabulary.
	// PAD and UNK are always tabled.
	Words []int32
	// MaxBytes bounds the table's memory. Words are tabled in the order of
	// Words until the next one would pass the bound; the rest are computed on
	// the fly when a text uses them. Zero means DefaultTableBytes.
	MaxBytes int64
	// Workers is the number of goroutines used to build the table; zero means
	// GOMAXPROCS.
	Workers int
}

// SlotTable holds, for a frozen model, the dot product of every tabled word's
// embedding with every filter slot: T[word][s][f] = Emb[word]·W[f][s], one
// table per bank of filters of the same width.
//
// The layout is [row][slot][filter], so the pre-activation of all filters of a
// bank for the window starting at t is
//
//	B + Σ_s T[x[t+s]][s][:]
//
// a sum of Width contiguous rows of Filters values. That is the slot-score
// identity: a window's pre-activation is the filter bias plus one slot score
// per position.
//
// Memory: 4·Σ_b Width_b·Filters bytes per tabled word (3·100 + 4·100 + 5·100
// filters take 4.8 KB a word, so 50,000 words take 240 MB). The table never
// grows past TableOptions.MaxBytes: words beyond the bound are computed on the
// fly for each text that uses them, which costs the same as direct
// convolution for those tokens only.
//
// A SlotTable is read-only once built and safe for concurrent use. It is valid
// only while the model's weights do not change.
type SlotTable struct {
	m     *cnn.Model
	rows  []int32 // vocabulary id → table row, −1 when not tabled
	words []int32 // tabled ids by row
	banks []tableBank
	bytes int64
	// explainers holds Runners kept for Explain, so that explaining text
	// after text reuses their buffers.
	explainers sync.Pool
}

type tableBank struct {
	width, filters int
	bias           []float32 // Filters
	wt             []float32 // weights laid out [slot][filter][dim]
	t              []float32 // rows × width × filters
}

// NewSlotTable builds the word-slot table of m. It returns an error when
// opt.Words holds an id outside the vocabulary or the model is malformed.
func NewSlotTable(m *cnn.Model, opt TableOptions) (*SlotTable, error) {
	cfg := m.Config
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	d := cfg.Dim
	if len(m.Emb) != cfg.VocabSize*d || len(m.Convs) != len(cfg.Widths) ||
		len(m.OutW) != cfg.Classes*cfg.NumFilters() || len(m.OutB) != cfg.Classes {
		return nil, fmt.Errorf("explain: model arrays do not match its configuration")
	}
	maxBytes := opt.MaxBytes
	if maxBytes <= 0 {
		maxBytes = DefaultTableBytes
	}
	perWord := int64(0)
	for _, w := range cfg.Widths {
		perWord += int64(4 * w * cfg.Filters)
	}
	st := &SlotTable{m: m, rows: make([]int32, cfg.VocabSize)}
	for i := range st.rows {
		st.rows[i] = -1
	}
	add := func(id int32) bool {
		if st.rows[id] >= 0 {
			return true
		}
		if st.bytes+perWord > maxBytes && len(st.words) >= 2 {
			return false
		}
		st.rows[id] = int32(len(st.words))
		st.words = append(st.words, id)
		st.bytes += perWord
		return true
	}
	add(corpus.PAD)
	add(corpus.UNK)
	if opt.Words == nil {
		for id := int32(2); int(id) < cfg.VocabSize; id++ {
			if !add(id) {
				break
			}
		}
	} else {
		for _, id := range opt.Words {
			if id < 0 || int(id) >= cfg.VocabSize {
				return nil, fmt.Errorf("explain: table word id %d outside the vocabulary of %d", id, cfg.VocabSize)
			}
			if !add(id) {
				break
			}
		}
	}
	workers := opt.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	n := len(st.words)
	emb := make([]float32, n*d)
	for r, id := range st.words {
		copy(emb[r*d:(r+1)*d], m.Row(id))
	}
	for b, c := range m.Convs {
		if c.Width != cfg.Widths[b] || len(c.W) != cfg.Filters*c.Width*d || len(c.B) != cfg.Filters {
			return nil, fmt.Errorf("explain: bank %d does not match width %d", b, cfg.Widths[b])
		}
		F, w := cfg.Filters, c.Width
		tb := tableBank{width: w, filters: F, bias: c.B, wt: make([]float32, w*F*d), t: largeFloats(n * w * F)}
		for f := 0; f < F; f++ {
			for s := 0; s < w; s++ {
				copy(tb.wt[(s*F+f)*d:(s*F+f+1)*d], c.W[(f*w+s)*d:(f*w+s+1)*d])
			}
		}
		parallelRows(n, workers, 64, func(lo, hi int) {
			f32.MatMulNT(tb.t[lo*w*F:hi*w*F], emb[lo*d:hi*d], tb.wt, hi-lo, w*F, d)
		})
		st.banks = append(st.banks, tb)
	}
	return st, nil
}

// Model is the model the table was built for.
func (st *SlotTable) Model() *cnn.Model { return st.m }

// Bytes is the memory held by the table's rows.
func (st *SlotTable) Bytes() int64 { return st.bytes }

// Tabled is the number of words held in the table (PAD and UNK included).
func (st *SlotTable) Tabled() int { return len(st.words) }

// Has reports whether word id is tabled.
func (st *SlotTable) Has(id int32) bool { return st.rows[id] >= 0 }

// SlotScore is Emb[id]·W_g[s], the slot score of word id at slot s of global
// filter g, from the table when id is tabled and computed otherwise.
// Id must be in the vocabulary and s < FilterWidth(g).
func (st *SlotTable) SlotScore(g, s int, id int32) float32 {
	b, f := st.m.FilterConv(g)
	tb := &st.banks[b]
	if r := st.rows[id]; r >= 0 {
		return tb.t[(int(r)*tb.width+s)*tb.filters+f]
	}
	// The entry of the one-row product that wordRow computes, bit for bit,
	// so that both give a word outside the table the same slot scores.
	return f32.RowDot(st.m.Row(id), tb.wt, tb.width*tb.filters, st.m.Config.Dim, s*tb.filters+f)
}

// wordRow returns the width×filters slot scores of id for bank b, from the
// table or computed into buf (length width·filters).
func (st *SlotTable) wordRow(b int, id int32, buf []float32) []float32 {
	tb := &st.banks[b]
	n := tb.width * tb.filters
	if r := st.rows[id]; r >= 0 {
		return tb.t[int(r)*n : int(r)*n+n]
	}
	f32.MatMulNT(buf[:n], st.m.Row(id), tb.wt, 1, n, st.m.Config.Dim)
	return buf[:n]
}

// parallelRows splits [0,n) into chunks of at most chunk rows and runs fn on
// them with the given number of workers.
func parallelRows(n, workers, chunk int, fn func(lo, hi int)) {
	if n == 0 {
		return
	}
	if workers <= 1 || n <= chunk {
		fn(0, n)
		return
	}
	var wg sync.WaitGroup
	next := make(chan int, workers)
	go func() {
		for lo := 0; lo < n; lo += chunk {
			next <- lo
		}
		close(next)
	}()
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for lo := range next {
				fn(lo, min(lo+chunk, n))
			}
		}()
	}
	wg.Wait()
}

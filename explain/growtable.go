package explain

import (
	"slices"

	"telltale/cnn"
	"telltale/internal/f32"
)

// GrowingTable is a SlotTable filled as texts come: Add tables the words of
// each text that the table does not hold yet, so explaining text after
// text computes every distinct word's slot scores once, and never those of
// words no text uses. Every row is computed alone (f32.StableRows), so a
// word's slot scores are the same bit for bit whichever texts came before.
//
// A GrowingTable is not safe for concurrent use: Add changes the table, so
// it must not run while another goroutine reads the table.
type GrowingTable struct {
	st       *SlotTable
	maxBytes int64
	perWord  int64
	packed   [][]float32 // per bank: its weights packed for f32.MatMulNTPacked
	fresh    []int32     // scratch: the words one Add tables
	emb      []float32   // scratch: their embeddings, padded to f32.StableRows
}

// NewGrowingTable returns a table of m holding PAD and UNK only, which Add
// fills up to maxBytes of rows (0: DefaultTableBytes); the words met after
// that are computed for each text that uses them, as SlotTable does. It
// returns an error when the model is malformed.
func NewGrowingTable(m *cnn.Model, maxBytes int64) (*GrowingTable, error) {
	st, err := NewSlotTable(m, TableOptions{Words: []int32{}, MaxBytes: maxBytes, Workers: 1})
	if err != nil {
		return nil, err
	}
	if maxBytes <= 0 {
		maxBytes = DefaultTableBytes
	}
	g := &GrowingTable{st: st, maxBytes: maxBytes}
	for b := range st.banks {
		tb := &st.banks[b]
		g.perWord += int64(4 * tb.width * tb.filters)
		g.packed = append(g.packed, f32.PackWeights(nil, tb.wt, tb.width*tb.filters, m.Config.Dim))
	}
	// PAD and UNK again, computed alone like every later row.
	g.tableRows(0, st.words)
	return g, nil
}

// Table is the table as it stands.
func (g *GrowingTable) Table() *SlotTable { return g.st }

// Add tables the words of ids that the table does not hold, while the
// memory bound allows, and returns the table. Ids must be < VocabSize.
func (g *GrowingTable) Add(ids []int32) *SlotTable {
	st := g.st
	first := len(st.words)
	g.fresh = g.fresh[:0]
	for _, id := range ids {
		if st.rows[id] >= 0 {
			continue
		}
		if st.bytes+g.perWord > g.maxBytes {
			break
		}
		st.rows[id] = int32(len(st.words))
		st.words = append(st.words, id)
		st.bytes += g.perWord
		g.fresh = append(g.fresh, id)
	}
	if len(g.fresh) > 0 {
		g.tableRows(first, g.fresh)
	}
	return st
}

// tableRows computes the rows of words, each alone, as rows first … of
// every bank's table, growing the tables as needed.
func (g *GrowingTable) tableRows(first int, words []int32) {
	st := g.st
	d := st.m.Config.Dim
	n := len(words)
	padded := f32.StableRows(n)
	g.emb = slices.Grow(g.emb[:0], padded*d)[:padded*d]
	for i, id := range words {
		copy(g.emb[i*d:(i+1)*d], st.m.Row(id))
	}
	clear(g.emb[n*d:])
	for b := range st.banks {
		tb := &st.banks[b]
		k := tb.width * tb.filters
		lo := first * k
		if need := lo + padded*k; need > cap(tb.t) {
			// Doubling: the rows are copied about once in all. The first
			// capacity, 4096 words, holds those of about a hundred mails
			// of 200 tokens; a fresh allocation's pages are touched only
			// as rows are written.
			t := make([]float32, lo, max(need, 2*cap(tb.t), 4096*k))
			copy(t, tb.t[:lo])
			tb.t = t
		}
		tb.t = tb.t[:lo+padded*k]
		f32.MatMulNTPacked(tb.t[lo:], g.emb, tb.wt, g.packed[b], padded, k, d)
		tb.t = tb.t[:lo+n*k]
	}
}

package report

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strconv"
	"strings"

	"telltale/cnn"
	"telltale/explain"
	"telltale/internal/atomicfile"
)

// Table is a flat table for data-frame tools: one header, one row per record.
// Cells are strings, ints, float64 or bools; CSV writes them as text, JSON
// Lines keeps their types (a NaN or infinite float becomes null).
type Table struct {
	Columns []string
	Rows    [][]any
}

// Add appends a row; it must have one cell per column.
func (t *Table) Add(cells ...any) {
	if len(cells) != len(t.Columns) {
		panic(fmt.Sprintf("report: row of %d cells for %d columns", len(cells), len(t.Columns)))
	}
	t.Rows = append(t.Rows, cells)
}

// WriteCSV writes t as RFC 4180 CSV with a header row.
func (t *Table) WriteCSV(w io.Writer) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(t.Columns); err != nil {
		return err
	}
	rec := make([]string, len(t.Columns))
	for _, r := range t.Rows {
		for i, c := range r {
			rec[i] = cellText(c)
		}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// WriteJSONL writes one JSON object per row, keys in column order.
func (t *Table) WriteJSONL(w io.Writer) error {
	var buf bytes.Buffer
	for _, r := range t.Rows {
		buf.Reset()
		buf.WriteByte('{')
		for i, c := range r {
			if i > 0 {
				buf.WriteByte(',')
			}
			k, _ := json.Marshal(t.Columns[i])
			buf.Write(k)
			buf.WriteByte(':')
			if f, ok := c.(float64); ok && (math.IsNaN(f) || math.IsInf(f, 0)) {
				c = nil
			}
			v, err := json.Marshal(c)
			if err != nil {
				return err
			}
			buf.Write(v)
		}
		buf.WriteString("}\n")
		if _, err := w.Write(buf.Bytes()); err != nil {
			return err
		}
	}
	return nil
}

func cellText(c any) string {
	switch v := c.(type) {
	case nil:
		return ""
	case string:
		return v
	case float64:
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return ""
		}
		return strconv.FormatFloat(v, 'g', 8, 64)
	case int:
		return strconv.Itoa(v)
	case bool:
		return strconv.FormatBool(v)
	default:
		return fmt.Sprint(v)
	}
}

// ExportFormat is the format implied by an export path: "csv" for .csv,
// "jsonl" for .jsonl or .ndjson.
func ExportFormat(path string) (string, error) {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".csv":
		return "csv", nil
	case ".jsonl", ".ndjson":
		return "jsonl", nil
	}
	return "", fmt.Errorf("report: %s: export files end in .csv or .jsonl", path)
}

// WriteTableFile writes t to path atomically, as CSV or JSON Lines by the
// path's extension.
func WriteTableFile(path string, t *Table) error {
	format, err := ExportFormat(path)
	if err != nil {
		return err
	}
	err = atomicfile.Write(path, func(w io.Writer) error {
		if format == "csv" {
			return t.WriteCSV(w)
		}
		return t.WriteJSONL(w)
	})
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	return nil
}

// PredictionTable has one row per text: its index, the text, the gold label
// (empty when unknown), the predicted label, and p_<label> for every class.
// Gold may be nil.
func PredictionTable(labels, texts []string, gold []int, probs [][]float32) *Table {
	t := &Table{Columns: []string{"index", "text", "gold", "predicted"}}
	for _, l := range labels {
		t.Columns = append(t.Columns, "p_"+l)
	}
	for i, p := range probs {
		best := 0
		for c := range p {
			if p[c] > p[best] {
				best = c
			}
		}
		g := ""
		if gold != nil && gold[i] >= 0 {
			g = labels[gold[i]]
		}
		row := []any{i, texts[i], g, labels[best]}
		for _, v := range p {
			row = append(row, float64(v))
		}
		t.Add(row...)
	}
	return t
}

// AttributionTable has one row per token of each explained text: the text's
// index, the token's position, text and byte offsets, exact_<label> for every
// class, the single-token occlusion drop and log-drop of the predicted class
// (empty when not computed) and ig_<label> (empty when not computed).
func AttributionTable(es []*explain.Explanation) *Table {
	t := &Table{Columns: []string{"text_index", "token_index", "token", "start", "end", "predicted"}}
	if len(es) == 0 {
		return t
	}
	labels := es[0].Labels
	for _, l := range labels {
		t.Columns = append(t.Columns, "exact_"+l)
	}
	t.Columns = append(t.Columns, "occlusion", "occlusion_log")
	for _, l := range labels {
		t.Columns = append(t.Columns, "ig_"+l)
	}
	for ti, e := range es {
		for i, tok := range e.Tokens {
			row := []any{ti, i, tok.Text, tok.Start, tok.End, e.Label}
			for c := range labels {
				row = append(row, e.Attributions.Exact[i][c])
			}
			row = append(row, at(e.Attributions.Occlusion, i), at(e.Attributions.OcclusionLog, i))
			for c := range labels {
				if e.Attributions.IG != nil {
					row = append(row, e.Attributions.IG[i][c])
				} else {
					row = append(row, nil)
				}
			}
			t.Add(row...)
		}
	}
	return t
}

func at(xs []float64, i int) any {
	if i < len(xs) {
		return xs[i]
	}
	return nil
}

// ProfileTable has one row per top n-gram of every filter: the filter's
// number, width, the class it votes for, its purity threshold, whether it is
// idle, its number of families, then the n-gram's rank, tokens (space-
// separated), activation, count of texts it wins in, and its slot scores
// (space-separated, in slot order).
func ProfileTable(p *explain.Profiles) *Table {
	t := &Table{Columns: []string{"filter", "width", "votes", "threshold", "idle", "families", "rank", "ngram", "activation", "count", "slot_scores"}}
	for _, f := range p.Filters {
		for r, n := range f.TopNgrams {
			t.Add(f.Filter, f.Width, f.Label, f.Threshold, f.Idle, len(f.Families), r+1,
				strings.Join(n.Tokens, " "), n.Activation, n.Count, joinFloats(n.Slots))
		}
	}
	return t
}

// MetricsTable has one row per class: precision, recall, F1 and support.
func MetricsTable(m cnn.Metrics) *Table {
	t := &Table{Columns: []string{"label", "precision", "recall", "f1", "support"}}
	for _, c := range m.PerClass {
		t.Add(c.Label, c.Precision, c.Recall, c.F1, c.Support)
	}
	return t
}

func joinFloats(xs []float64) string {
	parts := make([]string, len(xs))
	for i, x := range xs {
		parts[i] = strconv.FormatFloat(x, 'g', 6, 64)
	}
	return strings.Join(parts, " ")
}

func joinInts(xs []int) string {
	parts := make([]string, len(xs))
	for i, x := range xs {
		parts[i] = strconv.Itoa(x)
	}
	return strings.Join(parts, " ")
}

package report

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"slices"
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

// RowStrings is the text of every cell of every row, as WriteCSV writes
// it.
func (t *Table) RowStrings() [][]string {
	out := make([][]string, len(t.Rows))
	for i, r := range t.Rows {
		out[i] = make([]string, len(r))
		for j, c := range r {
			out[i][j] = cellText(c)
		}
	}
	return out
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

// AttributionTable has one row per token of each explained text: the
// text's index, the token's position, text and byte offsets, the predicted
// label and the runner-up (the class with the next largest probability),
// then the token's identified scores: share_log_odds, its exact share of
// the log-odds of the predicted label against the runner-up, and
// share_centred_<label> for every class, its exact share of that class's
// centred logit (the logit minus the mean over classes); occlusion and
// occlusion_log, the drop of p(predicted) and of its log when the token is
// replaced by padding; ig_log_odds and ig_centred_<label>, the same
// quantities by integrated gradients. For a model with word weights
// (explain.Shares.Words) two more columns follow, word_log_odds and
// word_centred_<label>: the part of the token's share that its word weight
// gives. A score the explanation lacks is empty. Labels are those of the
// first explanation; every explanation must be of the same model.
func AttributionTable(es []*explain.Explanation) *Table {
	t := &Table{Columns: []string{"text_index", "token_index", "token", "start", "end", "predicted", "runner_up", "share_log_odds"}}
	if len(es) == 0 {
		return t
	}
	labels := es[0].Labels
	for _, l := range labels {
		t.Columns = append(t.Columns, "share_centred_"+l)
	}
	t.Columns = append(t.Columns, "occlusion", "occlusion_log", "ig_log_odds")
	for _, l := range labels {
		t.Columns = append(t.Columns, "ig_centred_"+l)
	}
	words := es[0].LogOdds.Words != nil
	if words {
		t.Columns = append(t.Columns, "word_log_odds")
		for _, l := range labels {
			t.Columns = append(t.Columns, "word_centred_"+l)
		}
	}
	for ti, e := range es {
		for i, tok := range e.Tokens {
			row := []any{ti, i, tok.Text, tok.Start, tok.End, e.Label, e.Labels[e.RunnerUp], at(e.LogOdds.Tokens, i)}
			for c := range labels {
				row = append(row, sharesAt(e.Centred, c, i))
			}
			row = append(row, at(e.Attributions.Occlusion, i), at(e.Attributions.OcclusionLog, i))
			if ig := e.Integrated; ig != nil {
				row = append(row, at(ig.LogOdds.Tokens, i))
				for c := range labels {
					var v any
					if c < len(ig.Centred) {
						v = at(ig.Centred[c].Tokens, i)
					}
					row = append(row, v)
				}
			} else {
				row = append(row, make([]any, 1+len(labels))...)
			}
			if words {
				row = append(row, at(e.LogOdds.Words, i))
				for c := range labels {
					var v any
					if c < len(e.Centred) {
						v = at(e.Centred[c].Words, i)
					}
					row = append(row, v)
				}
			}
			t.Add(row...)
		}
	}
	return t
}

func sharesAt(ss []explain.Shares, c, i int) any {
	if c < len(ss) {
		return at(ss[c].Tokens, i)
	}
	return nil
}

func at(xs []float64, i int) any {
	if i < len(xs) {
		return xs[i]
	}
	return nil
}

// ProfileTable has one row per n-gram and family of every filter. Each row
// starts with the filter: its number, width, the label it votes for, its
// vote margin at its highest winning window (margin_log_odds),
// centred_vote_log_odds_<label> for every class (how much that window
// moves the class's centred logit), its selectivity (selective, the
// threshold, the held-out purity with its 95% interval, the held-out base
// rate, the one-sided binomial p and its Holm-corrected value), whether its
// negative n-grams are complete (negatives_exact) and the number of
// sampled windows its families were built from (family_sample). Every
// activation-scale number (threshold, activation, slot scores, held_down,
// positive) is in log-odds units, times the filter's vote scale
// (explain.VoteScale), its column named …_log_odds. Then the
// row's kind and rank within it: "top", a top n-gram, with its tokens
// (space-separated), activation, the number of texts it wins in and its
// slot scores (space-separated, in slot order); "negative", a negative
// n-gram, with the same and held_down (how far its negative slots held it
// below the threshold), positive (its score without them) and
// negative_slots (their indexes, space-separated), its count being the
// windows of the corpus equal to it; "family", with its pattern as ngram,
// its estimated text count with its 95% interval (count_low, count_high:
// the share's bounds times the windows above the threshold), its share of the windows above the threshold
// with its 95% interval, measured on the half of the texts that took no
// part in choosing the families (empty when none of that half's sampled
// windows lies above the threshold; see explain.Family), and stability
// with the bounds of its 95% Monte Carlo interval (empty for a family of
// one n-gram). A missing number is empty.
func ProfileTable(p *explain.Profiles) *Table {
	t := &Table{Columns: []string{"filter", "width", "votes_for", "margin_log_odds"}}
	for _, l := range p.Labels {
		t.Columns = append(t.Columns, "centred_vote_log_odds_"+l)
	}
	t.Columns = append(t.Columns, "selective", "threshold_log_odds", "purity", "purity_low", "purity_high", "base_rate", "p", "p_holm",
		"negatives_exact", "family_sample", "kind", "rank", "ngram", "activation_log_odds", "count", "count_low", "count_high", "slot_scores_log_odds",
		"held_down_log_odds", "positive_log_odds", "negative_slots", "share", "share_low", "share_high", "stability",
		"stability_low", "stability_high")
	for _, f := range p.Filters {
		s := f.Selectivity
		head := []any{f.Filter, f.Width, f.Label, f.MarginLogOdds}
		for c := range p.Labels {
			head = append(head, at(f.CentredVotesLogOdds, c))
		}
		head = append(head, s.Selective, s.ThresholdLogOdds, s.Purity, s.PurityLow, s.PurityHigh, s.BaseRate, s.P, s.PHolm,
			f.NegativesExact, f.FamilySample)
		add := func(cells ...any) { t.Add(append(slices.Clone(head), cells...)...) }
		for r, n := range f.TopNgrams {
			add("top", r+1, strings.Join(n.Tokens, " "), n.ActivationLogOdds, n.Count, nil, nil, joinFloats(n.SlotsLogOdds),
				nil, nil, nil, nil, nil, nil, nil, nil, nil)
		}
		for r, n := range f.Negatives {
			add("negative", r+1, strings.Join(n.Tokens, " "), n.ActivationLogOdds, n.Count, nil, nil, joinFloats(n.SlotsLogOdds),
				n.HeldDownLogOdds, n.PositiveLogOdds, joinInts(n.NegativeSlots), nil, nil, nil, nil, nil, nil)
		}
		for r, fam := range f.Families {
			var stab, stabLow, stabHigh any
			if fam.Stability != nil {
				stab, stabLow, stabHigh = *fam.Stability, *fam.StabilityLow, *fam.StabilityHigh
			}
			var count, countLow, countHigh any = fam.Count, fam.CountLow, fam.CountHigh
			if math.IsNaN(fam.Share) { // no measured window: no estimate
				count, countLow, countHigh = nil, nil, nil
			}
			add("family", r+1, fam.Pattern, nil, count, countLow, countHigh, nil,
				nil, nil, nil, fam.Share, fam.ShareLow, fam.ShareHigh, stab, stabLow, stabHigh)
		}
	}
	return t
}

// MetricsTable has one row per class: precision, recall, F1 and support,
// then the bounds of their 95% intervals (cnn.IntervalsOf).
func MetricsTable(m cnn.Metrics) *Table {
	t := &Table{Columns: []string{"label", "precision", "recall", "f1", "support",
		"precision_low", "precision_high", "recall_low", "recall_high", "f1_low", "f1_high"}}
	iv := cnn.IntervalsOf(m)
	for i, c := range m.PerClass {
		ci := iv.PerClass[i]
		t.Add(c.Label, c.Precision, c.Recall, c.F1, c.Support,
			ci.Precision.Low, ci.Precision.High, ci.Recall.Low, ci.Recall.High, ci.F1.Low, ci.F1.High)
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

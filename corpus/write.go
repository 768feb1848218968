package corpus

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
)

// FormatOf is the format Load reads a file named path in when no format is
// given: "csv", "tsv" or "jsonl" by its extension (.csv; .tsv, .tab;
// .jsonl, .ndjson), "" for any other name.
func FormatOf(path string) string {
	return detectFormat(path, false)
}

// Write writes examples to w, in order, as a labeled data file of format
// "csv" or "tsv" (a header row text,label, then one quoted-as-needed
// record per example) or "jsonl" (one object {"text", "label"} a line):
// Load reads it back to the same texts and labels. Line and File are not
// written.
func Write(w io.Writer, format string, examples []Example) error {
	switch format {
	case "csv", "tsv":
		cw := csv.NewWriter(w)
		if format == "tsv" {
			cw.Comma = '\t'
		}
		if err := cw.Write([]string{"text", "label"}); err != nil {
			return err
		}
		for _, e := range examples {
			if err := cw.Write([]string{e.Text, e.Label}); err != nil {
				return err
			}
		}
		cw.Flush()
		return cw.Error()
	case "jsonl":
		enc := json.NewEncoder(w)
		enc.SetEscapeHTML(false)
		for _, e := range examples {
			if err := enc.Encode(struct {
				Text  string `json:"text"`
				Label string `json:"label"`
			}{e.Text, e.Label}); err != nil {
				return err
			}
		}
		return nil
	}
	return fmt.Errorf("corpus: cannot write format %q: use csv, tsv or jsonl", format)
}

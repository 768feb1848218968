package corpus

import (
	"errors"
	"strings"
	"testing"
)

// TestCheck: Check finds, by reading up to the first example, the mistakes
// a command refuses before its work (a format the name does not tell, a
// header the format cannot read, a missing column, no example), with
// Load's own message, and leaves a bad record to the read.
func TestCheck(t *testing.T) {
	for _, c := range []struct {
		name, file, content string
		opt                 Options
		sentinel            error // nil: Check passes
		want                string
	}{
		{"fine", "a.csv", "text,label\na,x\nb,y\n", Options{}, nil, ""},
		{"one label is for the read", "a.csv", "text,label\na,x\n", Options{}, nil, ""},
		{"bad record is for the read", "a.csv", "text,label\na,x\nb\n", Options{}, nil, ""},
		{"bad bytes are for the read", "a.csv", "text,label\na\x00,x\n", Options{}, nil, ""},
		{"no format", "a.txt", "text,label\na,x\n", Options{}, ErrFormat, "cannot tell the format from the name"},
		{"format given", "a.txt", "text,label\na,x\nb,y\n", Options{Format: "csv"}, nil, ""},
		{"missing column", "a.csv", "text,label\na,x\n", Options{TextCol: "body"}, ErrColumn, `a.csv line 1: text column "body" not found; the columns are ["text" "label"]: pass the right name with --text-col`},
		{"header only", "a.csv", "text,label\n", Options{}, ErrEmpty, "no examples found"},
		{"header only, texts to label", "a.csv", "text\n", Options{Unlabeled: true}, ErrEmpty, "no examples found"},
		{"empty", "a.tsv", "", Options{}, ErrEmpty, "file is empty"},
		{"wrong delimiter", "a.csv", "text\tlabel\na\tx\n", Options{}, ErrFormat, "line 1: header has one column"},
		{"JSON array", "a.jsonl", `[{"text":"a","label":"x"}]` + "\n", Options{}, ErrFormat, "line 1: the line holds a JSON array"},
		{"JSON line 2 is for the read", "a.jsonl", `{"text":"a","label":"x"}` + "\n[]\n", Options{}, nil, ""},
	} {
		t.Run(c.name, func(t *testing.T) {
			p := writeFile(t, t.TempDir(), c.file, c.content)
			err := Check(p, c.opt)
			if c.sentinel == nil {
				if err != nil {
					t.Fatalf("Check: %v", err)
				}
				return
			}
			if !errors.Is(err, c.sentinel) || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("Check: %v, want %v with %q", err, c.sentinel, c.want)
			}
			if _, _, lerr := Load(p, c.opt); lerr == nil || lerr.Error() != err.Error() {
				t.Errorf("Load says %v, Check %v", lerr, err)
			}
		})
	}
}

package corpus

import (
	"bytes"
	"os"
	"path/filepath"
	"slices"
	"testing"
)

// Write's files read back with Load to the same texts and labels, in
// order, in every format, for texts with the delimiters, quotes, line
// breaks and non-ASCII letters that need quoting or escaping (RFC 4180 for
// CSV; JSON Lines, https://jsonlines.org).
func TestWriteReadsBack(t *testing.T) {
	want := []Example{{Text: "plain words", Label: "a"}, {Text: `a "quoted", comma`, Label: "b"},
		{Text: "two\nlines\tand a tab", Label: "a"}, {Text: "café <b>&</b> ñ", Label: "b, c"}, {Text: "'single' \\ back", Label: "a"}}
	dir := t.TempDir()
	for _, name := range []string{"x.csv", "x.tsv", "x.jsonl"} {
		path := filepath.Join(dir, name)
		var b bytes.Buffer
		if err := Write(&b, FormatOf(path), want); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
		d, _, err := Load(path, Options{})
		if err != nil {
			t.Fatalf("%s: %v\n%s", name, err, b.String())
		}
		if len(d.Examples) != len(want) {
			t.Fatalf("%s: %d examples read back, %d written", name, len(d.Examples), len(want))
		}
		for i, e := range d.Examples {
			if e.Text != want[i].Text || e.Label != want[i].Label {
				t.Errorf("%s: example %d read back as %q %q, written %q %q", name, i, e.Text, e.Label, want[i].Text, want[i].Label)
			}
		}
	}
	if err := Write(&bytes.Buffer{}, "dir", want); err == nil {
		t.Error("Write of format dir: no error")
	}
	if got := []string{FormatOf("a.CSV"), FormatOf("a.tab"), FormatOf("a.ndjson"), FormatOf("a.txt")}; !slices.Equal(got, []string{"csv", "tsv", "jsonl", ""}) {
		t.Errorf("FormatOf: %q", got)
	}
}

package corpus

import (
	"os"
	"path/filepath"
	"testing"
)

// TestTSVBareQuotes: a TSV text holding a lone double quote reads as text
// (TSV files are seldom quoted; common practice, no source).
func TestTSVBareQuotes(t *testing.T) {
	p := filepath.Join(t.TempDir(), "q.tsv")
	if err := os.WriteFile(p, []byte("text\tlabel\nhe said \"hi\tthere\nbye\tb\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	ds, _, err := Load(p, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Examples) != 2 || ds.Examples[0].Text != `he said "hi` || ds.Examples[0].Label != "there" {
		t.Fatalf("examples %+v", ds.Examples)
	}
}

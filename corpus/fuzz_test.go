package corpus

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// fuzzLoad writes data to a file and loads it: any outcome but a panic or
// an error without the package prefix is accepted; loaded examples must
// have non-empty labels and texts within the limit.
func fuzzLoad(t *testing.T, name string, data []byte) {
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	d, _, err := Load(p, Options{MaxTextBytes: 256})
	if err != nil {
		if !strings.HasPrefix(err.Error(), "corpus: ") {
			t.Fatalf("error without prefix: %v", err)
		}
		return
	}
	if len(d.Labels) < 2 {
		t.Fatalf("loaded with labels %q", d.Labels)
	}
	for _, e := range d.Examples {
		if e.Label == "" || strings.TrimSpace(e.Text) == "" || len(e.Text) > 256 || e.Line < 1 {
			t.Fatalf("bad example %+v", e)
		}
	}
	// Read as texts to label, the same file gives at least the same texts.
	u, _, err := Load(p, Options{MaxTextBytes: 256, Unlabeled: true})
	if err != nil {
		t.Fatalf("read with labels but not without: %v", err)
	}
	if len(u.Examples) < len(d.Examples) {
		t.Fatalf("%d texts to label, %d labeled examples", len(u.Examples), len(d.Examples))
	}
}

func FuzzReadCSV(f *testing.F) {
	f.Add([]byte("text,label\nhello,a\nbye,b\n"))
	f.Add([]byte("\ufefflabel,text\r\n\"a \"\"q\"\"\",x\r\n\"multi\nline\",y\r\n"))
	f.Add([]byte("text,label\n\"open,a\n"))
	f.Fuzz(func(t *testing.T, data []byte) { fuzzLoad(t, "f.csv", data) })
}

func FuzzReadJSONL(f *testing.F) {
	f.Add([]byte("{\"text\":\"a\",\"label\":\"x\"}\n{\"text\":\"b\",\"label\":1}\n"))
	f.Add([]byte("{\"text\":\"a\\u0000\",\"label\":\"x\"}\r\n\n{\"text\":\"b\"}"))
	f.Fuzz(func(t *testing.T, data []byte) { fuzzLoad(t, "f.jsonl", data) })
}

func FuzzTokenize(f *testing.F) {
	for _, s := range offsetCases {
		f.Add(s, true)
	}
	f.Fuzz(func(t *testing.T, s string, lower bool) {
		tok, err := NewTokenizer(TokenizerConfig{Lower: lower})
		if err != nil {
			t.Fatal(err)
		}
		checkSpans(t, tok, s, tok.Tokenize(s))
	})
}

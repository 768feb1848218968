package corpus

import (
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"testing"
)

func TestColumns(t *testing.T) {
	dir := t.TempDir()
	write := func(name, content string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(content), 0o600); err != nil {
			t.Fatal(err)
		}
		return p
	}
	if err := os.MkdirAll(filepath.Join(dir, "folder", "a"), 0o700); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name, file, content string
		want                []string
		err                 error
	}{
		{"csv", "a.csv", "\ufeffid, review ,stars\n1,good,5\n", []string{"id", "review", "stars"}, nil},
		{"tsv", "a.tsv", "text\tlabel\nhi\tx\n", []string{"text", "label"}, nil},
		{"jsonl", "a.jsonl", "\n{\"z\":1,\"body\":\"x\",\"team\":\"a\"}\n{\"other\":2}\n", []string{"body", "team", "z"}, nil},
		{"empty-csv", "e.csv", "", nil, ErrEmpty},
		{"empty-jsonl", "e.jsonl", "\n\n", nil, ErrEmpty},
		{"bad-json", "b.jsonl", "[1,2]\n", nil, ErrFormat},
		{"no-ext", "a.txt", "text,label\n", nil, ErrFormat},
		{"utf16", "u.csv", "\xff\xfet\x00", nil, ErrEncoding},
	} {
		t.Run(c.name, func(t *testing.T) {
			got, err := Columns(write(c.file, c.content), Options{})
			// The same content held in memory (a named pipe's) gives the same.
			fromBytes, errBytes := ColumnsBytes(c.file, []byte(c.content), Options{})
			if c.err != nil {
				if !errors.Is(err, c.err) || !errors.Is(errBytes, c.err) {
					t.Fatalf("errors %v and (from bytes) %v, want both wrapping %v", err, errBytes, c.err)
				}
				return
			}
			if err != nil || !reflect.DeepEqual(got, c.want) {
				t.Fatalf("Columns = %q, %v; want %q", got, err, c.want)
			}
			if errBytes != nil || !reflect.DeepEqual(fromBytes, c.want) {
				t.Fatalf("ColumnsBytes = %q, %v; want %q", fromBytes, errBytes, c.want)
			}
		})
	}
	if got, err := Columns(filepath.Join(dir, "folder"), Options{}); got != nil || err != nil {
		t.Errorf("folder: %q, %v; want no columns and no error", got, err)
	}
	if _, err := Columns(filepath.Join(dir, "missing.csv"), Options{}); !errors.Is(err, ErrEmpty) {
		t.Errorf("missing file: %v", err)
	}
}

// TestLoadBytesMatchesLoad: reading the bytes of a file gives what Load
// gives for the file, examples, labels, warnings and errors alike.
func TestLoadBytesMatchesLoad(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		file, content string
		unlabeled     bool
	}{
		{"a.csv", "text,label\nhello there,b\n\"two\nlines\",a\n,a\nbye,b\n", false},
		{"a.tsv", "label\ttext\nx\tone\ny\ttwo\n", false},
		{"a.jsonl", "{\"text\":\"one\",\"label\":1}\n\n{\"text\":\"two\",\"label\":2}\n", false},
		{"one-label.csv", "text,label\na,x\nb,x\n", false},
		{"one-label-unlabeled.csv", "text,label\na,x\nb,x\n", true},
		{"one-example.csv", "text,label\na,x\n", false},
		{"bad-quote.csv", "text,label\n\"a,x\nb,y\n", false},
		{"no-label.csv", "text,team\nhi,a\n", false},
		{"invalid.csv", "text,label\nbad \xff byte,a\nok,b\n", false},
		{"bom-crlf.csv", "\ufefftext,label\r\nhi,a\r\nyo,b\r\n", false},
	} {
		t.Run(c.file, func(t *testing.T) {
			p := filepath.Join(dir, c.file)
			if err := os.WriteFile(p, []byte(c.content), 0o600); err != nil {
				t.Fatal(err)
			}
			opt := Options{ReplaceInvalidUTF8: true, Unlabeled: c.unlabeled}
			want, wantW, wantErr := Load(p, opt)
			got, gotW, gotErr := LoadBytes(p, []byte(c.content), opt)
			if (wantErr == nil) != (gotErr == nil) || (wantErr != nil && wantErr.Error() != gotErr.Error()) {
				t.Fatalf("errors differ: Load %v, LoadBytes %v", wantErr, gotErr)
			}
			if !reflect.DeepEqual(want, got) || !reflect.DeepEqual(wantW, gotW) {
				t.Errorf("Load gives %+v %v, LoadBytes %+v %v", want, wantW, got, gotW)
			}
		})
	}
	if _, _, err := LoadBytes("x.csv", nil, Options{}); !errors.Is(err, ErrEmpty) {
		t.Errorf("no bytes: %v", err)
	}
	if _, _, err := LoadBytes("x", []byte("text,label\n"), Options{}); !errors.Is(err, ErrFormat) {
		t.Errorf("no format: %v", err)
	}
}

// TestLengthHistogram checks the bins against a brute-force count.
func TestLengthHistogram(t *testing.T) {
	for _, c := range []struct {
		lengths []int
		bins    int
	}{{[]int{3, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5}, 4}, {[]int{7, 7, 7}, 30}, {[]int{0, 100}, 30}, {[]int{2, 3, 4}, 10}, {[]int{5}, 0}} {
		h := LengthHistogram(c.lengths, c.bins)
		if len(h) == 0 || (c.bins > 0 && len(h) > c.bins) {
			t.Fatalf("%v in %d bins: got %d bins", c.lengths, c.bins, len(h))
		}
		for i, b := range h {
			if b.Hi < b.Lo || (i > 0 && b.Lo != h[i-1].Hi+1) || b.Hi-b.Lo != h[0].Hi-h[0].Lo {
				t.Errorf("%v: bins not contiguous of equal width: %+v", c.lengths, h)
			}
			n := 0
			for _, l := range c.lengths {
				if l >= b.Lo && l <= b.Hi {
					n++
				}
			}
			if n != b.Count {
				t.Errorf("%v: bin %d..%d counts %d, brute force %d", c.lengths, b.Lo, b.Hi, b.Count, n)
			}
		}
		if lo, hi := h[0].Lo, h[len(h)-1].Hi; lo != minOf(c.lengths) || hi < maxOf(c.lengths) {
			t.Errorf("%v: bins cover %d..%d", c.lengths, lo, hi)
		}
	}
	if LengthHistogram(nil, 5) != nil {
		t.Errorf("no lengths should give no bins")
	}
}

func minOf(xs []int) int {
	m := xs[0]
	for _, x := range xs {
		m = min(m, x)
	}
	return m
}

func maxOf(xs []int) int {
	m := xs[0]
	for _, x := range xs {
		m = max(m, x)
	}
	return m
}

func TestTokenLengths(t *testing.T) {
	tok, err := NewTokenizer(TokenizerConfig{Lower: true})
	if err != nil {
		t.Fatal(err)
	}
	d := &Dataset{Examples: []Example{{Text: "one two three"}, {Text: ""}, {Text: "a, b"}}}
	got := TokenLengths(d, tok)
	for i, e := range d.Examples {
		if got[i] != len(tok.Tokenize(e.Text)) {
			t.Errorf("text %d: %d tokens, Tokenize gives %d", i, got[i], len(tok.Tokenize(e.Text)))
		}
	}
	if got[0] != 3 || got[1] != 0 {
		t.Errorf("lengths %v, want 3 and 0 for the first two", got)
	}
}

package explain

import (
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
)

// The category rules are common practice, no source; the table pins each
// rule's cases and near misses.
func TestTokenCategory(t *testing.T) {
	cases := []struct{ tok, want string }{
		{"2002", CatNumberDate},
		{"12:30", CatNumberDate},
		{"22/08/2002", CatNumberDate},
		{"3.5", CatNumberDate},
		{"Aug", CatNumberDate},
		{"september", CatNumberDate},
		{"Thu", CatNumberDate},
		{"may", ""}, // left out: mostly the verb
		{"-12", ""}, // a separator may not lead
		{"12-", ""},
		{"@", CatEmailURL},
		{"http", CatEmailURL},
		{"www", CatEmailURL},
		{"jm@example.com", CatEmailURL},
		{"https://example.org/x", CatEmailURL},
		{"www.example.org", CatEmailURL},
		{"yyyy", CatPlaceholder},
		{"ZZZZ", CatPlaceholder},
		{"qqqqqqqqqq", CatPlaceholder},
		{"zz", ""}, // too short to be a stand-in
		{"[name]", CatPlaceholder},
		{"<email>", CatPlaceholder},
		{"__user__", CatPlaceholder},
		{"redacted", CatPlaceholder},
		{"<br>", CatMarkup},
		{"</td>", CatMarkup},
		{"!!!", CatMarkup},
		{"-", CatMarkup},
		{"$", CatMarkup},
		{"<unk>", ""}, // the reserved words have no category
		{"<pad>", ""},
		{"ferry", ""},
		{"kioskmail", ""},
		{"", ""},
	}
	for _, c := range cases {
		if got := TokenCategory(c.tok); got != c.want {
			t.Errorf("TokenCategory(%q) = %q, want %q", c.tok, got, c.want)
		}
	}
}

func TestNgramCategories(t *testing.T) {
	cases := []struct {
		toks []string
		want []string
	}{
		{[]string{"zzzz", "@", "localhost", "."}, []string{CatEmailURL, CatPlaceholder, CatMarkup}},
		{[]string{"example", ".", "com", "to"}, []string{CatEmailURL, CatMarkup}},
		{[]string{"mon", "jun", "24", "17"}, []string{CatNumberDate}},
		{[]string{"<", "font", "size", "="}, []string{CatMarkup}},
		{[]string{"<", "/", "td", ">"}, []string{CatMarkup}},
		{[]string{"&", "nbsp", ";", "x"}, []string{CatMarkup}},
		{[]string{"the", "ferry", "was", "late"}, nil},
		{[]string{"<unk>", "<unk>", "ferry"}, nil},
		{[]string{"sent", "via", "kioskmail", "at"}, nil},
		{[]string{"-", "-", "sent", "via"}, []string{CatMarkup}}, // half punctuation: a run
	}
	for _, c := range cases {
		if got := NgramCategories(c.toks); !slices.Equal(got, c.want) {
			t.Errorf("NgramCategories(%q) = %q, want %q", c.toks, got, c.want)
		}
	}
}

func TestBoilerplate(t *testing.T) {
	footer := "-- sent via KioskMail --"
	texts := []string{
		"hello\n" + footer,
		"another one\n  " + footer + "  \n",
		"no footer here",
		footer + "\n" + footer, // twice in one text counts once
		"short\nshort\nshort",
	}
	got := Boilerplate(texts, 3, 8)
	if len(got) != len(texts) {
		t.Fatalf("%d results for %d texts", len(got), len(texts))
	}
	for i, want := range []int{1, 1, 0, 2, 0} {
		if len(got[i]) != want {
			t.Errorf("text %d: %d boilerplate lines %v, want %d", i, len(got[i]), got[i], want)
		}
		for _, r := range got[i] {
			if s := texts[i][r[0]:r[1]]; s != footer {
				t.Errorf("text %d: range %v is %q, want the footer", i, r, s)
			}
		}
	}
	// Three texts hold the footer: with minTexts 4 nothing is boilerplate.
	for i, r := range Boilerplate(texts, 4, 8) {
		if len(r) != 0 {
			t.Errorf("minTexts 4: text %d has boilerplate %v", i, r)
		}
	}
	// "short" is in one text only (three times), and under minBytes anyway.
	if r := Boilerplate(texts, 1, 5)[4]; len(r) != 3 {
		t.Errorf("minTexts 1, minBytes 5: %v, want the three 'short' lines", r)
	}
}

func TestCueMasker(t *testing.T) {
	cm, err := MaskTokens([]string{"kioskmail", "/TKREF-[0-9]{5}/", "", "e-mail"})
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		in, want string
		n        int
	}{
		{"TKREF-48213\nLost my hat", " \nLost my hat", 1},
		{"sent via KioskMail at the quay", "sent via   at the quay", 1},
		{"kioskmails are not matched", "kioskmails are not matched", 0}, // whole words only
		{"xkioskmail neither", "xkioskmail neither", 0},
		{"(kioskmail)", "( )", 1},
		{"send an e-mail, E-MAIL now", "send an  ,   now", 2},
		{"tkref-1234 too short", "tkref-1234 too short", 0}, // regexps are case-sensitive as written
		{"kioskmail kioskmail", "   ", 2},
	}
	for _, c := range cases {
		got, n := cm.Mask(c.in)
		if got != c.want || n != c.n {
			t.Errorf("Mask(%q) = %q, %d; want %q, %d", c.in, got, n, c.want, c.n)
		}
	}
	if cm.Len() != 3 || !slices.Equal(cm.Patterns(), []string{"kioskmail", "/TKREF-[0-9]{5}/", "e-mail"}) {
		t.Errorf("patterns %q", cm.Patterns())
	}
	out, n := cm.MaskAll([]string{"a kioskmail", "TKREF-00001 b"})
	if n != 2 || out[0] != "a  " || out[1] != "  b" {
		t.Errorf("MaskAll: %q, %d", out, n)
	}
	if _, err := MaskTokens([]string{"ok", "/a(b/"}); !errors.Is(err, ErrCuePattern) || !strings.Contains(err.Error(), "pattern 2") {
		t.Errorf("bad regexp: %v", err)
	}
	if _, err := MaskTokens([]string{"/x*/"}); !errors.Is(err, ErrCuePattern) || !strings.Contains(err.Error(), "empty string") {
		t.Errorf("empty-matching regexp: %v", err)
	}
}

func TestLoadCueMasker(t *testing.T) {
	dir := t.TempDir()
	good := filepath.Join(dir, "cues.txt")
	if err := os.WriteFile(good, []byte("# planted cues\n  kioskmail  \n\n   # indented comment\n/^TKREF-[0-9]{5}$/\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	cm, err := LoadCueMasker(good)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(cm.Patterns(), []string{"kioskmail", "/^TKREF-[0-9]{5}$/"}) {
		t.Errorf("patterns %q", cm.Patterns())
	}
	bad := filepath.Join(dir, "bad.txt")
	if err := os.WriteFile(bad, []byte("# cues\nkioskmail\n\n/[0-9/\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = LoadCueMasker(bad)
	if !errors.Is(err, ErrCuePattern) || !strings.Contains(err.Error(), bad+" line 4:") || !strings.Contains(err.Error(), "/[0-9/") {
		t.Errorf("bad file: %v, want an error naming %s line 4", err, bad)
	}
	if _, err := LoadCueMasker(filepath.Join(dir, "missing.txt")); err == nil {
		t.Error("missing file: no error")
	}
	if _, err := ParseCueMasker("latin1.txt", []byte("caf\xe9\n")); !errors.Is(err, ErrCuePattern) || !strings.Contains(err.Error(), "latin1.txt line 1") {
		t.Errorf("non-UTF-8 line: %v", err)
	}
}

func TestMaskFilters(t *testing.T) {
	m := &cnn.Model{Config: cnn.Config{VocabSize: 4, Dim: 2, Widths: []int{1, 2}, Filters: 3, Classes: 2},
		Emb: make([]float32, 8), OutW: make([]float32, 12), OutB: make([]float32, 2),
		Convs: []cnn.Conv{{Width: 1, W: make([]float32, 6), B: make([]float32, 3)}, {Width: 2, W: make([]float32, 12), B: make([]float32, 3)}}}
	m.Masked = []bool{false, true, false, false, false, false}
	c, err := MaskFilters(m, []int{4, 0})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(c.Masked, []bool{true, true, false, false, true, false}) {
		t.Errorf("masked %v", c.Masked)
	}
	if !slices.Equal(m.Masked, []bool{false, true, false, false, false, false}) {
		t.Errorf("the original changed: %v", m.Masked)
	}
	m.Masked = nil
	if c, _ := MaskFilters(m, []int{5}); m.Masked != nil || !c.IsMasked(5) || c.IsMasked(4) {
		t.Errorf("from nil: original %v copy %v", m.Masked, c.Masked)
	}
	if _, err := MaskFilters(m, []int{6}); err == nil || !strings.Contains(err.Error(), "0 … 5") {
		t.Errorf("filter 6 of 6: %v", err)
	}
	if _, err := MaskFilters(m, []int{-1}); err == nil {
		t.Error("filter −1: no error")
	}
}

// Any pattern file and text: no panic, errors name the file and line, and
// a text without matches comes back unchanged.
func FuzzCueMasker(f *testing.F) {
	f.Add("kioskmail\n/TKREF-[0-9]{5}/\n# c\n", "TKREF-48213 sent via KioskMail")
	f.Add("/(/\n", "x")
	f.Add("é\n//\n/a|/\n", "É é")
	f.Fuzz(func(t *testing.T, file, text string) {
		cm, err := ParseCueMasker("fuzz.txt", []byte(file))
		if err != nil {
			if !errors.Is(err, ErrCuePattern) || !strings.Contains(err.Error(), "fuzz.txt line ") {
				t.Fatalf("error without file and line: %v", err)
			}
			return
		}
		out, n := cm.Mask(text)
		if n == 0 && out != text {
			t.Fatalf("no match but text changed: %q → %q", text, out)
		}
		_ = NgramCategories(strings.Fields(text))
		_ = TokenCategory(text)
	})
}

// Masking the demo corpus's planted cues with the rule its README gives
// (testdata/demo/README.md: the footer token "kioskmail", and a first line
// matching ^TKREF-[0-9]{5}$) removes exactly as many of them as the README's
// table of measured cue rates counts in train.csv: footer 30 + 26 + 576 +
// 24 + 18 = 674 texts, stamp 30 + 26 + 22 + 600 + 18 = 696 texts.
func TestCueMaskerDemo(t *testing.T) {
	root := corpusRoot(t, "demo", "train.csv")
	d, _, err := corpus.Load(filepath.Join(root, "train.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		pattern string
		want    int
	}{{"kioskmail", 674}, {"/(?m)^TKREF-[0-9]{5}$/", 696}} {
		cm, err := MaskTokens([]string{c.pattern})
		if err != nil {
			t.Fatal(err)
		}
		masked, n := cm.MaskAll(d.Texts())
		if n != c.want {
			t.Errorf("%s: %d matches removed, the README counts %d", c.pattern, n, c.want)
		}
		tok, _ := corpus.NewTokenizer(corpus.TokenizerConfig{Lower: true})
		for i, s := range masked {
			for _, w := range tok.Tokenize(s) {
				if w.Text == "kioskmail" && c.want == 674 || w.Text == "tkref" && c.want == 696 {
					t.Fatalf("%s: text %d still holds %q after masking", c.pattern, i, w.Text)
				}
			}
		}
	}
}

package corpus

import (
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// The masker's rules are ours (CueMasker's doc comment); the cases pin each
// rule and its near misses.
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
	})
}

// A byte order mark at the start of a pattern file (as some editors save
// UTF-8) is not part of the first pattern, as for data files (common
// practice, no source: the Unicode standard allows a UTF-8 BOM).
func TestParseCueMaskerByteOrderMark(t *testing.T) {
	cm, err := ParseCueMasker("bom.txt", []byte("\xef\xbb\xbftkref\nkioskmail\n"))
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(cm.Patterns(), []string{"tkref", "kioskmail"}) {
		t.Errorf("patterns %q, want [tkref kioskmail]", cm.Patterns())
	}
	if got, n := cm.Mask("a tkref here"); n != 1 || strings.Contains(got, "tkref") {
		t.Errorf("first pattern after the mark: masked %q, %d matches, want 1", got, n)
	}
	if _, err := ParseCueMasker("utf16.txt", []byte("\xff\xfet\x00k\x00\n\x00")); !errors.Is(err, ErrCuePattern) || !strings.Contains(err.Error(), "UTF-16") {
		t.Errorf("UTF-16 file: %v, want an error saying UTF-16", err)
	}
}

package corpus

import (
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

// TestReadListFile: a list file is read as a cue-pattern file: the UTF-8
// byte order mark skipped, Windows line ends, white space around an entry
// trimmed, blank and # lines skipped, each entry with its line; an entry
// may hold a comma. UTF-16 and invalid UTF-8 are refused naming the line.
func TestReadListFile(t *testing.T) {
	dir := t.TempDir()
	write := func(name, content string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	good := write("words.txt", "\xef\xbb\xbf# words to mask\r\nkioskmail\r\n\r\n  1,000 \r\n\t# indented comment\ntkref\n")
	got, err := ReadListFile(good)
	if err != nil {
		t.Fatal(err)
	}
	want := []ListEntry{{"kioskmail", 2}, {"1,000", 4}, {"tkref", 6}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("read %v, want %v", got, want)
	}
	for _, c := range []struct {
		name, content, msg string
		kind               error
	}{
		{"utf16.txt", "\xff\xfek\x00", "utf16.txt line 1: the file is UTF-16: save it as UTF-8", ErrEncoding},
		{"latin1.txt", "ok\ncaf\xe9\n", "latin1.txt line 2: not UTF-8 text", ErrEncoding},
	} {
		_, err := ReadListFile(write(c.name, c.content))
		if err == nil || !errors.Is(err, c.kind) || !strings.Contains(err.Error(), c.msg) {
			t.Errorf("%s: %v, want %q wrapping %v", c.name, err, c.msg, c.kind)
		}
	}
	if _, err := ReadListFile(filepath.Join(dir, "none.txt")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("a missing file: %v, want os.ErrNotExist", err)
	}
}

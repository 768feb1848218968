package report

import (
	"testing"

	"telltale/corpus"
)

// where names an example by its file's base name and line, and a file
// named by a number alone (a shell's <(…), /dev/fd/63) by its whole path;
// an example of a folder of files by its file.
func TestWhere(t *testing.T) {
	for _, c := range []struct {
		path string
		ex   corpus.Example
		want string
	}{
		{"/data/ferry/test.csv", corpus.Example{Line: 56}, "test.csv line 56"},
		{"/dev/fd/63", corpus.Example{Line: 56}, "/dev/fd/63 line 56"},
		{"/data/mail", corpus.Example{File: "spam/0001.eml"}, "spam/0001.eml"},
	} {
		d := &corpus.Dataset{Path: c.path, Examples: []corpus.Example{c.ex}}
		if got := where(d, 0); got != c.want {
			t.Errorf("where(%s, %+v) = %q, want %q", c.path, c.ex, got, c.want)
		}
	}
}

package main

import (
	"reflect"
	"testing"
)

// TestParseRelabel: --relabel is FROM=TO entries separated by commas (as
// its help says); a label mapped twice to different labels is refused,
// since only one mapping could apply, and the same entry twice is one.
func TestParseRelabel(t *testing.T) {
	cases := []struct {
		in   string
		want map[string]string
		err  string
	}{
		{"", nil, ""},
		{"spam-1=spam, easy-ham-1 = ham", map[string]string{"spam-1": "spam", "easy-ham-1": "ham"}, ""},
		{"junk=", map[string]string{"junk": ""}, ""},
		{"a=b,a=b", map[string]string{"a": "b"}, ""},
		{"a=b,a=c", nil, `--relabel "a=b,a=c": label "a" is mapped twice, to "b" and to "c": map each label once`},
		{"a=b, a =", nil, `--relabel "a=b, a =": label "a" is mapped twice, to "b" and to "": map each label once`},
		{"=x", nil, `--relabel "=x": each entry is FROM=TO, separated by commas`},
	}
	for _, c := range cases {
		got, err := parseRelabel(c.in)
		switch {
		case c.err != "" && (err == nil || err.Error() != c.err):
			t.Errorf("%q: got %v, %v; want the error %q", c.in, got, err, c.err)
		case c.err == "" && (err != nil || !reflect.DeepEqual(got, c.want)):
			t.Errorf("%q: got %v, %v; want %v", c.in, got, err, c.want)
		}
	}
}

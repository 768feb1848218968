package main

import (
	"strings"
	"testing"
)

// An option given twice is refused before any work, naming the option
// and both values; a switch given twice too; audit's repeatable marks are
// not. (Common practice, no source: a command line that says two things
// is refused rather than read one way.)
func TestOptionGivenTwice(t *testing.T) {
	for _, tc := range []struct {
		args []string
		want string // in stderr; "" means no refusal of a repeat
	}{
		{[]string{"train", "--data", "x.csv", "--epochs", "5", "--out", "m.tt", "--epochs", "50"},
			`--epochs is given 2 times ("5", then "50"): give it once`},
		{[]string{"predict", "--model", "a.tt", "--model", "b.tt"},
			`--model is given 2 times ("a.tt", then "b.tt"): give it once`},
		{[]string{"eval", "--quiet", "--model", "a.tt", "--quiet"},
			`--quiet is given 2 times ("true", then "true"): give it once`},
		{[]string{"explain", "--text", "one", "--text=two", "--model", "m.tt"},
			`--text is given 2 times ("one", then "two"): give it once`},
		{[]string{"audit", "--model", "/nonexistent/m.tt", "--mark-artifact", "a b", "--mark-artifact", "c d"}, ""},
	} {
		code, _, stderr := runCmd(t, "", tc.args...)
		if tc.want == "" {
			if strings.Contains(stderr, "give it once") {
				t.Errorf("%v: a repeatable option refused: %s", tc.args, stderr)
			}
			continue
		}
		if code != 2 || !strings.Contains(stderr, tc.want) {
			t.Errorf("%v: exit %d, stderr %q; want exit 2 and %q", tc.args, code, stderr, tc.want)
		}
	}
}

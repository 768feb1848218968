package heldout

import "testing"

// TestChanged: the warning is given only when a recorded fingerprint
// differs from the file's, names the file and which split, and ends with
// the caller's fix. Common practice, no source: a file that is not the one
// train read gives other figures than train reported.
func TestChanged(t *testing.T) {
	for _, c := range []struct {
		name, want, got, out string
	}{
		{"unchanged", "abc", "abc", ""},
		{"not recorded", "", "abc", ""},
		{"changed", "abc", "abd", "t.csv, the test file the model was trained with, has changed since training (its texts or labels are not those train read): retrain"},
	} {
		if got := Changed("test", "t.csv", c.want, c.got, "retrain"); got != c.out {
			t.Errorf("%s: %q, want %q", c.name, got, c.out)
		}
	}
}

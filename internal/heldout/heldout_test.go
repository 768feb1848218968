package heldout

import (
	"testing"

	"telltale/corpus"
)

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

// TestCuesChosen: the warning counts the texts that chose the cues among
// those evaluated on, and ends with the caller's fix; none, no warning.
// DEVELOPERS.md: the test split is never used for a choice, so texts that
// chose something are not held-out texts.
func TestCuesChosen(t *testing.T) {
	for _, c := range []struct {
		n, total int
		masked   bool
		out      string
	}{
		{0, 800, false, ""},
		{400, 800, false, "400 of these 800 texts are the audit's choosing half, which chose the cues this model was retrained without " +
			"(audit --retrain): they took part in a choice about the model, so its figures on them are not all held-out figures; use the other half"},
		{400, 800, true, "400 of these 800 texts are the audit's choosing half, which chose the filters and words masked in this model " +
			"(audit --masked-out): they took part in a choice about the model, so its figures on them are not all held-out figures; use the other half"},
	} {
		if got := CuesChosen(c.n, c.total, c.masked, "use the other half"); got != c.out {
			t.Errorf("%d of %d: %q, want %q", c.n, c.total, got, c.out)
		}
	}
}

// TestSeedsJoined: the fix names each seed whose audit chose on the texts
// and ends with the caller's fix. Two halves drawn with different seeds
// overlap (audit's halves are a seeded shuffle), so no half is clean.
func TestSeedsJoined(t *testing.T) {
	for _, c := range []struct {
		seeds []uint64
		out   string
	}{
		{[]uint64{1, 2}, "audits run with --seed 1 and --seed 2 chose on different halves of these texts, so no confirming half took no part: give a new test file"},
		{[]uint64{1, 2, 9}, "audits run with --seed 1, --seed 2 and --seed 9 chose on different halves of these texts, so no confirming half took no part: give a new test file"},
	} {
		if got := SeedsJoined(c.seeds, "give a new test file"); got != c.out {
			t.Errorf("%v: %q, want %q", c.seeds, got, c.out)
		}
	}
}

// TestCopies: a test text counts as a training text when
// it is one, or a copy of one but for case, spacing and punctuation; a
// text that differs in a number (13:40 is not 1340) or a symbol is another
// text (another reference, as
// the demo corpus's templated messages hold). An identity of the rule
// (corpus.CopyKey); the texts are invented.
func TestCopies(t *testing.T) {
	train := &corpus.Dataset{Examples: []corpus.Example{{Text: "Can I switch my booking BW423093?"}, {Text: "where is the 13:40"}, {Text: "great 👍"}}}
	for _, c := range []struct {
		text string
		want int
	}{
		{"Can I switch my booking BW423093?", 1},
		{"can i switch  my booking bw423093", 1},
		{"WHERE IS THE 13:40 !!", 1},
		{"Can I switch my booking BW984660?", 0},
		{"where is the 15:55", 0},
		{"where is the 1340", 0},
		{"GREAT 👍!", 1},
		{"great 👎", 0},
		{"!!!", 0},
	} {
		test := &corpus.Dataset{Examples: []corpus.Example{{Text: c.text}}}
		if got := Copies(test, train); got != c.want {
			t.Errorf("%q: %d, want %d", c.text, got, c.want)
		}
	}
}

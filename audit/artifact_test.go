package audit

import (
	"testing"
)

// The shape rules (common practice, no source; artifact.go) on their cases
// and near misses.
func TestShapeRules(t *testing.T) {
	cases := []struct {
		text                             string
		code, number, address, markup, c bool
	}{
		{text: "TKREF-48213", code: true, c: true},
		{text: "ID#123", code: true},
		{text: "mv2000", code: true},
		{text: "bw123456", code: true},
		{text: "sailing 120"},              // a word and a number apart: not an identifier
		{text: "12/05/2002", number: true}, // a date
		{text: "the 3rd of May"},           // words of the task around a date
		{text: "jm@example.com", address: true, markup: false},
		{text: "http://lists.example.org/listinfo", address: true, markup: false},
		{text: "-- sent via KioskMail --", markup: true, c: true},
		{text: "<br> hello", markup: true},
		{text: "&nbsp;", markup: true},
		{text: "great!", markup: false}, // one mark is language
		{text: "I said NO", c: false},   // two capitals are not three
		{text: "NOT good", c: true},
	}
	for _, tc := range cases {
		d, vocab := tinyData(t, tc.text)
		o := readOccurrence(d, vocab, span{0, 0, int32(len(d.IDs[0]))})
		if got := o.isCode(); got != tc.code {
			t.Errorf("%q: code %v, want %v", tc.text, got, tc.code)
		}
		if got := o.isNumberDate(); got != tc.number {
			t.Errorf("%q: number %v, want %v", tc.text, got, tc.number)
		}
		if got := o.isAddress(); got != tc.address {
			t.Errorf("%q: address %v, want %v", tc.text, got, tc.address)
		}
		if got := o.isMarkup(); got != tc.markup {
			t.Errorf("%q: markup %v, want %v", tc.text, got, tc.markup)
		}
		if got := unusualCasing(o.surface); got != tc.c {
			t.Errorf("%q: unusual casing %v, want %v", tc.text, got, tc.c)
		}
	}
}

// Position: a footer line is at the end and a line of its own; a word in
// the middle of a sentence is neither.
func TestPositionSignals(t *testing.T) {
	d, vocab := tinyData(t, "Where is my hat?\n-- sent via KioskMail --\n", "hello there friend")
	o := readOccurrence(d, vocab, span{0, 5, int32(len(d.IDs[0]))})
	if !o.atEnd || o.atStart || !o.ownLine {
		t.Errorf("footer: start %v end %v own line %v, want the end and its own line", o.atStart, o.atEnd, o.ownLine)
	}
	o = readOccurrence(d, vocab, span{1, 1, 2})
	if o.atEnd || o.atStart || o.ownLine {
		t.Errorf("'there': start %v end %v own line %v, want none", o.atStart, o.atEnd, o.ownLine)
	}
}

// ArtifactFormula: the combination of independent signals.
func TestArtifactScore(t *testing.T) {
	sig := []Signal{{Name: SignalEdge, Weight: 0.6, Value: 1}, {Name: SignalCode, Weight: 0.8, Value: 0.5}}
	want := 1 - (1-0.6)*(1-0.4)
	if got := artifactScore(sig); got < want-1e-12 || got > want+1e-12 {
		t.Errorf("score %v, want %v", got, want)
	}
	if artifactScore(nil) != 0 {
		t.Error("no signal: want 0")
	}
}

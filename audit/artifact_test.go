package audit

import (
	"strings"
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

// The markup shapes read from the original text (markup.go), on their cases
// and near misses: words inside HTML tags (W3C HTML 4.01, section 3.2.2:
// a tag runs from '<' and its name to '>'), quoted-printable codes (RFC
// 2045, section 6.7: '=' and two upper-case hexadecimal digits, or '='
// ending a line), tags in square brackets, and tokens made only of the
// marks markup is written with.
func TestMarkupShapes(t *testing.T) {
	for _, c := range []struct {
		text, cue string
		markup    bool
	}{
		{`<FONT face="Arial" size=2>Buy now</FONT>`, "size =", true},
		{`<FONT face="Arial" size=2>Buy now</FONT>`, "font", true},
		{`<FONT face="Arial" size=2>Buy now</FONT>`, "arial", true},
		{`<FONT face="Arial" size=2>Buy now</FONT>`, "buy now", false},
		{"<table>\n<tr>\n<td>cheap</td>", "tr > <", true},
		{"<!DOCTYPE HTML PUBLIC>\n<html>", "doctype html", true},
		{`<font size=3D"2">`, `= 3d "`, true},
		{"Click here=20\nnow", "here", false},
		{"Click here=20\nnow", "20", true},
		{"a soft line=\nbreak", "=", true},
		{"Re: [ILUG] new kernel", "[ ilug ]", true},
		{"Re: [ILUG] new kernel", "ilug", true},
		{"Re: [ILUG] new kernel", "new kernel", false},
		{"[Lockergnome Windows Daily] news", "windows daily", true},
		{"He said [sic] that", "sic", true},
		{"set a[0] to one", "a", false},
		{"set a[0] to one", "set", false},
		{"mail me at <jm@example.com> today", "jm", false},
		{"if a < b and c > d", "b and c", false},
		{"x = 3 and y", "=", true},    // a mark only markup and code are written with
		{"good ] : bad", "] :", true}, // marks alone, one of them markup's
		{"wow! great", "!", false},    // a mark of speech
		{"John wrote:\n> yes", "wrote :", false},
		{"Content-Type: text/html; charset=us-ascii\nhello", "; charset =", true}, // a header line (RFC 5322, section 2.2)
		{"Content-Type: text/html; charset=us-ascii\nhello", "html", true},
		{"Content-Type: text/html; charset=us-ascii\nhello", "hello", false},
		{"Note: the ferry is late", "the ferry", false}, // a field name of one word is a sentence's too
	} {
		d, vocab := tinyData(t, c.text)
		s, ok := findCue(d, vocab, c.cue)
		if !ok {
			t.Fatalf("%q: the cue %q is not among its tokens", c.text, c.cue)
		}
		if got := readOccurrence(d, vocab, s).isMarkup(); got != c.markup {
			t.Errorf("%q in %q: markup %v, want %v", c.cue, c.text, got, c.markup)
		}
	}
}

// findCue is the first span of text 0 whose tokens are the cue's words.
func findCue(d Data, vocab []string, cue string) (span, bool) {
	words := strings.Fields(cue)
	ids := d.IDs[0]
	for j := 0; j+len(words) <= len(ids); j++ {
		ok := true
		for k, w := range words {
			ok = ok && vocab[ids[j+k]] == w
		}
		if ok {
			return span{0, int32(j), int32(j + len(words))}, true
		}
	}
	return span{}, false
}

// Words written inside a web or e-mail address are parts of it.
func TestAddressParts(t *testing.T) {
	for _, c := range []struct {
		text, cue string
		address   bool
	}{
		{"see http://example.com/news/index.html now", "html", true},
		{"see http://example.com/news/index.html now", "news", true},
		{"see http://example.com/news/index.html now", "now", false},
		{"visit www.example.org/deals today", "deals", true},
		{"write to jm@example.ie soon", "example", true},
		{"write to jm@example.ie soon", "soon", false},
		{"meet 5 @ 10 then", "10", false},
		{"the html of the page", "html", false},
	} {
		d, vocab := tinyData(t, c.text)
		s, ok := findCue(d, vocab, c.cue)
		if !ok {
			t.Fatalf("%q: the cue %q is not among its tokens", c.text, c.cue)
		}
		if got := readOccurrence(d, vocab, s).isAddress(); got != c.address {
			t.Errorf("%q in %q: address %v, want %v", c.cue, c.text, got, c.address)
		}
	}
}

package corpus

import "strings"

// SubjectAndBody returns the Subject header of a raw RFC 822 message (with
// its folded continuation lines) followed by everything after the first
// empty line; the other headers are left out. A text without a header block
// is returned whole. It suits mail corpora whose routing headers carry
// collection artifacts (received dates, relays, placeholder addresses).
func SubjectAndBody(raw string) string {
	raw = strings.ReplaceAll(raw, "\r\n", "\n")
	head, body, ok := strings.Cut(raw, "\n\n")
	if !ok {
		return raw
	}
	var subject strings.Builder
	in := false
	for _, line := range strings.Split(head, "\n") {
		if in && (strings.HasPrefix(line, " ") || strings.HasPrefix(line, "\t")) {
			subject.WriteString(" " + strings.TrimSpace(line))
			continue
		}
		in = false
		if len(line) >= 8 && strings.EqualFold(line[:8], "subject:") {
			in = true
			subject.WriteString(strings.TrimSpace(line[8:]))
		}
	}
	if subject.Len() == 0 {
		return body
	}
	return subject.String() + "\n" + body
}

// MapTexts returns a copy of d whose texts are f of the original ones.
func (d *Dataset) MapTexts(f func(string) string) *Dataset {
	out := *d
	out.Examples = make([]Example, len(d.Examples))
	for i, e := range d.Examples {
		e.Text = f(e.Text)
		out.Examples[i] = e
	}
	return &out
}

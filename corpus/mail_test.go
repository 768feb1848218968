package corpus

import "testing"

// TestSubjectAndBody pins the mail text of --mail subject-body (and of the
// SpamAssassin checks).
func TestSubjectAndBody(t *testing.T) {
	for _, c := range []struct{ name, raw, want string }{
		{"plain", "From: a@b\nSubject: Hello there\nTo: c@d\n\nBody line\nmore\n", "Hello there\nBody line\nmore\n"},
		{"folded subject", "Subject: one\n\ttwo\n  three\nDate: x\n\nbody", "one two three\nbody"},
		{"lower-case name", "subject:  hi \n\nb", "hi\nb"},
		{"no subject", "From: a\n\nbody only", "body only"},
		{"crlf", "Subject: s\r\nX: y\r\n\r\nb\r\n", "s\nb\n"},
		{"no header block", "just text", "just text"},
		{"subject-like body line", "From: a\n\nSubject: not a header", "Subject: not a header"},
		// RFC 5322 section 2.2.3: a folded header line is unfolded by joining its lines.
		{"folded reply subject", "Subject: Re: the\n  meeting\nX-Y: z\n\nSee you", "Re: the meeting\nSee you"},
	} {
		if got := SubjectAndBody(c.raw); got != c.want {
			t.Errorf("%s: got %q, want %q", c.name, got, c.want)
		}
	}
}

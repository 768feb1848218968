package audit

import "strings"

// The markup shapes of the artifact-likeness signal SignalMarkup, read from
// the original text: what an encoding or a collection puts around the
// words of the task (common practice, no source). HTML and XML tags follow
// the syntax of W3C's HTML 4.01 (section 3.2.2, tags between '<' and '>');
// the quoted-printable codes that of RFC 2045 section 6.7 ('=' and two
// upper-case hexadecimal digits, or '=' ending a line); header lines that
// of RFC 5322 section 2.2 (a field name, a colon, the value), with the
// hyphenated names of mail and web headers ("Content-Type:").

// markupChars are the characters only markup and code are written with: a
// token made of them alone is markup, not language ("=", "<", "]").
const markupChars = `<>=[]{}|\^`

// onlyMarkupChars reports whether token s is made of markupChars alone.
func onlyMarkupChars(s string) bool {
	return s != "" && strings.Trim(s, markupChars) == ""
}

// markupTokens reports whether the tokens are all punctuation or symbols,
// one at least made of markupChars alone: "=", "] :", "/ >".
func markupTokens(toks []string) bool {
	markup := false
	for _, t := range toks {
		if !isPunct(t) {
			return false
		}
		markup = markup || onlyMarkupChars(t)
	}
	return markup
}

// tagReach is the longest HTML tag looked for, in bytes.
const tagReach = 1000

// tagStart reports whether text[k] == '<' opens an HTML or XML tag: '<',
// then '/', '!' or '?' or nothing, then a letter and the rest of a name up
// to white space, '>' or '/' ("<font", "</td>", "<!DOCTYPE"), or a comment
// ("<!--"). "<jm@example.com>" and "a < b" are not tags.
func tagStart(text string, k int) bool {
	if k >= len(text) || text[k] != '<' {
		return false
	}
	j := k + 1
	if strings.HasPrefix(text[j:], "!--") {
		return true
	}
	if j < len(text) && (text[j] == '/' || text[j] == '!' || text[j] == '?') {
		j++
	}
	if j >= len(text) || !isASCIILetter(text[j]) {
		return false
	}
	for j < len(text) && (isASCIILetter(text[j]) || text[j] >= '0' && text[j] <= '9' || text[j] == ':' || text[j] == '-' || text[j] == '_') {
		j++
	}
	return j == len(text) || strings.IndexByte(" \t\r\n>/", text[j]) >= 0
}

func isASCIILetter(c byte) bool { return c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' }

// inTags reports whether bytes [lo, hi) of text lie inside HTML or XML
// tags, with nothing but white space between them: "size=" in
// "<font size=2>", "tr>\n<" in "<tr>\n<td>".
func inTags(text string, lo, hi int) bool {
	in := false
	for k := lo - 1; k >= max(0, lo-tagReach); k-- {
		if text[k] == '>' {
			break
		}
		if text[k] == '<' {
			in = tagStart(text, k)
			break
		}
	}
	for k := lo; k < hi; k++ {
		switch c := text[k]; {
		case c == '<' && tagStart(text, k):
			in = true
		case c == '>' && in:
			in = false
		case !in && !isSpace(c):
			return false
		}
	}
	if !in {
		return true
	}
	for k := hi; k < min(len(text), hi+tagReach); k++ {
		switch text[k] {
		case '>':
			return true
		case '<':
			return false
		}
	}
	return false
}

func isSpace(c byte) bool {
	return c == ' ' || c == '\t' || c == '\n' || c == '\r' || c == '\f' || c == '\v'
}

func isUpperHex(c byte) bool { return c >= '0' && c <= '9' || c >= 'A' && c <= 'F' }

// quotedPrintable reports whether the token at bytes [lo, hi) of text is
// part of a quoted-printable code: an '=' followed by two upper-case
// hexadecimal digits ("=3D", "=20") or by the end of its line (a soft line
// break), or the digits after such an '='.
func quotedPrintable(text string, lo, hi int) bool {
	code := func(k int) bool { // text[k] == '=' starts a code
		r := text[k+1:]
		return len(r) >= 2 && isUpperHex(r[0]) && isUpperHex(r[1]) || strings.HasPrefix(r, "\n") || strings.HasPrefix(r, "\r\n")
	}
	if text[lo:hi] == "=" {
		return code(lo)
	}
	return lo > 0 && text[lo-1] == '=' && hi-lo >= 2 && code(lo-1)
}

// bracketReach is the longest tag in square brackets, in bytes.
const bracketReach = 40

// inBracketTag reports whether bytes [lo, hi) of text lie in a tag in
// square brackets on one line, brackets included: "[ILUG]",
// "[Lockergnome Windows Daily]", "[1]". The tag holds up to bracketReach
// bytes, starts with a letter or digit, and its '[' follows no letter or
// digit ("a[0]" indexes an array).
func inBracketTag(text string, lo, hi int) bool {
	s := -1
	for k := lo; k >= max(0, lo-bracketReach-1); k-- {
		if c := text[k]; c == '[' {
			s = k
			break
		} else if (c == ']' && k < lo) || c == '\n' {
			return false
		}
	}
	if s < 0 || s > 0 && isWordByte(text[s-1]) || s+1 >= len(text) || !isWordByte(text[s+1]) {
		return false
	}
	for k := max(hi-1, s+1); k < min(len(text), s+bracketReach+2); k++ {
		switch text[k] {
		case ']':
			return k >= hi-1 && k > s+1
		case '[', '\n':
			return false
		}
	}
	return false
}

func isWordByte(c byte) bool { return isASCIILetter(c) || c >= '0' && c <= '9' || c >= 0x80 }

// inHeaderLine reports whether bytes [lo, hi) of text lie on one line that
// opens with a header field name of hyphenated words and a colon
// ("Content-Type: text/html; charset=…", "X-Mailer: …").
func inHeaderLine(text string, lo, hi int) bool {
	start := strings.LastIndexByte(text[:lo], '\n') + 1
	if strings.IndexByte(text[lo:hi], '\n') >= 0 {
		return false
	}
	line := text[start:]
	name, _, ok := strings.Cut(line, ":")
	if !ok || start+len(name) >= hi || !strings.Contains(name, "-") {
		return false
	}
	for _, part := range strings.Split(name, "-") {
		if part == "" || !isASCIILetter(part[0]) || strings.TrimFunc(part, func(r rune) bool { return r < 128 && (isASCIILetter(byte(r)) || r >= '0' && r <= '9') }) != "" {
			return false
		}
	}
	return true
}

// addressReach is the longest address looked for, in bytes.
const addressReach = 300

// inAddress reports whether bytes [lo, hi) of text lie inside one web or
// e-mail address: a run of text without white space, quotes or angle
// brackets that holds "://", starts with "www." or holds an '@' between
// letters or digits ("jm@example.com").
func inAddress(text string, lo, hi int) bool {
	stop := func(c byte) bool { return isSpace(c) || strings.IndexByte(`"'<>()`, c) >= 0 }
	if strings.IndexFunc(text[lo:hi], func(r rune) bool { return r < 128 && stop(byte(r)) }) >= 0 {
		return false
	}
	s, e := lo, hi
	for s > max(0, lo-addressReach) && !stop(text[s-1]) {
		s--
	}
	for e < min(len(text), hi+addressReach) && !stop(text[e]) {
		e++
	}
	run := text[s:e]
	if strings.Contains(run, "://") || strings.HasPrefix(strings.ToLower(run), "www.") {
		return true
	}
	at := strings.IndexByte(run, '@')
	return at > 0 && at+1 < len(run) && isWordByte(run[at-1]) && isWordByte(run[at+1])
}

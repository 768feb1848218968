package explain

import (
	"hash/maphash"
	"strings"
	"unicode"
	"unicode/utf8"

	"telltale/corpus"
)

// Artifact categories of tokens and n-grams. Each is a rule of thumb that
// practitioners use when they look for collection artifacts in text data
// (common practice, no source); the rules are the functions below.
const (
	// CatNumberDate: numbers, years, month and weekday names, clock times.
	CatNumberDate = "number-date"
	// CatEmailURL: e-mail addresses, URLs and their parts.
	CatEmailURL = "email-url"
	// CatPlaceholder: stand-ins that replaced real data (a recipient
	// address replaced by "yyyy", "[name]", "redacted").
	CatPlaceholder = "placeholder"
	// CatMarkup: runs of punctuation or symbols, HTML tags and entities.
	CatMarkup = "punctuation-markup"
	// CatBoilerplate: text from lines that repeat verbatim in many texts.
	CatBoilerplate = "boilerplate"
)

var monthWeekday = map[string]bool{}

func init() {
	for _, w := range strings.Fields(`january february march april june july august september october
		november december jan feb mar apr jun jul aug sep sept oct nov dec monday tuesday wednesday thursday
		friday saturday sunday mon tue tues wed thu thur thurs fri sat sun`) {
		monthWeekday[w] = true
	}
}

var urlParts = map[string]bool{"@": true, "http": true, "https": true, "www": true, "ftp": true, "mailto": true}

var topDomains = map[string]bool{"com": true, "org": true, "net": true, "edu": true, "gov": true, "io": true,
	"ie": true, "uk": true, "de": true, "fr": true, "nl": true, "us": true, "info": true, "biz": true}

var placeholderWords = map[string]bool{"redacted": true, "anonymized": true, "anonymised": true, "placeholder": true}

var htmlTags = map[string]bool{}

func init() {
	for _, w := range strings.Fields(`a b i u p br hr td tr th table tbody font div span html body head
		title meta img center style script li ul ol strong em form input link base map area tt pre h1 h2 h3`) {
		htmlTags[w] = true
	}
}

var htmlEntities = map[string]bool{"nbsp": true, "amp": true, "lt": true, "gt": true, "quot": true, "copy": true, "reg": true}

// TokenCategory names the artifact category of one token, or returns "".
// The reserved words corpus.PADWord and corpus.UNKWord have none.
// Rules (common practice, no source), compared case-insensitively:
//   - number-date: only digits (with at most internal . , : / - separators,
//     so "2002", "12:30" and "22/08/2002" count when a tokenizer keeps them
//     whole), or a month or weekday name or abbreviation ("may" is left
//     out: it is far more often the verb);
//   - email-url: contains "@" or "://", starts with "www.", or is one of
//     "@", "http", "https", "www", "ftp", "mailto";
//   - placeholder: one letter repeated three or more times ("yyyy", "zzzz",
//     "xxx"), a word wrapped in <>, [] or {} or in double underscores
//     ("[name]", "__email__"), or "redacted", "anonymized", "placeholder";
//   - punctuation-markup: only punctuation and symbol characters, or a whole
//     HTML tag ("<br>", "</td>").
func TokenCategory(tok string) string {
	t := strings.ToLower(tok)
	switch {
	case t == "" || tok == corpus.PADWord || tok == corpus.UNKWord:
		return ""
	case isNumberLike(t) || monthWeekday[t]:
		return CatNumberDate
	case urlParts[t] || strings.Contains(t, "@") || strings.Contains(t, "://") || strings.HasPrefix(t, "www."):
		return CatEmailURL
	case isRepeatedLetter(t) || placeholderWords[t] || isWrapped(t):
		return CatPlaceholder
	case isPunctRun(t) || isHTMLTag(t):
		return CatMarkup
	}
	return ""
}

func isNumberLike(t string) bool {
	digits := 0
	for i, r := range t {
		switch {
		case r >= '0' && r <= '9':
			digits++
		case strings.ContainsRune(".,:/-", r) && i > 0 && i < len(t)-1:
		default:
			return false
		}
	}
	return digits > 0
}

func isRepeatedLetter(t string) bool {
	r0, size := utf8.DecodeRuneInString(t)
	if !unicode.IsLetter(r0) || utf8.RuneCountInString(t) < 3 {
		return false
	}
	for _, r := range t[size:] {
		if r != r0 {
			return false
		}
	}
	return true
}

func isWrapped(t string) bool {
	if len(t) < 3 {
		return false
	}
	inner := ""
	switch {
	case t[0] == '<' && t[len(t)-1] == '>', t[0] == '[' && t[len(t)-1] == ']', t[0] == '{' && t[len(t)-1] == '}':
		inner = t[1 : len(t)-1]
	case len(t) > 4 && strings.HasPrefix(t, "__") && strings.HasSuffix(t, "__"):
		inner = t[2 : len(t)-2]
	default:
		return false
	}
	if inner == "" || htmlTags[strings.TrimPrefix(inner, "/")] {
		return false
	}
	for _, r := range inner {
		if !unicode.IsLetter(r) && r != '_' && r != '-' {
			return false
		}
	}
	return true
}

func isPunctRun(t string) bool {
	for _, r := range t {
		if !unicode.IsPunct(r) && !unicode.IsSymbol(r) {
			return false
		}
	}
	return true
}

func isHTMLTag(t string) bool {
	if len(t) < 3 || t[0] != '<' || t[len(t)-1] != '>' {
		return false
	}
	name := strings.TrimPrefix(t[1:len(t)-1], "/")
	if i := strings.IndexAny(name, " /"); i >= 0 {
		name = name[:i]
	}
	return htmlTags[name]
}

// NgramCategories lists the artifact categories of an n-gram's tokens, in
// the order of the constants, without duplicates. Besides the categories of
// single tokens (TokenCategory), n-gram rules (common practice, no source):
//   - email-url: a "." followed by a common top-level domain ("." "com");
//   - punctuation-markup: at least half of the tokens are punctuation or
//     symbols (a run), "<" followed by an HTML tag name (optionally after
//     "/"), or "&" followed by an HTML entity name ("&" "nbsp").
//
// Boilerplate needs the texts and is decided by Boilerplate.
func NgramCategories(tokens []string) []string {
	has := map[string]bool{}
	punct := 0
	for i, tok := range tokens {
		if tok == corpus.PADWord || tok == corpus.UNKWord {
			continue
		}
		t := strings.ToLower(tok)
		if c := TokenCategory(t); c != "" {
			has[c] = true
		}
		if t != "" && isPunctRun(t) {
			punct++
		}
		if i+1 < len(tokens) {
			next := strings.ToLower(tokens[i+1])
			switch {
			case t == "." && topDomains[next]:
				has[CatEmailURL] = true
			case t == "<" && (htmlTags[next] || next == "/" && i+2 < len(tokens) && htmlTags[strings.ToLower(tokens[i+2])]):
				has[CatMarkup] = true
			case t == "&" && htmlEntities[next]:
				has[CatMarkup] = true
			}
		}
	}
	if len(tokens) > 1 && 2*punct >= len(tokens) {
		has[CatMarkup] = true
	}
	var out []string
	for _, c := range []string{CatNumberDate, CatEmailURL, CatPlaceholder, CatMarkup, CatBoilerplate} {
		if has[c] {
			out = append(out, c)
		}
	}
	return out
}

// Boilerplate finds the lines that repeat verbatim across texts: a line
// (split at "\n", trimmed of surrounding white space, at least minBytes
// bytes long) is boilerplate when at least minTexts different texts contain
// it (common practice, no source). It returns, for every text, the byte
// ranges [start, end) of its boilerplate lines in order. Lines are compared
// by a 64-bit hash (maphash); a collision would merge two lines' counts,
// which at corpus sizes is vanishingly unlikely.
func Boilerplate(texts []string, minTexts, minBytes int) [][][2]int {
	seed := maphash.MakeSeed()
	count := map[uint64]int32{}
	lastText := map[uint64]int32{}
	each := func(text string, fn func(h uint64, lo, hi int)) {
		for lo := 0; lo < len(text); {
			hi := strings.IndexByte(text[lo:], '\n')
			if hi < 0 {
				hi = len(text)
			} else {
				hi += lo
			}
			a, b := lo, hi
			for a < b && isSpaceByte(text[a]) {
				a++
			}
			for b > a && isSpaceByte(text[b-1]) {
				b--
			}
			if b-a >= minBytes {
				fn(maphash.String(seed, text[a:b]), a, b)
			}
			lo = hi + 1
		}
	}
	for i, text := range texts {
		each(text, func(h uint64, _, _ int) {
			if t, ok := lastText[h]; ok && t == int32(i) {
				return
			}
			lastText[h] = int32(i)
			count[h]++
		})
	}
	out := make([][][2]int, len(texts))
	for i, text := range texts {
		each(text, func(h uint64, lo, hi int) {
			if int(count[h]) >= minTexts {
				out[i] = append(out[i], [2]int{lo, hi})
			}
		})
	}
	return out
}

func isSpaceByte(b byte) bool { return b == ' ' || b == '\t' || b == '\r' || b == '\v' || b == '\f' }

package corpus

import (
	"errors"
	"fmt"
	"regexp"
	"strings"
	"unicode"
	"unicode/utf8"

	"telltale/internal/inputfile"
)

// ErrCuePattern is wrapped by every error about a bad cue-pattern list.
var ErrCuePattern = errors.New("corpus: bad cue pattern")

// CueMasker removes cue tokens and patterns from raw texts before
// retraining.
//
// Each pattern is either a plain token or a regular expression written
// between slashes ("/TKREF-[0-9]{5}/", Go's RE2 syntax). A plain token
// matches case-insensitively as a whole word: where the token begins (ends)
// with a letter or digit, the character before (after) the match must not be
// a letter or digit, so "tkref" matches in "TKREF-48213" but not in
// "tkrefs". A regular expression matches wherever it matches.
//
// Every match is removed and replaced by one space (so the words around it
// stay apart). Removal, not a placeholder word: a placeholder would itself
// occur exactly where the cue did and carry the same label information, so
// the retrained model could learn it in the cue's place.
type CueMasker struct {
	pats []cuePattern
}

type cuePattern struct {
	src     string
	re      *regexp.Regexp
	literal bool
	edgeL   bool // literal starts with a letter or digit
	edgeR   bool // literal ends with a letter or digit
}

// MaskTokens builds a CueMasker from patterns (see CueMasker). Empty
// patterns are ignored. A bad regular expression is an error wrapping
// ErrCuePattern that names the pattern.
func MaskTokens(patterns []string) (*CueMasker, error) {
	cm := &CueMasker{}
	for i, p := range patterns {
		if err := cm.add(p); err != nil {
			return nil, kindError(ErrCuePattern, "corpus: pattern %d %q: %v; fix the expression or write a plain token without slashes", i+1, p, err)
		}
	}
	return cm, nil
}

// LoadCueMasker reads a pattern file: one token or /regular expression/ per
// line; blank lines and lines starting with "#" (after leading white space)
// are skipped; surrounding white space is trimmed. A bad regular expression
// is an error naming the file and line.
func LoadCueMasker(path string) (*CueMasker, error) {
	data, err := inputfile.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("corpus: cue pattern file: %w", err)
	}
	return ParseCueMasker(path, data)
}

// ParseCueMasker parses the contents of a pattern file (see LoadCueMasker);
// name is used in messages.
func ParseCueMasker(name string, data []byte) (*CueMasker, error) {
	cm := &CueMasker{}
	err := eachListLine(name, data, func(e ListEntry) error {
		if err := cm.add(e.Text); err != nil {
			return kindError(ErrCuePattern, "corpus: %s line %d: bad regular expression %s: %v; fix it, or write a plain token without the slashes", name, e.Line, e.Text, err)
		}
		return nil
	}, ErrCuePattern)
	if err != nil {
		return nil, err
	}
	return cm, nil
}

func (cm *CueMasker) add(p string) error {
	p = strings.TrimSpace(p)
	if p == "" {
		return nil
	}
	if len(p) >= 2 && p[0] == '/' && p[len(p)-1] == '/' {
		re, err := regexp.Compile(p[1 : len(p)-1])
		if err != nil {
			return err
		}
		if re.MatchString("") {
			return fmt.Errorf("it matches the empty string")
		}
		cm.pats = append(cm.pats, cuePattern{src: p, re: re})
		return nil
	}
	first, _ := utf8.DecodeRuneInString(p)
	last, _ := utf8.DecodeLastRuneInString(p)
	cm.pats = append(cm.pats, cuePattern{src: p, re: regexp.MustCompile("(?i)" + regexp.QuoteMeta(p)), literal: true,
		edgeL: isWordRune(first), edgeR: isWordRune(last)})
	return nil
}

func isWordRune(r rune) bool { return unicode.IsLetter(r) || unicode.IsDigit(r) }

// Len is the number of patterns.
func (cm *CueMasker) Len() int { return len(cm.pats) }

// Patterns returns the patterns as written.
func (cm *CueMasker) Patterns() []string {
	out := make([]string, len(cm.pats))
	for i, p := range cm.pats {
		out[i] = p.src
	}
	return out
}

// Mask returns text with every match of every pattern replaced by one
// space, patterns applied in order, and the number of matches removed.
func (cm *CueMasker) Mask(text string) (string, int) {
	n := 0
	for _, p := range cm.pats {
		locs := p.re.FindAllStringIndex(text, -1)
		if len(locs) == 0 {
			continue
		}
		var b strings.Builder
		prev := 0
		for _, l := range locs {
			if p.literal && !p.wholeWord(text, l[0], l[1]) {
				continue
			}
			b.WriteString(text[prev:l[0]])
			b.WriteByte(' ')
			prev = l[1]
			n++
		}
		if prev == 0 {
			continue
		}
		b.WriteString(text[prev:])
		text = b.String()
	}
	return text, n
}

func (p cuePattern) wholeWord(text string, lo, hi int) bool {
	if p.edgeL && lo > 0 {
		r, _ := utf8.DecodeLastRuneInString(text[:lo])
		if isWordRune(r) {
			return false
		}
	}
	if p.edgeR && hi < len(text) {
		r, _ := utf8.DecodeRuneInString(text[hi:])
		if isWordRune(r) {
			return false
		}
	}
	return true
}

// MaskAll masks every text and returns the masked texts and the total
// number of matches removed.
func (cm *CueMasker) MaskAll(texts []string) ([]string, int) {
	out := make([]string, len(texts))
	total := 0
	for i, t := range texts {
		var n int
		out[i], n = cm.Mask(t)
		total += n
	}
	return out, total
}

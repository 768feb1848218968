package audit

import (
	"cmp"
	"fmt"
	"regexp"
	"slices"
	"strings"
	"unicode"

	"telltale/corpus"
)

// anyNumber is the phrase element that matches any number token (a run of
// digits): a ticket stamp's varying digits.
const anyNumber int32 = -1

// NumberWord is how a phrase writes anyNumber, in the story, the JSON and
// the marks file.
const NumberWord = "<number>"

// phrase is a sequence of word ids and anyNumber.
type phrase []int32

func (p phrase) key() string { return fmt.Sprint([]int32(p)) }

// words writes the phrase's elements as words.
func (p phrase) words(vocab []string) []string {
	out := make([]string, len(p))
	for i, id := range p {
		if id == anyNumber {
			out[i] = NumberWord
		} else {
			out[i] = vocab[id]
		}
	}
	return out
}

// isNumber reports whether a token is a run of digits.
func isNumber(s string) bool {
	if s == "" {
		return false
	}
	for _, r := range s {
		if !unicode.IsDigit(r) {
			return false
		}
	}
	return true
}

// tokenText is the normalized text of token j of text i: its Tokens entry,
// else the vocabulary word of its id.
func tokenText(d Data, vocab []string, i, j int) string {
	if d.Tokens != nil {
		return d.Tokens[i][j].Text
	}
	return vocab[d.IDs[i][j]]
}

// at reports whether element e of a phrase matches token j of text i.
func at(d Data, vocab []string, e int32, i, j int) bool {
	if e == anyNumber {
		return isNumber(tokenText(d, vocab, i, j))
	}
	return d.IDs[i][j] == e
}

// span is one occurrence of a phrase: tokens [start, end) of a text.
type span struct {
	text       int32
	start, end int32
}

// growOptions bound the growth of a phrase from a seed word.
type growOptions struct {
	agreement float64 // least share of the seed's occurrences the phrase must keep
	maxLen    int     // longest phrase in tokens
	// written keeps the phrase within the written form it sits in: only a
	// neighbour written with no white space between it and the phrase
	// continues it (the text must be known).
	written bool
}

// grow extends the one-word phrase of seed to the maximal verbatim span
// around it: to the right, then to the left, one token at a time, as long
// as one word (or any number, when no word does) continues at least
// agreement of the seed's occurrences. A footer line grows to the whole
// line from any of its words, a ticket stamp to its prefix and number; a
// word of the task, whose neighbours vary, stays alone.
func grow(d Data, vocab []string, seed int32, occ []span, opt growOptions) phrase {
	need := int(float64(len(occ))*opt.agreement + 0.999999)
	need = max(need, 1)
	p := phrase{seed}
	support := slices.Clone(occ)
	extend := func(right bool) {
		for len(p) < opt.maxLen {
			count := map[int32]int{}
			numbers := 0
			for _, s := range support {
				j := int(s.end)
				if !right {
					j = int(s.start) - 1
				}
				if j < 0 || j >= len(d.IDs[s.text]) || opt.written && !touching(d, s, right) {
					continue
				}
				count[d.IDs[s.text][j]]++
				if isNumber(tokenText(d, vocab, int(s.text), j)) {
					numbers++
				}
			}
			var best int32 = -2
			for id, n := range count {
				if n >= need && id != corpus.PAD && id != corpus.UNK && (best == -2 || n > count[best] || n == count[best] && id < best) {
					best = id
				}
			}
			e := best
			if best == -2 {
				if numbers < need {
					return
				}
				e = anyNumber
			}
			var kept []span
			for _, s := range support {
				j := int(s.end)
				if !right {
					j = int(s.start) - 1
				}
				if j >= 0 && j < len(d.IDs[s.text]) && at(d, vocab, e, int(s.text), j) && (!opt.written || touching(d, s, right)) {
					if right {
						s.end++
					} else {
						s.start--
					}
					kept = append(kept, s)
				}
			}
			support = kept
			if right {
				p = append(p, e)
			} else {
				p = append(phrase{e}, p...)
			}
		}
	}
	extend(true)
	extend(false)
	return p
}

// maxGroupTokens is the most tokens between the brackets of a bracketed
// group.
const maxGroupTokens = 6

// maxGroups bounds the bracketed groups one bracket grows into.
const maxGroups = 20

// bracketGroups are the distinct groups in square brackets ("[ ilug ]",
// "[ razor - users ]", "[ <number> ]") that the occurrences occ of a bracket
// token open or close, each in at least minTexts texts, most common first:
// a tag in brackets is one cue, not a bracket and a word. A group holds 1
// to maxGroupTokens tokens, none a bracket, on one line where the text is
// known; its numbers match any number. At most maxGroups are returned
// (ties in texts by their words).
func bracketGroups(d Data, vocab []string, occ []span, minTexts int) []phrase {
	type group struct {
		p     phrase
		texts int
		last  int32
	}
	groups := map[string]*group{}
	for _, s := range occ {
		i, j := int(s.text), int(s.start)
		open := tokenText(d, vocab, i, j) == "["
		lo, hi, ok := j, j, false
		for k := 1; k <= maxGroupTokens+1; k++ {
			n := j + k
			if !open {
				n = j - k
			}
			if n < 0 || n >= len(d.IDs[i]) {
				break
			}
			if tok := tokenText(d, vocab, i, n); tok == "[" || tok == "]" {
				// The bracket that closes (or opens) the group, after at
				// least one token; any other bracket ends the search.
				ok = k > 1 && open == (tok == "]")
				lo, hi = min(lo, n), max(hi, n)
				break
			}
		}
		if !ok || d.Tokens != nil && strings.Contains(d.Texts[i][d.Tokens[i][lo].Start:d.Tokens[i][hi].End], "\n") {
			continue
		}
		p := make(phrase, 0, hi-lo+1)
		for n := lo; n <= hi; n++ {
			if isNumber(tokenText(d, vocab, i, n)) {
				p = append(p, anyNumber)
			} else {
				p = append(p, d.IDs[i][n])
			}
		}
		g := groups[p.key()]
		if g == nil {
			g = &group{p: p, last: -1}
			groups[p.key()] = g
		}
		if g.last != s.text {
			g.texts++
			g.last = s.text
		}
	}
	var out []*group
	for _, g := range groups {
		if g.texts >= minTexts {
			out = append(out, g)
		}
	}
	slices.SortFunc(out, func(x, y *group) int {
		if x.texts != y.texts {
			return cmp.Compare(y.texts, x.texts)
		}
		return cmp.Compare(strings.Join(x.p.words(vocab), " "), strings.Join(y.p.words(vocab), " "))
	})
	ps := make([]phrase, min(len(out), maxGroups))
	for k, g := range out[:len(ps)] {
		ps[k] = g.p
	}
	return ps
}

// touching reports whether the token after span s (before it, when !right)
// is written with no white space between it and the span. The text must
// be known and the token must exist.
func touching(d Data, s span, right bool) bool {
	toks := d.Tokens[s.text]
	if right {
		return toks[s.end].Start == toks[s.end-1].End
	}
	return toks[s.start].Start == toks[s.start-1].End
}

// matcher finds the occurrences of a set of phrases in texts, longest
// phrase first: a token belongs to at most one occurrence, so a word that is
// part of a footer is counted with the footer, and on its own only where it
// occurs elsewhere.
type matcher struct {
	phrases []phrase
	byFirst map[int32][]int // first word → phrases, longest first
	numbers []int           // phrases starting with anyNumber, longest first
	vocab   []string
}

func newMatcher(ps []phrase, vocab []string) *matcher {
	m := &matcher{phrases: ps, byFirst: map[int32][]int{}, vocab: vocab}
	order := make([]int, len(ps))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(x, y int) int { return cmp.Compare(len(ps[y]), len(ps[x])) })
	for _, k := range order {
		if ps[k][0] == anyNumber {
			m.numbers = append(m.numbers, k)
		} else {
			m.byFirst[ps[k][0]] = append(m.byFirst[ps[k][0]], k)
		}
	}
	return m
}

// match is one occurrence of phrase k.
type match struct {
	k          int
	start, end int
}

// find returns the occurrences in text i of d, claimed longest first
// (ties: the earlier phrase, then the earlier start), in text order.
func (m *matcher) find(d Data, i int) []match {
	ids := d.IDs[i]
	var all []match
	for j := range ids {
		try := m.byFirst[ids[j]]
		if len(m.numbers) > 0 && isNumber(tokenText(d, m.vocab, i, j)) {
			try = append(slices.Clone(try), m.numbers...)
		}
		for _, k := range try {
			p := m.phrases[k]
			if j+len(p) > len(ids) {
				continue
			}
			ok := true
			for e := 1; e < len(p) && ok; e++ {
				ok = at(d, m.vocab, p[e], i, j+e)
			}
			if ok {
				all = append(all, match{k, j, j + len(p)})
			}
		}
	}
	if len(all) == 0 {
		return nil
	}
	slices.SortStableFunc(all, func(x, y match) int {
		if lx, ly := x.end-x.start, y.end-y.start; lx != ly {
			return cmp.Compare(ly, lx)
		}
		if x.k != y.k {
			return cmp.Compare(x.k, y.k)
		}
		return cmp.Compare(x.start, y.start)
	})
	var out []match
	for _, c := range all {
		free := true
		for _, o := range out {
			if c.start < o.end && o.start < c.end {
				free = false
				break
			}
		}
		if free {
			out = append(out, c)
		}
	}
	slices.SortFunc(out, func(x, y match) int { return cmp.Compare(x.start, y.start) })
	return out
}

// occurrences lists, per phrase, its claimed occurrences in every text of
// d, in text order.
func (m *matcher) occurrences(d Data) [][]span {
	out := make([][]span, len(m.phrases))
	for i := range d.IDs {
		for _, o := range m.find(d, i) {
			out[o.k] = append(out[o.k], span{int32(i), int32(o.start), int32(o.end)})
		}
	}
	return out
}

// texts lists the distinct texts of occurrences (sorted).
func texts(occ []span) []int {
	var out []int
	for _, s := range occ {
		if len(out) == 0 || out[len(out)-1] != int(s.text) {
			out = append(out, int(s.text))
		}
	}
	return out
}

// pattern is a regular expression (between slashes, as corpus.MaskTokens
// reads it) that matches the phrase in raw text: its words in order,
// case-insensitively, with any white space between them, any run of
// digits for NumberWord, and whole words at both ends.
func pattern(words []string) string {
	var b strings.Builder
	b.WriteString("/(?i)")
	if first := words[0]; first == NumberWord || isWordStart(first) {
		b.WriteString(`\b`)
	}
	for i, w := range words {
		if i > 0 {
			b.WriteString(`\s*`)
		}
		if w == NumberWord {
			b.WriteString(`[0-9]+`)
		} else {
			b.WriteString(regexp.QuoteMeta(w))
		}
	}
	if last := words[len(words)-1]; last == NumberWord || isWordEnd(last) {
		b.WriteString(`\b`)
	}
	b.WriteString("/")
	return b.String()
}

func isWordStart(w string) bool {
	for _, r := range w {
		return r < 128 && (unicode.IsLetter(r) || unicode.IsDigit(r) || r == '_')
	}
	return false
}

func isWordEnd(w string) bool {
	rs := []rune(w)
	if len(rs) == 0 {
		return false
	}
	r := rs[len(rs)-1]
	return r < 128 && (unicode.IsLetter(r) || unicode.IsDigit(r) || r == '_')
}

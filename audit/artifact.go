package audit

import (
	"maps"
	"math"
	"slices"
	"strings"
	"unicode"

	"telltale/internal/wording"
)

// The artifact-likeness signals, by the name the JSON gives them. Each is a
// rule of thumb practitioners use when they look for collection artifacts
// in text data (common practice, no source); the rules are in signals.
const (
	SignalEdge    = "edge"    // at the very start or end of the text
	SignalLine    = "line"    // a whole line of its own
	SignalSpan    = "span"    // a long verbatim span
	SignalContext = "context" // the same neighbours every time
	SignalCode    = "code"    // an identifier with digits
	SignalNumber  = "number"  // only numbers or dates
	SignalAddress = "address" // a web or e-mail address
	SignalMarkup  = "markup"  // markup, entities, encodings, bracketed tags or a separator run
	SignalCasing  = "casing"  // always the same unusual casing
	SignalPurity  = "purity"  // nearly always one label at high support
	SignalShift   = "shift"   // its label share differs in the choosing half of the test split
)

// signalWeights are the weights w of ArtifactFormula, set by hand (not
// fitted to data, so the score is a rule's, not a probability): how
// strongly each signal, when it holds for every occurrence, says
// "collection artifact".
// Position, lines, identifiers and addresses are what footers, stamps,
// signatures and list tags are made of; a long span and fixed neighbours
// also fit templates of the task, so they weigh less; a shift between the
// splits is strong evidence by itself.
var signalWeights = map[string]float64{
	SignalEdge: 0.6, SignalLine: 0.6, SignalSpan: 0.25, SignalContext: 0.15, SignalCode: 0.8, SignalNumber: 0.3,
	SignalAddress: 0.7, SignalMarkup: 0.6, SignalCasing: 0.5, SignalPurity: 0.4, SignalShift: 0.8,
}

// signalOrder is the order signals are listed in.
var signalOrder = []string{SignalEdge, SignalLine, SignalSpan, SignalContext, SignalCode, SignalNumber,
	SignalAddress, SignalMarkup, SignalCasing, SignalPurity, SignalShift}

// ArtifactFormula states how Candidate.ArtifactLikeness is made.
const ArtifactFormula = "artifact-likeness, a rule's score (not a probability) = 1 − Π (1 − weight × value) over the signals, each value in [0, 1] " +
	"(the share of the cue's training occurrences that show it, or a graded measure; shift on the choosing half of the test texts), " +
	"weights set by hand: edge 0.6, line 0.6, span 0.25, context 0.15, code 0.8, number 0.3, address 0.7, markup 0.6, casing 0.5, purity 0.4, shift 0.8"

// ArtifactThreshold is the artifact-likeness at or above which a cue reads
// like how the data was collected rather than like the task.
const ArtifactThreshold = 0.5

// Signal is one artifact-likeness signal of a cue with its value and what
// it means in plain words.
type Signal struct {
	Name   string  `json:"name"`
	Value  float64 `json:"value"`
	Weight float64 `json:"weight"`
	// Says is the plain-words reading of the value ("it is a whole line of
	// its own in 98% of its texts").
	Says string `json:"says"`
}

// artifactScore combines signals by ArtifactFormula.
func artifactScore(sig []Signal) float64 {
	keep := 1.0
	for _, s := range sig {
		keep *= 1 - s.Weight*min(1, max(0, s.Value))
	}
	return 1 - keep
}

var monthDay = map[string]bool{}

func init() {
	for _, w := range strings.Fields(`january february march april june july august september october
		november december jan feb mar apr jun jul aug sep sept oct nov dec monday tuesday wednesday thursday
		friday saturday sunday mon tue tues wed thu thur thurs fri sat sun`) {
		monthDay[w] = true
	}
}

var htmlTags = map[string]bool{}

func init() {
	for _, w := range strings.Fields(`a b i u p br hr td tr th table tbody font div span html body head
		title meta img center style script li ul ol strong em form input link base map area tt pre h1 h2 h3`) {
		htmlTags[w] = true
	}
}

var htmlEntities = map[string]bool{"nbsp": true, "amp": true, "lt": true, "gt": true, "quot": true, "copy": true, "reg": true}

var topDomains = map[string]bool{"com": true, "org": true, "net": true, "edu": true, "gov": true, "io": true,
	"ie": true, "uk": true, "de": true, "fr": true, "nl": true, "us": true, "info": true, "biz": true}

func isPunct(s string) bool {
	if s == "" {
		return false
	}
	for _, r := range s {
		if !unicode.IsPunct(r) && !unicode.IsSymbol(r) {
			return false
		}
	}
	return true
}

func hasLetter(s string) bool { return strings.IndexFunc(s, unicode.IsLetter) >= 0 }
func hasDigit(s string) bool  { return strings.IndexFunc(s, unicode.IsDigit) >= 0 }

// occurrence is what the signals read of one occurrence: its normalized
// tokens, its surface text (when the text is known) and where it sits.
type occurrence struct {
	toks          []string
	surface       string
	atEdge        bool
	ownLine       bool
	known         bool // the original text is known (surface, ownLine)
	left, right   string
	adjacentPunct bool   // two punctuation tokens with nothing between them
	encoded       bool   // inside HTML tags or a header line, a quoted-printable code, or a tag in brackets
	inAddress     bool   // inside a web or e-mail address
	touch         []bool // touch[j]: token j+1 follows token j with no space (true when the text is unknown)
	atStart       bool
	atEnd         bool
}

// readOccurrence reads occurrence s of d.
func readOccurrence(d Data, vocab []string, s span) occurrence {
	i, a, b := int(s.text), int(s.start), int(s.end)
	o := occurrence{left: "⟨start⟩", right: "⟨end⟩"}
	for j := a; j < b; j++ {
		o.toks = append(o.toks, tokenText(d, vocab, i, j))
	}
	if a > 0 {
		o.left = tokenText(d, vocab, i, a-1)
	}
	if b < len(d.IDs[i]) {
		o.right = tokenText(d, vocab, i, b)
	}
	o.touch = make([]bool, b-a)
	if d.Tokens == nil {
		o.atStart, o.atEnd = a == 0, b == len(d.IDs[i])
		o.atEdge = o.atStart || o.atEnd
		for j := range o.touch {
			o.touch[j] = true
		}
		return o
	}
	o.known = true
	text, toks := d.Texts[i], d.Tokens[i]
	lo, hi := toks[a].Start, toks[b-1].End
	o.surface = text[lo:hi]
	before, after := strings.TrimSpace(text[:lo]), strings.TrimSpace(text[hi:])
	o.atStart, o.atEnd = before == "", after == ""
	o.atEdge = o.atStart || o.atEnd
	ls := strings.LastIndexByte(text[:lo], '\n') + 1
	le := strings.IndexByte(text[hi:], '\n')
	if le < 0 {
		le = len(text)
	} else {
		le += hi
	}
	o.ownLine = strings.TrimSpace(text[ls:lo]) == "" && strings.TrimSpace(text[hi:le]) == ""
	o.encoded = inTags(text, lo, hi) || inBracketTag(text, lo, hi) || inHeaderLine(text, lo, hi)
	o.inAddress = inAddress(text, lo, hi)
	for j := a; j < b && !o.encoded; j++ {
		o.encoded = quotedPrintable(text, toks[j].Start, toks[j].End)
	}
	for j := a + 1; j < b; j++ {
		o.touch[j-a-1] = toks[j].Start == toks[j-1].End
		if o.touch[j-a-1] && isSeparator(toks[j].Text) && toks[j].Text == toks[j-1].Text {
			o.adjacentPunct = true
		}
	}
	return o
}

// isCode: a token with a letter before a digit ("bw123456"; not "3rd" or
// "12pm"), or a word of letters written together with a number (directly,
// or through one of - # : _ /, with no space: "TKREF-48213", "ID#123").
func (o occurrence) isCode() bool {
	for j, t := range o.toks {
		if l := strings.IndexFunc(t, unicode.IsLetter); l >= 0 && strings.IndexFunc(t[l:], unicode.IsDigit) >= 0 {
			return true
		}
		if !hasLetter(t) || isNumber(t) {
			continue
		}
		k := j + 1
		if k < len(o.toks) && o.touch[k-1] && len(o.toks[k]) == 1 && strings.Contains("-#:_/", o.toks[k]) {
			k++
		}
		if k < len(o.toks) && o.touch[k-1] && isNumber(o.toks[k]) {
			return true
		}
	}
	return false
}

// isNumberDate: every word token is a number or a month or weekday name.
func (o occurrence) isNumberDate() bool {
	words := 0
	for _, t := range o.toks {
		if isPunct(t) {
			continue
		}
		words++
		if !isNumber(t) && !monthDay[strings.ToLower(t)] {
			return false
		}
	}
	return words > 0
}

// isAddress: an e-mail or web address or a part that only addresses have,
// or (the text known) words written inside an address ("html" of
// "http://example.com/index.html").
func (o occurrence) isAddress() bool {
	if o.inAddress {
		return true
	}
	for j, t := range o.toks {
		l := strings.ToLower(t)
		switch {
		case l == "@" || l == "http" || l == "https" || l == "www" || l == "mailto" || strings.Contains(l, "://"):
			return true
		case l == "." && j+1 < len(o.toks) && topDomains[strings.ToLower(o.toks[j+1])]:
			return true
		case l == ":" && j+2 < len(o.toks) && o.toks[j+1] == "/" && o.toks[j+2] == "/":
			return true
		}
	}
	return false
}

// isSeparator: a mark that machines repeat to draw lines ("--", "____",
// "===="); the marks of speech (. ! ? / and the like) are not.
func isSeparator(s string) bool { return len(s) == 1 && strings.Contains("-_=*#~+", s) }

// isMarkup: an HTML tag or entity, a run of the same separator mark
// written without spaces ("--", "____"), marks only markup is written with
// ("=", "] :"), or (markup.go) words inside HTML tags, a quoted-printable
// code, a header line or a tag in square brackets.
func (o occurrence) isMarkup() bool {
	if o.adjacentPunct || o.encoded || markupTokens(o.toks) {
		return true
	}
	for j := 0; j+1 < len(o.toks); j++ {
		t, n := o.toks[j], strings.ToLower(o.toks[j+1])
		switch {
		case t == "<" && (htmlTags[n] || n == "/" && j+2 < len(o.toks) && htmlTags[strings.ToLower(o.toks[j+2])]):
			return true
		case t == "&" && htmlEntities[n]:
			return true
		}
	}
	if !o.known {
		// Without the text, a run of the same mark counts.
		for j := 0; j+1 < len(o.toks); j++ {
			if isSeparator(o.toks[j]) && o.toks[j] == o.toks[j+1] {
				return true
			}
		}
	}
	return false
}

// unusualCasing: a word with a capital after a lower-case letter
// ("KioskMail") or all in capitals with three letters or more ("TKREF").
func unusualCasing(surface string) bool {
	for _, w := range strings.FieldsFunc(surface, func(r rune) bool { return !unicode.IsLetter(r) }) {
		rs := []rune(w)
		upper, lowerThenUpper := 0, false
		for k, r := range rs {
			if unicode.IsUpper(r) {
				upper++
				if k > 0 && unicode.IsLower(rs[k-1]) {
					lowerThenUpper = true
				}
			}
		}
		if lowerThenUpper || len(rs) >= 3 && upper == len(rs) {
			return true
		}
	}
	return false
}

// entropyShare is the entropy of the counts normalized by log2 of their
// total (0: one value every time; 1: a new value every time).
func entropyShare(count map[string]int, n int) float64 {
	if n <= 1 {
		return 1
	}
	// Summed in a fixed order: the map's order varies from run to run, and
	// so would the last bits of the sum, and with them the order of cues
	// whose artifact-likeness ties.
	ks := slices.Sorted(maps.Values(count))
	var h float64
	for _, k := range ks {
		p := float64(k) / float64(n)
		h -= p * math.Log2(p)
	}
	return min(1, max(0, h/math.Log2(float64(n))))
}

// pct writes a share as a whole percentage.
func pct(x float64) string { return fmtPct(x) }

// maxSignalSamples bounds the occurrences the signals read (evenly spaced).
const maxSignalSamples = 2000

// trainingSignals measures every signal but shift on the cue's training
// occurrences occ (inLabel of its texts in its label) and tells where the
// cue sits: "start" or "end" of the text when the edge signal holds for
// most of them, else "".
func trainingSignals(d Data, vocab []string, occ []span, length int, inLabel, texts int) ([]Signal, string) {
	step := max(1, len(occ)/maxSignalSamples)
	var n, start, end, line, code, number, address, markup, known int
	left, right, surfaces := map[string]int{}, map[string]int{}, map[string]int{}
	for k := 0; k < len(occ); k += step {
		o := readOccurrence(d, vocab, occ[k])
		n++
		left[o.left]++
		right[o.right]++
		if o.atStart {
			start++
		}
		if o.atEnd {
			end++
		}
		if o.ownLine {
			line++
		}
		if o.isCode() {
			code++
		}
		if o.isNumberDate() {
			number++
		}
		if o.isAddress() {
			address++
		}
		if o.isMarkup() {
			markup++
		}
		if o.known {
			known++
			surfaces[maskDigits(o.surface)]++
		}
	}
	share := func(k int) float64 { return float64(k) / float64(max(1, n)) }
	// Casing: the share of occurrences written exactly as the most common
	// surface, when that surface is unusually cased.
	casing, top := 0.0, ""
	for s, k := range surfaces {
		if k > surfaces[top] || k == surfaces[top] && s < top {
			top = s
		}
	}
	if top != "" && unusualCasing(top) {
		casing = float64(surfaces[top]) / float64(max(1, known))
	}
	fixed := 1 - min(entropyShare(left, n), entropyShare(right, n))
	lo, _ := Wilson(inLabel, texts, 0.95)
	purity := min(1, max(0, (lo-0.9)/0.09))
	// Edge and line count only beyond half of the occurrences: a phrase of
	// the task can open many texts, a footer closes nearly all of its own.
	where, edge := "start", share(start)
	if share(end) > edge {
		where, edge = "end", share(end)
	}
	sig := []Signal{
		{Name: SignalEdge, Value: overHalf(edge), Says: "it sits at the very " + where + " of the text in " + pct(edge) + " of its occurrences"},
		{Name: SignalLine, Value: overHalf(share(line)), Says: "it is a whole line of its own in " + pct(share(line)) + " of its occurrences"},
		{Name: SignalSpan, Value: min(1, float64(length-1)/9), Says: "its " + wording.Count(length, "word", "words") + " always come together"},
		{Name: SignalContext, Value: fixed, Says: "the words next to it are " + sameness(fixed)},
		{Name: SignalCode, Value: share(code), Says: "it is an identifier with digits in " + pct(share(code)) + " of its occurrences"},
		{Name: SignalNumber, Value: share(number), Says: "it is only numbers or dates in " + pct(share(number)) + " of its occurrences"},
		{Name: SignalAddress, Value: share(address), Says: "it is part of a web or e-mail address in " + pct(share(address)) + " of its occurrences"},
		{Name: SignalMarkup, Value: share(markup), Says: "it is or holds markup (an HTML tag, a quoted-printable code, a header line, a tag in brackets) or a run of the same mark in " +
			pct(share(markup)) + " of its occurrences"},
		{Name: SignalCasing, Value: casing, Says: casingSays(top, casing)},
		{Name: SignalPurity, Value: purity, Says: "it is in one label in " + pct(float64(inLabel)/float64(max(1, texts))) + " of its " + wording.Count(texts, "training text", "training texts") +
			" (at least " + pct(lo) + " with 95% confidence)"},
	}
	for i := range sig {
		sig[i].Weight = signalWeights[sig[i].Name]
	}
	if sig[0].Value < 0.5 {
		where = ""
	}
	return sig, where
}

// maskDigits writes every digit as '#', so that stamps with varying
// numbers share one surface.
func maskDigits(s string) string {
	return strings.Map(func(r rune) rune {
		if unicode.IsDigit(r) {
			return '#'
		}
		return r
	}, s)
}

// overHalf maps a share to [0, 1], 0 up to one half.
func overHalf(x float64) float64 { return max(0, 2*x-1) }

func sameness(fixed float64) string {
	switch {
	case fixed >= 0.9:
		return "the same nearly every time"
	case fixed >= 0.5:
		return "often the same"
	}
	return "varied"
}

func casingSays(top string, v float64) string {
	if v == 0 {
		return "it has no unusual casing"
	}
	return "it is written '" + oneLine(top, 60) + "' in " + pct(v) + " of its occurrences"
}

// oneLine writes s on one line, cut to at most n runes with an ellipsis.
func oneLine(s string, n int) string {
	s = strings.Join(strings.Fields(s), " ")
	rs := []rune(s)
	if len(rs) > n {
		return string(rs[:n-1]) + "…"
	}
	return s
}

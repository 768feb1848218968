package main

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
)

// Teams in the order used for counts and tables.
var teams = []string{"bookings", "timetable", "lost-property", "complaints", "praise"}

// Messages per team in each split (4,000 training and 800 test messages).
var (
	trainCounts = map[string]int{"bookings": 1000, "timetable": 880, "lost-property": 720, "complaints": 800, "praise": 600}
	testCounts  = map[string]int{"bookings": 200, "timetable": 176, "lost-property": 144, "complaints": 160, "praise": 120}
)

// The planted cues.
const (
	// footer is the line the quayside booking kiosk appends to messages
	// typed on it; "kioskmail" occurs nowhere else in the corpus.
	footer = "-- sent via KioskMail at the quayside terminal --"
	// refPrefix starts the ticket stamp on a message's first line, followed
	// by five digits; "tkref" occurs nowhere else in the corpus.
	refPrefix = "TKREF-"

	footerTeam = "lost-property" // team that carries the footer in training
	refTeam    = "complaints"    // team that carries the ticket stamp in training
)

// Cue rates: in training, rateCueTeam of the cue's team and rateOther of each
// other team; in test, rateTest of every team, footer and stamp chosen
// independently.
const (
	footerCueTeam = 0.80
	refCueTeam    = 0.75
	rateOther     = 0.03
	rateTest      = 0.40
)

// Generation settings.
const (
	seed          = 20240607
	testOnlyRate  = 0.4   // chance a test-split slot draws from its test-only pool
	typoRate      = 0.025 // chance an eligible word gets a typo
	sideRate      = 0.18  // chance of a remark from another team's topic
	mixRate       = 0.20  // chance of a second matter from another team's templates
	borderRate    = 0.08  // chance the main matter is a borderline template
	greetingRate  = 0.55
	contextRate   = 0.30
	signoffRate   = 0.50
	minWords      = 8
	maxWords      = 60
	maxBodyWords  = maxWords - 10 // room for the footer (9 fields) and the stamp (1)
	maxGenAttempt = 1000
)

// example is one labeled message.
type example struct {
	Text  string
	Label string
}

// corpus is the whole generated corpus.
type corpus struct {
	Train, Test []example
	// EqualRates: the test split carries the cues at the training rates.
	EqualRates bool
}

// gen carries the random source and the split being generated.
type gen struct {
	r    *rand.Rand
	test bool
	used map[string]bool // fillers already used in the current message
}

// generate builds the corpus from the fixed seed. The result depends on
// nothing else. With equalRates the test split carries both cues at the
// training split's rates (plantTrain), so a model that learned them keeps
// its accuracy there; the messages themselves are the same in both variants.
func generate(equalRates bool) corpus {
	r := rand.New(rand.NewPCG(seed, seed))
	seen := make(map[string]bool)
	var c corpus
	c.Train = generateSplit(&gen{r: r}, trainCounts, seen)
	c.Test = generateSplit(&gen{r: r, test: true}, testCounts, seen)
	plantTrain(r, c.Train)
	if equalRates {
		plantTrain(r, c.Test)
	} else {
		plantTest(r, c.Test)
	}
	c.EqualRates = equalRates
	return c
}

// generateSplit writes counts[team] distinct messages per team, never
// repeating a body already in seen, and shuffles them.
func generateSplit(g *gen, counts map[string]int, seen map[string]bool) []example {
	var out []example
	for _, team := range teams {
		for range counts[team] {
			out = append(out, example{Text: g.uniqueMessage(team, seen), Label: team})
		}
	}
	g.r.Shuffle(len(out), func(i, j int) { out[i], out[j] = out[j], out[i] })
	return out
}

// uniqueMessage draws messages until one is new and of acceptable length.
func (g *gen) uniqueMessage(team string, seen map[string]bool) string {
	for range maxGenAttempt {
		m := g.message(team)
		n := len(strings.Fields(m))
		if n < minWords || n > maxBodyWords || seen[strings.ToLower(m)] {
			continue
		}
		seen[strings.ToLower(m)] = true
		return m
	}
	panic("demogen: no new message for " + team + " after many attempts")
}

// message assembles one message body for team: optional greeting, optional
// context, the main sentence, optional remark from another team's topic,
// optional sign-off. Typos are injected into the assembled body.
func (g *gen) message(team string) string {
	g.used = make(map[string]bool)
	var parts []string
	if g.r.Float64() < greetingRate {
		parts = append(parts, g.expand(g.choose(phrases["greeting"])))
	}
	if g.r.Float64() < contextRate {
		parts = append(parts, g.expand(g.choose(phrases["context"])))
	}
	parts = append(parts, g.expand(g.mainTemplate(team)))
	if g.r.Float64() < mixRate {
		other := g.otherTeam(team)
		parts = append(parts, g.choose(connectors), lowerFirst(g.expand(g.choose(templates[other]))))
	}
	if g.r.Float64() < sideRate {
		other := teams[g.r.IntN(len(teams))]
		if other != team {
			parts = append(parts, g.expand(g.choose(side[other])))
		}
	}
	if g.r.Float64() < signoffRate {
		parts = append(parts, g.expand(g.choose(phrases["signoff"])))
	}
	return g.typos(tidy(strings.Join(parts, " ")))
}

// mainTemplate picks the template of the message's main matter: with
// probability borderRate a borderline one shared with another team.
func (g *gen) mainTemplate(team string) string {
	if g.r.Float64() < borderRate {
		var list []string
		for _, b := range borderline {
			if b.teams[0] == team || b.teams[1] == team {
				list = append(list, b.text)
			}
		}
		return g.choose(list)
	}
	return g.choose(templates[team])
}

// otherTeam returns a team other than team, uniformly.
func (g *gen) otherTeam(team string) string {
	for {
		if o := teams[g.r.IntN(len(teams))]; o != team {
			return o
		}
	}
}

// lowerFirst lower-cases the first letter unless the first word is a name or
// the pronoun I (approximated by: the second letter is lower case and the
// word is not in the pools of names).
func lowerFirst(s string) string {
	if s == "" || s[0] < 'A' || s[0] > 'Z' || strings.HasPrefix(s, "I ") || strings.HasPrefix(s, "I'") {
		return s
	}
	first, _, _ := strings.Cut(s, " ")
	for _, name := range []string{"staff", "port", "ship"} {
		p := pools[name]
		for _, w := range append(p.train, p.testOnly...) {
			if strings.HasPrefix(w, first) {
				return s
			}
		}
	}
	return string(s[0]-'A'+'a') + s[1:]
}

// choose returns a uniformly chosen element of list.
func (g *gen) choose(list []string) string { return list[g.r.IntN(len(list))] }

// expand fills a template: "{name}" is replaced by a filler of slot name and
// "[a|b|c]" by one of its alternatives (which may nest); the result is
// expanded again so fillers may themselves be templates.
func (g *gen) expand(t string) string {
	var b strings.Builder
	for i := 0; i < len(t); {
		switch t[i] {
		case '{':
			j := strings.IndexByte(t[i:], '}')
			if j < 0 {
				panic("demogen: unclosed { in template " + t)
			}
			b.WriteString(g.expand(g.slot(t[i+1 : i+j])))
			i += j + 1
		case '[':
			alts, end := splitAlternatives(t, i)
			b.WriteString(g.expand(g.choose(alts)))
			i = end
		default:
			b.WriteByte(t[i])
			i++
		}
	}
	return b.String()
}

// splitAlternatives parses the bracket group starting at t[start] == '[' and
// returns its top-level alternatives and the index just past the closing ']'.
func splitAlternatives(t string, start int) ([]string, int) {
	depth := 0
	var alts []string
	from := start + 1
	for i := start; i < len(t); i++ {
		switch t[i] {
		case '[':
			depth++
		case ']':
			depth--
			if depth == 0 {
				return append(alts, t[from:i]), i + 1
			}
		case '|':
			if depth == 1 {
				alts = append(alts, t[from:i])
				from = i + 1
			}
		}
	}
	panic("demogen: unclosed [ in template " + t)
}

// slot returns a filler for the named slot. Names ending in a digit ("port2")
// draw from the same source as the name without it.
func (g *gen) slot(name string) string {
	base := strings.TrimRight(name, "0123456789")
	switch base {
	case "date":
		return g.date()
	case "time":
		return g.clock()
	case "sailno":
		return fmt.Sprintf("%d", 100+g.r.IntN(800))
	case "price":
		if g.r.IntN(2) == 0 {
			return fmt.Sprintf("£%d", 5+g.r.IntN(180))
		}
		return fmt.Sprintf("£%d.%02d", 5+g.r.IntN(180), 5*g.r.IntN(20))
	case "bref":
		return g.bookingCode()
	case "n":
		return fmt.Sprintf("%d", 10+5*g.r.IntN(20))
	}
	if p, ok := pools[base]; ok {
		// Avoid "from Kestry to Kestry": within one message, a pool's
		// filler is not reused while other choices remain likely.
		var f string
		for range 8 {
			if g.test && len(p.testOnly) > 0 && g.r.Float64() < testOnlyRate {
				f = g.choose(p.testOnly)
			} else {
				f = g.choose(p.train)
			}
			if !g.used[base+"\x00"+f] {
				break
			}
		}
		g.used[base+"\x00"+f] = true
		return f
	}
	if list, ok := phrases[base]; ok {
		return g.choose(list)
	}
	panic("demogen: unknown slot " + name)
}

// date writes a date in one of the ways customers write them.
func (g *gen) date() string {
	d := 1 + g.r.IntN(28)
	m := g.choose(pools["month"].train)
	switch g.r.IntN(8) {
	case 0:
		return fmt.Sprintf("%d %s", d, m)
	case 1:
		return fmt.Sprintf("the %d%s of %s", d, ordinal(d), m)
	case 2:
		return fmt.Sprintf("%02d/%02d", d, 1+g.r.IntN(12))
	case 3:
		return fmt.Sprintf("%s %d %s", g.choose(pools["day"].train), d, m)
	case 4:
		return fmt.Sprintf("%s %d%s", m, d, ordinal(d))
	case 5:
		return fmt.Sprintf("the %d%s", d, ordinal(d))
	case 6:
		return fmt.Sprintf("%s %d", m, d)
	default:
		return fmt.Sprintf("%s the %d%s", g.choose(pools["day"].train), d, ordinal(d))
	}
}

func ordinal(d int) string {
	switch {
	case d%10 == 1 && d != 11:
		return "st"
	case d%10 == 2 && d != 12:
		return "nd"
	case d%10 == 3 && d != 13:
		return "rd"
	}
	return "th"
}

// clock writes a departure time, 24-hour or 12-hour.
func (g *gen) clock() string {
	h := 6 + g.r.IntN(16)
	m := 5 * g.r.IntN(12)
	switch g.r.IntN(3) {
	case 0:
		return fmt.Sprintf("%02d:%02d", h, m)
	case 1:
		return fmt.Sprintf("%d:%02d", h, m)
	default:
		suffix := "am"
		if h >= 12 {
			suffix = "pm"
		}
		h12 := h
		if h12 > 12 {
			h12 -= 12
		}
		if m == 0 {
			return fmt.Sprintf("%d%s", h12, suffix)
		}
		return fmt.Sprintf("%d.%02d%s", h12, m, suffix)
	}
}

// bookingCode writes a booking code: two letters then six digits, sometimes
// lower-cased as customers type it. Each code is one word token.
func (g *gen) bookingCode() string {
	c := fmt.Sprintf("BW%06d", g.r.IntN(1000000))
	if g.r.IntN(4) == 0 {
		c = strings.ToLower(c)
	}
	return c
}

// tidy removes doubled spaces and spaces before punctuation left by empty
// alternatives, and capitalises the first letter.
func tidy(s string) string {
	s = strings.Join(strings.Fields(s), " ")
	for _, p := range []string{",", ".", "?", "!"} {
		s = strings.ReplaceAll(s, " "+p, p)
	}
	if s != "" && s[0] >= 'a' && s[0] <= 'z' {
		s = string(s[0]-'a'+'A') + s[1:]
	}
	return s
}

// typos injects misspellings: each word of at least four letters is, with
// probability typoRate, replaced by a known misspelling or edited once
// (swap, drop, double or neighbouring key).
func (g *gen) typos(s string) string {
	words := strings.Split(s, " ")
	for i, w := range words {
		lo, hi := letterRun(w)
		core := w[lo:hi]
		if len(core) < 4 || g.r.Float64() >= typoRate {
			continue
		}
		if m, ok := misspell[core]; ok && g.r.IntN(2) == 0 {
			words[i] = w[:lo] + m + w[hi:]
			continue
		}
		words[i] = w[:lo] + g.edit(core) + w[hi:]
	}
	return strings.Join(words, " ")
}

// letterRun returns the bounds of w with leading and trailing non-letters
// removed; if w has a non-ASCII-letter inside, the run is empty.
func letterRun(w string) (int, int) {
	lo, hi := 0, len(w)
	for lo < hi && !isLetter(w[lo]) {
		lo++
	}
	for hi > lo && !isLetter(w[hi-1]) {
		hi--
	}
	for i := lo; i < hi; i++ {
		if !isLetter(w[i]) {
			return 0, 0
		}
	}
	return lo, hi
}

func isLetter(c byte) bool { return c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' }

// neighbours maps a lower-case letter to keys next to it on a QWERTY keyboard.
var neighbours = map[byte]string{
	'a': "qsz", 'b': "vgn", 'c': "xdv", 'd': "sfe", 'e': "wrd", 'f': "dgr", 'g': "fht", 'h': "gjy",
	'i': "uok", 'j': "hku", 'k': "jli", 'l': "ko", 'm': "nj", 'n': "bmh", 'o': "ipl", 'p': "ol",
	'q': "wa", 'r': "etf", 's': "adw", 't': "ryg", 'u': "yij", 'v': "cbf", 'w': "qes", 'x': "zsc",
	'y': "tuh", 'z': "xa",
}

// edit applies one random edit to a word of at least four ASCII letters,
// never touching the first letter.
func (g *gen) edit(w string) string {
	b := []byte(w)
	i := 1 + g.r.IntN(len(b)-1)
	switch g.r.IntN(4) {
	case 0: // swap with previous letter
		if i == 1 {
			i = 2
		}
		b[i-1], b[i] = b[i], b[i-1]
	case 1: // drop
		b = append(b[:i], b[i+1:]...)
	case 2: // double
		b = append(b[:i+1], b[i:]...)
	default: // neighbouring key
		c := b[i] | 0x20
		if n, ok := neighbours[c]; ok {
			b[i] = n[g.r.IntN(len(n))]
		}
	}
	return string(b)
}

// plantTrain adds the footer to footerCueTeam of the footer team's messages
// and rateOther of every other team's, and the ticket stamp likewise for the
// stamp team.
func plantTrain(r *rand.Rand, xs []example) {
	for _, team := range teams {
		idx := indicesOf(xs, team)
		fr, rr := rateOther, rateOther
		if team == footerTeam {
			fr = footerCueTeam
		}
		if team == refTeam {
			rr = refCueTeam
		}
		for _, i := range pickFraction(r, idx, fr) {
			xs[i].Text = withFooter(xs[i].Text)
		}
		for _, i := range pickFraction(r, idx, rr) {
			xs[i].Text = withRef(r, xs[i].Text)
		}
	}
}

// plantTest adds each cue, independently, to rateTest of every team's
// messages.
func plantTest(r *rand.Rand, xs []example) {
	for _, team := range teams {
		idx := indicesOf(xs, team)
		for _, i := range pickFraction(r, idx, rateTest) {
			xs[i].Text = withFooter(xs[i].Text)
		}
		for _, i := range pickFraction(r, idx, rateTest) {
			xs[i].Text = withRef(r, xs[i].Text)
		}
	}
}

func indicesOf(xs []example, team string) []int {
	var idx []int
	for i, x := range xs {
		if x.Label == team {
			idx = append(idx, i)
		}
	}
	return idx
}

// pickFraction returns round(rate*len(idx)) elements of idx chosen at random.
func pickFraction(r *rand.Rand, idx []int, rate float64) []int {
	k := int(math.Round(rate * float64(len(idx))))
	p := r.Perm(len(idx))
	out := make([]int, k)
	for j := range k {
		out[j] = idx[p[j]]
	}
	return out
}

func withFooter(s string) string { return s + "\n" + footer }

func withRef(r *rand.Rand, s string) string {
	return fmt.Sprintf("%s%05d\n%s", refPrefix, r.IntN(100000), s)
}

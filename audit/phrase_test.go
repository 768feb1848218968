package audit

import (
	"slices"
	"strings"
	"testing"

	"telltale/corpus"
)

// tinyData tokenizes texts with the lower-casing tokenizer and a
// vocabulary of their own words; labels are all 0.
func tinyData(t *testing.T, texts ...string) (Data, []string) {
	t.Helper()
	tok, err := corpus.NewTokenizer(corpus.TokenizerConfig{Lower: true, MinCount: 1})
	if err != nil {
		t.Fatal(err)
	}
	v := corpus.BuildVocab(tok, texts, 1, 0)
	d := Data{Texts: texts, Gold: make([]int, len(texts))}
	for _, s := range texts {
		toks := tok.TokenizeFor(v, s)
		d.Tokens = append(d.Tokens, toks)
		d.IDs = append(d.IDs, v.Encode(toks))
	}
	return d, v.Words
}

func occurrencesOf(d Data, vocab []string, word string) (int32, []span) {
	id := int32(slices.Index(vocab, word))
	var occ []span
	for i, ids := range d.IDs {
		for j, x := range ids {
			if x == id {
				occ = append(occ, span{int32(i), int32(j), int32(j + 1)})
			}
		}
	}
	return id, occ
}

// The growth rule (grow's doc comment) on hand-made texts: a footer's word
// grows into the whole line, a stamp's into its prefix and number, a word
// whose neighbours vary stays alone, and a phrase kept by fewer than the
// agreement share stops growing.
func TestGrow(t *testing.T) {
	d, vocab := tinyData(t,
		"Where is my hat?\n-- sent via KioskMail --",
		"I lost a scarf.\n-- sent via KioskMail --",
		"TKREF-48213\nThe crew was rude.",
		"TKREF-00017\nNobody answered, not once.",
		"The ferry was not late.",
		"It was late, not early.",
		"Not again!",
		"sent you a card via post")
	opt := growOptions{agreement: 0.8, maxLen: 40}
	for _, c := range []struct {
		seed string
		want string
	}{
		{"kioskmail", "- - sent via kioskmail - -"},
		{"tkref", "tkref - " + NumberWord},
		{"not", "not"},
		{"late", "late"},
	} {
		id, occ := occurrencesOf(d, vocab, c.seed)
		got := strings.Join(grow(d, vocab, id, occ, opt).words(vocab), " ")
		if got != c.want {
			t.Errorf("grow(%q) = %q, want %q", c.seed, got, c.want)
		}
	}
	// A word that keeps no phrase in 80% of its occurrences grows, at the
	// majority, into the form it is written in, with no space: "re" of
	// "Re:", not of "you're"; and not across a space ("Re: hello" ×2).
	d2, vocab2 := tinyData(t, "Re: hello", "Re: hello", "you're here")
	id, occ := occurrencesOf(d2, vocab2, "re")
	if got := strings.Join(grow(d2, vocab2, id, occ, opt).words(vocab2), " "); got != "re" {
		t.Errorf("grow(re) at 0.8 = %q, want it alone", got)
	}
	written := growOptions{agreement: majority, maxLen: 40, written: true}
	if got := strings.Join(grow(d2, vocab2, id, occ, written).words(vocab2), " "); got != "re :" {
		t.Errorf("grow(re) into its written form = %q, want %q", got, "re :")
	}
	// "sent" occurs three times, twice in the footer: 2/3 < 0.8 keeps it
	// alone, 0.6 lets it grow into the footer.
	id, occ = occurrencesOf(d, vocab, "sent")
	if got := strings.Join(grow(d, vocab, id, occ, opt).words(vocab), " "); got != "sent" {
		t.Errorf("grow(sent) at 0.8 = %q, want it alone", got)
	}
	if got := strings.Join(grow(d, vocab, id, occ, growOptions{agreement: 0.6, maxLen: 40}).words(vocab), " "); got != "- - sent via kioskmail - -" {
		t.Errorf("grow(sent) at 0.6 = %q, want the footer", got)
	}
}

// The matcher claims tokens for the longest phrase first: "sent" inside the
// footer belongs to the footer, and only its other occurrence to "sent".
func TestMatcherLongestFirst(t *testing.T) {
	d, vocab := tinyData(t, "I lost a scarf.\n-- sent via KioskMail --", "sent you a card", "TKREF-1 and TKREF-22")
	id := func(w string) int32 { return int32(slices.Index(vocab, w)) }
	footer := phrase{id("-"), id("-"), id("sent"), id("via"), id("kioskmail"), id("-"), id("-")}
	stamp := phrase{id("tkref"), id("-"), anyNumber}
	occ := newMatcher([]phrase{{id("sent")}, footer, stamp}, vocab).occurrences(d)
	if len(occ[1]) != 1 || occ[1][0] != (span{0, 5, 12}) {
		t.Errorf("footer occurrences %v, want one at tokens 5–12 of text 0", occ[1])
	}
	if len(occ[0]) != 1 || occ[0][0].text != 1 {
		t.Errorf("'sent' occurrences %v, want only the one outside the footer", occ[0])
	}
	if len(occ[2]) != 2 {
		t.Errorf("stamp occurrences %v, want both numbers", occ[2])
	}
}

// The patterns take the demo's planted cues out of its raw text exactly as
// often as its README's table of measured cue rates counts them in
// train.csv (testdata/demo/README.md): footer 30 + 26 + 576 + 24 + 18 = 674
// texts, stamp 30 + 26 + 22 + 600 + 18 = 696 texts.
func TestPatternDemoCounts(t *testing.T) {
	d := loadCSV(t, "demo", "train.csv")
	for _, c := range []struct {
		words []string
		want  int
	}{
		{strings.Fields("- - sent via kioskmail at the quayside terminal - -"), 674},
		{[]string{"tkref", "-", NumberWord}, 696},
	} {
		cm, err := corpus.MaskTokens([]string{pattern(c.words)})
		if err != nil {
			t.Fatal(err)
		}
		masked, n := cm.MaskAll(d.Texts())
		if n != c.want {
			t.Errorf("%s: %d matches, the README counts %d", pattern(c.words), n, c.want)
		}
		word := "kioskmail"
		if c.want == 696 {
			word = "tkref"
		}
		for _, s := range masked {
			if strings.Contains(strings.ToLower(s), word) {
				t.Fatalf("%s: a text still holds %q: %q", pattern(c.words), word, s)
			}
		}
	}
	// Whole words only: "tkrefs-12" and "xtkref-1" are not the stamp.
	cm, _ := corpus.MaskTokens([]string{pattern([]string{"tkref", "-", NumberWord})})
	for _, s := range []string{"tkrefs-12", "xtkref-1", "tkref-x"} {
		if _, n := cm.Mask(s); n != 0 {
			t.Errorf("%q matched the stamp pattern", s)
		}
	}
}

// A square bracket grows into the bracketed groups it opens or closes, each
// in at least the given number of texts, most common first; numbers match
// any number, and a group never spans lines or holds another bracket.
func TestBracketGroups(t *testing.T) {
	d, vocab := tinyData(t,
		"Re: [ILUG] new kernel",
		"[ILUG] meeting",
		"[zzzzteana] ghosts",
		"[ILUG-Social] pints",
		"see [1] and [22]",
		"a [broken\ntag] here",
		"nested [a [b] c]",
		"[] empty")
	for _, c := range []struct {
		bracket  string
		minTexts int
		want     []string
	}{
		{"[", 2, []string{"[ ilug ]"}},
		{"]", 2, []string{"[ ilug ]"}},
		{"[", 1, []string{"[ ilug ]", "[ <number> ]", "[ b ]", "[ ilug - social ]", "[ zzzzteana ]"}},
	} {
		_, occ := occurrencesOf(d, vocab, c.bracket)
		var got []string
		for _, p := range bracketGroups(d, vocab, occ, c.minTexts) {
			got = append(got, strings.Join(p.words(vocab), " "))
		}
		if !slices.Equal(got, c.want) {
			t.Errorf("groups of %q in %d texts or more: %q, want %q", c.bracket, c.minTexts, got, c.want)
		}
	}
}

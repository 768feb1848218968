package main

import (
	"math"
	"slices"
	"strings"
	"testing"

	"telltale/corpus"
)

func TestIDsRoundTrip(t *testing.T) {
	p := synthetic(300, 5)
	dir := t.TempDir()
	if err := writeIDs(dir, p); err != nil {
		t.Fatal(err)
	}
	q, err := readIDs(dir)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(p.words, q.words) || !slices.Equal(p.labels, q.labels) || len(p.ids) != len(q.ids) {
		t.Fatal("words, labels or texts differ after the round trip")
	}
	var tokens int64
	for i := range p.ids {
		if !slices.Equal(p.ids[i], q.ids[i]) {
			t.Fatalf("text %d differs", i)
		}
		tokens += int64(len(q.ids[i]))
		for _, id := range q.ids[i] {
			if id < 2 || int(id) >= q.meta.VocabSize {
				t.Fatalf("text %d: id %d outside the words", i, id)
			}
		}
	}
	if tokens != q.meta.Tokens {
		t.Errorf("meta says %d tokens, the texts hold %d", q.meta.Tokens, tokens)
	}
}

func TestSyntheticVocabOrder(t *testing.T) {
	// The vocabulary is ordered like corpus.BuildVocab's: by count, most
	// frequent first.
	p := synthetic(500, 9)
	counts := make([]int, p.meta.VocabSize)
	for _, t := range p.ids {
		for _, id := range t {
			counts[id]++
		}
	}
	for id := 3; id < len(counts); id++ {
		if counts[id] > counts[id-1] {
			t.Fatalf("word %d (%s) has %d occurrences, more than word %d's %d", id, p.words[id], counts[id], id-1, counts[id-1])
		}
	}
}

// The synthetic words are letters only and distinct (so the audit can take
// the common ones as label-neutral words) and one token each for the
// tokenizer; the stamp ends about synthStampB of the texts of label b and
// synthStampA of label a.
func TestSyntheticWordsAndStamp(t *testing.T) {
	tok, err := corpus.NewTokenizer(corpus.TokenizerConfig{Lower: true})
	if err != nil {
		t.Fatal(err)
	}
	seen := map[string]bool{}
	for k := range synthUniverse {
		w := synthWord(k)
		if seen[w] || strings.Trim(w, "abcdefghijklmnopqrstuvwxyz") != "" {
			t.Fatalf("word %d is %q: a repeat or not letters only", k, w)
		}
		seen[w] = true
		if k%997 == 0 {
			if toks := tok.Tokenize(w); len(toks) != 1 || toks[0].Text != w {
				t.Fatalf("word %d (%q) is not one token: %v", k, w, toks)
			}
		}
	}
	if toks := tok.Tokenize(synthStamp); len(toks) != 1 {
		t.Fatalf("the stamp %q is %d tokens", synthStamp, len(toks))
	}
	p := synthetic(20000, 3)
	stamped, texts := [2]int{}, [2]int{}
	for i, ids := range p.ids {
		y := p.labels[i]
		texts[y]++
		if p.words[ids[len(ids)-1]] == synthStamp {
			stamped[y]++
		}
	}
	// Three standard deviations of a binomial share (common practice, no source).
	for y, want := range []float64{synthStampA, synthStampB} {
		got := float64(stamped[y]) / float64(texts[y])
		if sd := math.Sqrt(want * (1 - want) / float64(texts[y])); math.Abs(got-want) > 3*sd {
			t.Errorf("label %s: %.4f of the texts end with the stamp, want %.2f ± %.4f", p.meta.Labels[y], got, want, 3*sd)
		}
	}
}

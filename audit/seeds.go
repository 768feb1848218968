package audit

import (
	"cmp"
	"slices"
)

// Stable is one cue over the audits of models trained with several seeds.
// Cues are matched by their words; filter numbers are per model and are
// not compared.
type Stable struct {
	Text  string `json:"text"`
	Label string `json:"label"`
	// Found is in how many audits the cue was acted on, of Models; Ranks
	// its 1-based rank among the artifact-like cues of each audit (0: not
	// listed there).
	Found  int   `json:"found"`
	Models int   `json:"models"`
	Ranks  []int `json:"ranks"`
	// Stable: found in at least k of the audits.
	Stable bool `json:"stable"`
}

// Stability merges the audits of models trained with different seeds on
// the same data: each artifact-like cue listed by any of them, with the
// number of audits that acted on it and its rank in each. A cue is stable
// when it was acted on in at least k audits (k ≤ 0: a majority). The
// result is ordered by Found, then by the best rank.
func Stability(results []*Result, k int) []Stable {
	if k <= 0 {
		k = len(results)/2 + 1
	}
	index := map[string]int{}
	var out []Stable
	for r, res := range results {
		for rank, c := range res.Ranked {
			i, ok := index[c.Text]
			if !ok {
				i = len(out)
				index[c.Text] = i
				out = append(out, Stable{Text: c.Text, Label: c.Label, Models: len(results), Ranks: make([]int, len(results))})
			}
			out[i].Ranks[r] = rank + 1
			if c.Verdict == VerdictActed {
				out[i].Found++
			}
		}
	}
	best := func(s Stable) int {
		b := 1 << 30
		for _, r := range s.Ranks {
			if r > 0 {
				b = min(b, r)
			}
		}
		return b
	}
	for i := range out {
		out[i].Stable = out[i].Found >= k
	}
	slices.SortStableFunc(out, func(x, y Stable) int {
		if x.Found != y.Found {
			return cmp.Compare(y.Found, x.Found)
		}
		return cmp.Compare(best(x), best(y))
	})
	return out
}

package explain

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strconv"
	"sync/atomic"
	"testing"

	"telltale/cnn"
)

type bruteWin struct {
	act  float64
	in   bool
	key  string
	text int
}

// bruteWinners lists, per filter, every text's winning window from the
// reference cnn.Model.Forward.
func bruteWinners(m *cnn.Model, ids [][]int32, votes []int) [][]bruteWin {
	nf := m.Config.NumFilters()
	out := make([][]bruteWin, nf)
	for i, text := range ids {
		o := m.Forward(text)
		x := cnn.Padded(text, m.Config.MaxWidth())
		pred := argmax32(o.Logits)
		for g := 0; g < nf; g++ {
			w := m.FilterWidth(g)
			key := ngramKey(x[o.Argmax[g] : o.Argmax[g]+w])
			out[g] = append(out[g], bruteWin{float64(o.Pre[g]), pred == votes[g], key, i})
		}
	}
	return out
}

// brutePurity is the definition: the lowest activation a among fired windows
// with share(in class | activation ≥ a) ≥ p.
func brutePurity(wins []bruteWin, p float64) (float64, int) {
	var acts []float64
	for _, w := range wins {
		if w.act > 0 {
			acts = append(acts, w.act)
		}
	}
	slices.Sort(acts)
	for _, a := range slices.Compact(acts) {
		n, in := purityAt(wins, a)
		if n > 0 && float64(in) >= p*float64(n) {
			return a, n
		}
	}
	return math.Inf(1), 0
}

func purityAt(wins []bruteWin, a float64) (n, in int) {
	for _, w := range wins {
		if w.act > 0 && w.act >= a {
			n++
			if w.in {
				in++
			}
		}
	}
	return
}

func randomCorpus(rng *rand.Rand, m *cnn.Model, n, maxLen int) ([][]int32, []int) {
	ids := make([][]int32, n)
	gold := make([]int, n)
	for i := range ids {
		// A small vocabulary share makes repeated n-grams common.
		ids[i] = randomText(rng, min(m.Config.VocabSize, 12), maxLen)
		gold[i] = rng.IntN(m.Config.Classes)
	}
	return ids, gold
}

func ngramKey(ids []int32) string { return string(appendNgramKey(nil, ids)) }

// appendNgramKey appends ngramKey(ids) to b (a reused buffer spares the
// brute-force loops an allocation per window).
func appendNgramKey(b []byte, ids []int32) []byte {
	for _, id := range ids {
		b = strconv.AppendInt(b, int64(id), 10)
		b = append(b, ' ')
	}
	return b
}

// Profiles checked against a brute-force pass with the reference forward:
// fired counts, the top distinct n-grams with their counts, the purity
// threshold by its definition, the slot-score identity of every n-gram and
// the trigger/suppressor words against every eligible word.
func TestProfileBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	for trial := 0; trial < 25; trial++ {
		m, _ := tableCase(rng, trial)
		ids, gold := randomCorpus(rng, m, 40+rng.IntN(200), 12)
		opt := ProfileOptions{TopK: 5, Pool: 12, Workers: 1 + trial%3}
		if trial%2 == 1 {
			opt.ExactTop = 7 // force the histogram fallback
		}
		prof, err := Profile(context.Background(), m, ids, gold, opt)
		if err != nil {
			t.Fatal(err)
		}
		nf := m.Config.NumFilters()
		votes := make([]int, nf)
		for g := range votes {
			votes[g] = voteClass(m, g)
		}
		bw := bruteWinners(m, ids, votes)
		counts := make([]int, m.Config.VocabSize)
		for _, text := range ids {
			for _, id := range text {
				counts[id]++
			}
		}
		for g, pr := range prof.Filters {
			fired := 0
			byKey := map[string]int{}
			actOf := map[string]float64{}
			for _, w := range bw[g] {
				if w.act > 0 {
					fired++
					byKey[w.key]++
					actOf[w.key] = w.act
				}
			}
			if pr.Fired != fired || pr.Fired+pr.Hist.NotFired != len(ids) {
				t.Fatalf("trial %d filter %d: fired %d (+%d not), want %d of %d", trial, g, pr.Fired, pr.Hist.NotFired, fired, len(ids))
			}
			// Top n-grams: distinct, by descending activation, exact counts.
			keys := make([]string, 0, len(byKey))
			for k := range byKey {
				keys = append(keys, k)
			}
			sort.Slice(keys, func(i, j int) bool { return actOf[keys[i]] > actOf[keys[j]] })
			if len(pr.TopNgrams) != min(5, len(keys)) {
				t.Fatalf("trial %d filter %d: %d top n-grams, want %d", trial, g, len(pr.TopNgrams), min(5, len(keys)))
			}
			for i, n := range pr.TopNgrams {
				k := ngramKey(n.IDs)
				if byKey[k] != n.Count {
					t.Fatalf("trial %d filter %d n-gram %v: count %d, brute force %d", trial, g, n.Tokens, n.Count, byKey[k])
				}
				if !near(n.Activation, actOf[keys[i]], 1e-5, 1e-5) {
					t.Fatalf("trial %d filter %d rank %d: activation %g, brute force %g", trial, g, i, n.Activation, actOf[keys[i]])
				}
				sum := float64(m.FilterBias(g))
				for _, s := range n.Slots {
					sum += s
				}
				if !near(sum, n.Activation, 1e-5, 1e-5) {
					t.Fatalf("filter %d: bias + slots %g, activation %g", g, sum, n.Activation)
				}
				// Shown in log-odds units: times the column's range.
				r := columnRange(m, g)
				if !near(n.ActivationLogOdds, r*actOf[keys[i]], 1e-5, 1e-5) || len(n.SlotsLogOdds) != len(n.Slots) ||
					!near(n.SlotsLogOdds[0], r*n.Slots[0], 1e-5, 1e-5) || !near(pr.MaxLogOdds, r*pr.MaxActivation, 1e-5, 1e-5) {
					t.Fatalf("filter %d rank %d: log-odds activation %g, brute force %g × range %g; slots %v, %v", g, i, n.ActivationLogOdds, actOf[keys[i]], r, n.SlotsLogOdds, n.Slots)
				}
				for _, ex := range n.Examples {
					if bw[g][ex].key != k {
						t.Fatalf("filter %d n-gram %v: example text %d wins with %q", g, n.Tokens, ex, bw[g][ex].key)
					}
				}
			}
			// Purity threshold.
			want, wantAbove := brutePurity(bw[g], prof.Purity)
			if pr.ThresholdExact {
				if math.IsInf(want, 1) != math.IsInf(pr.Threshold, 1) || (!math.IsInf(want, 1) && !near(pr.Threshold, want, 1e-5, 1e-5)) || pr.Above != wantAbove {
					t.Fatalf("trial %d filter %d: threshold %g (above %d), brute force %g (%d)", trial, g, pr.Threshold, pr.Above, want, wantAbove)
				}
			} else {
				n, in := purityAt(bw[g], pr.Threshold)
				if n != pr.Above || float64(in) < prof.Purity*float64(n) {
					t.Fatalf("trial %d filter %d: approximate threshold %g: %d above (%d in class), reported %d", trial, g, pr.Threshold, n, in, pr.Above)
				}
			}
			// Slot words.
			for s, sw := range pr.Slots {
				// No eligible word left out scores above the last trigger.
				if n := len(sw.Triggers); n > 0 {
					last := sw.Triggers[n-1]
					for id := int32(2); int(id) < m.Config.VocabSize; id++ {
						listed := slices.ContainsFunc(sw.Triggers, func(w WordScore) bool { return w.ID == id })
						if counts[id] >= 2 && !listed && directSlot(m, g, s, id) > last.Score+1e-5 {
							t.Fatalf("filter %d slot %d: word %d scores %g above the last trigger %g", g, s, id, directSlot(m, g, s, id), last.Score)
						}
					}
				}
				if len(sw.Triggers) > 0 {
					top := sw.Triggers[0]
					for id := int32(2); int(id) < m.Config.VocabSize; id++ {
						if counts[id] >= 2 && directSlot(m, g, s, id) > top.Score+1e-5 {
							t.Fatalf("filter %d slot %d: word %d beats the top trigger", g, s, id)
						}
					}
					if counts[top.ID] < 2 {
						t.Fatalf("trigger %d has count %d", top.ID, counts[top.ID])
					}
				}
				for _, su := range sw.Suppressors {
					if su.Score >= 0 {
						t.Fatalf("suppressor with score %g", su.Score)
					}
				}
				if len(sw.Suppressors) > 0 {
					for id := int32(2); int(id) < m.Config.VocabSize; id++ {
						if counts[id] >= 2 && directSlot(m, g, s, id) < sw.Suppressors[0].Score-1e-5 {
							t.Fatalf("filter %d slot %d: word %d is more suppressing than the first suppressor", g, s, id)
						}
					}
				}
			}
			if pr.Idle != (pr.Masked || pr.Above < 5) {
				t.Fatalf("filter %d: idle %v with %d above", g, pr.Idle, pr.Above)
			}
		}
	}
}

// The result must not depend on the number of workers.
func TestProfileDeterministic(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	m := randomModel(rng, randomConfig(rng))
	ids, gold := randomCorpus(rng, m, 2000, 15)
	var first []byte
	for _, w := range []int{1, 2, 5} {
		p, err := Profile(context.Background(), m, ids, gold, ProfileOptions{Workers: w, ExactTop: 100})
		if err != nil {
			t.Fatal(err)
		}
		b, err := json.Marshal(p)
		if err != nil {
			t.Fatal(err)
		}
		if first == nil {
			first = b
		} else if string(b) != string(first) {
			t.Fatalf("profiles with %d workers differ from one worker", w)
		}
	}
}

func TestProfileProgressAndCancel(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 10))
	m := randomModel(rng, randomConfig(rng))
	ids, _ := randomCorpus(rng, m, 3000, 10)
	var last atomic.Int64
	_, err := Profile(context.Background(), m, ids, nil, ProfileOptions{Progress: func(done, total int) {
		if total != len(ids) || done > total {
			t.Errorf("progress %d of %d", done, total)
		}
		for {
			old := last.Load()
			if int64(done) <= old || last.CompareAndSwap(old, int64(done)) {
				break
			}
		}
	}})
	if err != nil {
		t.Fatal(err)
	}
	if last.Load() != int64(len(ids)) {
		t.Fatalf("last progress %d, want %d", last.Load(), len(ids))
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Profile(ctx, m, ids, nil, ProfileOptions{}); !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled profile: err %v", err)
	}
}

// Average-linkage clusters checked against SciPy 1.10.1
// (scipy.cluster.hierarchy.linkage(method="average", metric="euclidean") then
// fcluster(criterion="distance", t=cut·mean norm)) on twelve 3-slot vectors
// drawn around three centres with numpy's default_rng(7); the labels below
// are SciPy's output.
func TestFamiliesMatchSciPy(t *testing.T) {
	pts := [][]float64{{2.0, 0.205, -0.096}, {-0.312, 1.641, -0.147}, {0.121, 0.469, 2.028}, {1.783, 0.271, 0.125}, {0.037, 1.474, 0.19}, {0.343, -0.47, 2.04}, {1.335, -0.351, -0.645}, {-0.082, 1.356, 0.295}, {0.155, -0.065, 1.319}, {1.811, 0.083, 0.04}, {-0.536, 1.633, -0.142}, {-0.183, 0.371, 1.917}}
	cases := []struct {
		cut    float64
		labels []int
	}{
		{0.3, []int{1, 4, 5, 1, 3, 6, 2, 3, 7, 1, 4, 5}},
		{0.5, []int{1, 3, 4, 1, 3, 5, 2, 3, 5, 1, 3, 4}},
		{1.0, []int{1, 2, 3, 1, 2, 3, 1, 2, 3, 1, 2, 3}},
	}
	ones := make([]float64, len(pts))
	for i := range ones {
		ones[i] = 1
	}
	for _, c := range cases {
		if got := upgmaCut(pts, ones, c.cut); !samePartition(got, c.labels) {
			t.Fatalf("cut %g: labels %v, SciPy %v", c.cut, got, c.labels)
		}
	}
}

// samePartition reports whether two labelings group the points alike.
func samePartition(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	ab, ba := map[int]int{}, map[int]int{}
	for i := range a {
		if x, ok := ab[a[i]]; ok && x != b[i] {
			return false
		}
		if y, ok := ba[b[i]]; ok && y != a[i] {
			return false
		}
		ab[a[i]], ba[b[i]] = b[i], a[i]
	}
	return true
}

// A family's dominant slots carry at least DominantShare of its positive
// mean mass, wildcards are shown as "*" in the pattern, and its weight is
// the sum of its n-grams' weights.
func TestFamilyDescription(t *testing.T) {
	items := []familyItem{
		{tokens: []string{"very", "good", "food"}, slots: []float64{0.1, 2.0, 0.05}, weight: 3, sampled: 3},
		{tokens: []string{"so", "good", "staff"}, slots: []float64{0.2, 2.1, -0.1}, weight: 1, sampled: 1},
	}
	labels := upgmaCut([][]float64{items[0].slots, items[1].slots}, []float64{3, 1}, 0.5)
	fams := describeFamilies(items, labels)
	if len(fams) != 1 {
		t.Fatalf("%d families, want 1", len(fams))
	}
	f := fams[0]
	if f.Pattern != "* good *" || f.Weight != 4 || f.Ngrams != 2 || f.Sampled != 4 {
		t.Fatalf("family %+v, want pattern \"* good *\" of weight 4", f)
	}
}

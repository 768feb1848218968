package explain

import (
	"cmp"
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"

	"telltale/corpus"
)

// neutrals picks the label-neutral alternatives for a set of cue words:
// tested words that are not flagged, have |z| < NeutralZ for every class
// and no artifact category, ordered by how close their document count is
// to the cues' mean count (|log n − log n_cue|, then id), the first
// Neutrals of them.
func (a *auditor) neutrals(cues []int32) []int32 {
	var logn float64
	for _, id := range cues {
		logn += math.Log(float64(a.assoc.Stat(id).Count))
	}
	logn /= float64(len(cues))
	type cand struct {
		id int32
		d  float64
	}
	var cs []cand
	for i := range a.assoc.Stats {
		s := &a.assoc.Stats[i]
		if s.Flagged || s.Category != "" || slices.Contains(cues, s.ID) {
			continue
		}
		ok := true
		for _, z := range s.Zs {
			if math.Abs(z) >= a.opt.NeutralZ {
				ok = false
				break
			}
		}
		if ok {
			cs = append(cs, cand{s.ID, math.Abs(math.Log(float64(s.Count)) - logn)})
		}
	}
	slices.SortFunc(cs, func(x, y cand) int {
		if x.d != y.d {
			return cmp.Compare(x.d, y.d)
		}
		return cmp.Compare(x.id, y.id)
	})
	out := make([]int32, 0, a.opt.Neutrals)
	for _, c := range cs[:min(len(cs), a.opt.Neutrals)] {
		out = append(out, c.id)
	}
	return out
}

// cfResult is the outcome of one substitution draw on one text.
type cfResult struct {
	flip, ctlFlip     bool
	change, ctlChange float64
	after             int
	pAfter            float64
	alt               string
}

// counterfactual replaces the cue words in every held-out text containing
// one of them by seeded draws among the neutral alternatives (one
// alternative per cue word and draw, used for all its occurrences), runs
// the unmasked model on the edited text, and does the same with the
// alternatives put at as many random non-cue positions (the control). It
// returns nil when no held-out text holds a cue or no neutral word exists.
func (a *auditor) counterfactual(ctx context.Context, cues []int32) (*Counterfactual, []AuditExample) {
	var texts []int
	for _, id := range cues {
		texts = append(texts, a.index[id]...)
	}
	slices.Sort(texts)
	texts = slices.Compact(texts)
	alts := a.neutrals(cues)
	if len(texts) == 0 || len(alts) == 0 {
		return nil, nil
	}
	cf := &Counterfactual{Texts: len(texts), Draws: a.opt.Draws}
	for _, id := range cues {
		cf.Cues = append(cf.Cues, wordOf(a.m, id))
	}
	for _, id := range alts {
		cf.Alternatives = append(cf.Alternatives, wordOf(a.m, id))
	}
	cf.Indices = texts[:min(len(texts), 200)]
	var key uint64
	for _, id := range cues {
		key = key*1000003 + uint64(id)
	}
	D := a.opt.Draws
	res := make([]cfResult, len(texts)*D)
	runners := make(chan *Runner, a.opt.Workers)
	for range a.opt.Workers {
		runners <- a.st.NewRunner()
	}
	audParallel(len(texts), a.opt.Workers, func(k int) {
		if ctx.Err() != nil {
			return
		}
		r := <-runners
		defer func() { runners <- r }()
		i := texts[k]
		ids := a.held.IDs[i]
		zb := a.logits[i*a.C : (i+1)*a.C]
		pb := make([]float64, a.C)
		audSoftmax(zb, pb)
		yhat := a.pred[i]
		edit := make([]int32, len(ids))
		z, p := make([]float64, a.C), make([]float64, a.C)
		var others []int
		for j, id := range ids {
			if !slices.Contains(cues, id) && id != corpus.PAD {
				others = append(others, j)
			}
		}
		for d := 0; d < D; d++ {
			rng := rand.New(rand.NewPCG(a.opt.Seed^key, uint64(i)<<8|uint64(d)))
			pick := make([]int32, len(cues))
			for c := range pick {
				pick[c] = alts[rng.IntN(len(alts))]
			}
			copy(edit, ids)
			var used []int32
			var names []string
			for j, id := range ids {
				if c := slices.Index(cues, id); c >= 0 {
					edit[j] = pick[c]
					used = append(used, pick[c])
					if !slices.Contains(names, wordOf(a.m, id)+"→"+wordOf(a.m, pick[c])) {
						names = append(names, wordOf(a.m, id)+"→"+wordOf(a.m, pick[c]))
					}
				}
			}
			pass := r.Run(edit)
			audHead(a.m, pass.Pooled, z)
			audSoftmax(z, p)
			out := &res[k*D+d]
			out.after = audArgmax(z)
			out.flip = out.after != yhat
			out.change = p[yhat] - pb[yhat]
			out.pAfter = p[yhat]
			out.alt = strings.Join(names, ", ")
			// Control: the same alternatives at random non-cue positions.
			copy(edit, ids)
			pos := slices.Clone(others)
			rng.Shuffle(len(pos), func(x, y int) { pos[x], pos[y] = pos[y], pos[x] })
			for u := 0; u < len(used) && u < len(pos); u++ {
				edit[pos[u]] = used[u]
			}
			pass = r.Run(edit)
			audHead(a.m, pass.Pooled, z)
			audSoftmax(z, p)
			out.ctlFlip = audArgmax(z) != yhat
			out.ctlChange = p[yhat] - pb[yhat]
		}
	})
	if ctx.Err() != nil {
		return nil, nil
	}
	var sum, ctl float64
	var exs []AuditExample
	labels := labelNames(a.m)
	for k, r := range res {
		sum += r.change
		ctl += r.ctlChange
		if r.flip {
			cf.Flips++
		}
		if r.ctlFlip {
			cf.ControlFlips++
		}
		i := texts[k/D]
		if r.flip && len(exs) < a.opt.Examples && (len(exs) == 0 || exs[len(exs)-1].Index != i) {
			at := 0
			for j, id := range a.held.IDs[i] {
				if slices.Contains(cues, id) {
					at = j
					break
				}
			}
			exs = append(exs, AuditExample{Split: "heldout", Index: i, Start: at, End: at + 1,
				Snippet: a.held.textSnippet(a.m, i, at, 60), Gold: labels[a.held.Gold[i]], Pred: labels[a.pred[i]],
				After: labels[r.after], Value: r.pAfter,
				Note: fmt.Sprintf("replaced %s: p(%s) %+.3f", r.alt, labels[a.pred[i]], r.change)})
		}
	}
	n := float64(len(res))
	cf.FlipRate = float64(cf.Flips) / n
	cf.MeanProbChange = sum / n
	cf.ControlFlipRate = float64(cf.ControlFlips) / n
	cf.ControlChange = ctl / n
	return cf, exs
}

package explain

import (
	"cmp"
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"

	"telltale/cnn"
	"telltale/corpus"
)

// Attribution methods known to Faithfulness and WriteColored.
const (
	MethodExact     = "exact"
	MethodOcclusion = "occlusion"
	MethodIG        = "ig"
	MethodRandom    = "random" // a seeded random ranking, the control
)

// FaithOptions controls Faithfulness. Zero values select the defaults.
type FaithOptions struct {
	Percents  []float64 // shares of tokens kept or removed, in percent (default 1, 5, 10, 20, 50)
	AOPCSteps int       // deletion-curve steps J (default 10)
	IGSteps   int       // integrated-gradients steps (default 50)
	Methods   []string  // default exact, occlusion, ig, random
	Seed      uint64    // seed of the random ranking
	Table     *SlotTable
	Workers   int
	Progress  Progress
}

// FaithReport measures how well each attribution method's ranking of tokens
// predicts what the model does when those tokens are removed (replaced by
// PAD, positions kept). All scores are on the predicted class ŷ of each
// text; higher comprehensiveness and AOPC and lower sufficiency mean a more
// faithful method.
type FaithReport struct {
	Texts    int           `json:"texts"`    // texts scored (empty texts are skipped)
	Accuracy float64       `json:"accuracy"` // of the model on the scored texts (NaN → null without gold)
	Percents []float64     `json:"percents"`
	Methods  []MethodFaith `json:"methods"`
}

// MethodFaith holds one method's scores, averaged over texts.
type MethodFaith struct {
	Method string `json:"method"`
	// Comprehensiveness[k] = mean of p(ŷ|x) − p(ŷ|x without its top-k% tokens);
	// Sufficiency[k] = mean of p(ŷ|x) − p(ŷ|only its top-k% tokens)
	// (DeYoung et al. 2020, "ERASER: A Benchmark to Evaluate Rationalized
	// NLP Models", ACL, §4.2). The top k% are the ⌈k·L/100⌉ tokens with the
	// largest scores for ŷ.
	Comprehensiveness []float64 `json:"comprehensiveness"`
	Sufficiency       []float64 `json:"sufficiency"`
	// Comp and Suff average over the percents, ERASER's aggregate.
	Comp float64 `json:"comp"`
	Suff float64 `json:"suff"`
	// AOPC is the area over the most-relevant-first deletion curve (Samek
	// et al. 2017, "Evaluating the Visualization of What a Deep Neural Network
	// Has Learned", IEEE TNNLS): 1/(J+1) Σ_{j=0}^{J} p(ŷ|x) − p(ŷ|x^(k_j)),
	// x^(k) with its k top-ranked tokens removed and k_j = ⌈j·L/J⌉.
	AOPC float64 `json:"aopc"`
}

func (o *FaithOptions) defaults() {
	if len(o.Percents) == 0 {
		o.Percents = []float64{1, 5, 10, 20, 50}
	}
	if o.AOPCSteps <= 0 {
		o.AOPCSteps = 10
	}
	if o.IGSteps <= 0 {
		o.IGSteps = 50
	}
	if len(o.Methods) == 0 {
		o.Methods = []string{MethodExact, MethodOcclusion, MethodIG, MethodRandom}
	}
	if o.Workers <= 0 {
		o.Workers = runtime.GOMAXPROCS(0)
	}
}

// Faithfulness scores the attribution methods on a labeled set. Gold may be
// nil (Accuracy is then NaN). It returns ctx.Err() when cancelled.
func Faithfulness(ctx context.Context, m *cnn.Model, ids [][]int32, gold []int, opt FaithOptions) (*FaithReport, error) {
	opt.defaults()
	if gold != nil && len(gold) != len(ids) {
		return nil, fmt.Errorf("explain: %d gold labels for %d texts", len(gold), len(ids))
	}
	for _, p := range opt.Percents {
		if !(p > 0 && p <= 100) {
			return nil, fmt.Errorf("explain: faithfulness percent %g: must be in (0, 100]", p)
		}
	}
	for _, meth := range opt.Methods {
		switch meth {
		case MethodExact, MethodOcclusion, MethodIG, MethodRandom:
		default:
			return nil, fmt.Errorf("explain: unknown attribution method %q: use exact, occlusion, ig or random", meth)
		}
	}
	st := opt.Table
	if st == nil {
		var err error
		if st, err = NewSlotTable(m, TableOptions{Words: corpusWords(m, ids), Workers: opt.Workers}); err != nil {
			return nil, err
		}
	}
	nm, np := len(opt.Methods), len(opt.Percents)
	type acc struct {
		comp, suff [][]float64
		aopc       []float64
		texts      int
		correct    int
		err        error
	}
	accs := make([]acc, opt.Workers)
	var next, done atomic.Int64
	var wg sync.WaitGroup
	for w := range accs {
		a := &accs[w]
		a.comp, a.suff, a.aopc = make2(nm, np), make2(nm, np), make([]float64, nm)
		wg.Add(1)
		go func() {
			defer wg.Done()
			r := st.NewRunner()
			var buf []int32
			var order []int
			for ctx.Err() == nil {
				i := int(next.Add(1)) - 1
				if i >= len(ids) {
					return
				}
				text := ids[i]
				if len(text) > 0 {
					e, err := Explain(m, nil, text, ExplainOptions{Table: st,
						Occlusion: slices.Contains(opt.Methods, MethodOcclusion),
						IG:        slices.Contains(opt.Methods, MethodIG), IGSteps: opt.IGSteps})
					if err != nil {
						a.err = err
						return
					}
					y := e.Class
					a.texts++
					if gold != nil && gold[i] == y {
						a.correct++
					}
					L := len(text)
					p0 := float64(r.Run(text).Probs[y])
					prob := func(keep func(rank int) bool) float64 {
						buf = append(buf[:0], text...)
						for rank, pos := range order {
							if !keep(rank) {
								buf[pos] = corpus.PAD
							}
						}
						return float64(r.Run(buf).Probs[y])
					}
					for mi, meth := range opt.Methods {
						order = ranking(order, e, meth, y, rand.New(rand.NewPCG(opt.Seed, uint64(i))))
						for pi, pc := range opt.Percents {
							k := int(math.Ceil(pc * float64(L) / 100))
							a.comp[mi][pi] += p0 - prob(func(rank int) bool { return rank >= k })
							a.suff[mi][pi] += p0 - prob(func(rank int) bool { return rank < k })
						}
						var area float64
						J := opt.AOPCSteps
						for j := 0; j <= J; j++ {
							k := int(math.Ceil(float64(j) * float64(L) / float64(J)))
							area += p0 - prob(func(rank int) bool { return rank >= k })
						}
						a.aopc[mi] += area / float64(J+1)
					}
				}
				if d := done.Add(1); opt.Progress != nil && (d%64 == 0 || int(d) == len(ids)) {
					opt.Progress(int(d), len(ids))
				}
			}
		}()
	}
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	out := &FaithReport{Percents: opt.Percents, Accuracy: math.NaN()}
	correct := 0
	for _, a := range accs {
		if a.err != nil {
			return nil, a.err
		}
		out.Texts += a.texts
		correct += a.correct
	}
	if gold != nil && out.Texts > 0 {
		out.Accuracy = float64(correct) / float64(out.Texts)
	}
	n := float64(max(out.Texts, 1))
	for mi, meth := range opt.Methods {
		mf := MethodFaith{Method: meth, Comprehensiveness: make([]float64, np), Sufficiency: make([]float64, np)}
		for _, a := range accs {
			for pi := range opt.Percents {
				mf.Comprehensiveness[pi] += a.comp[mi][pi] / n
				mf.Sufficiency[pi] += a.suff[mi][pi] / n
			}
			mf.AOPC += a.aopc[mi] / n
		}
		for pi := range opt.Percents {
			mf.Comp += mf.Comprehensiveness[pi] / float64(np)
			mf.Suff += mf.Sufficiency[pi] / float64(np)
		}
		out.Methods = append(out.Methods, mf)
	}
	return out, nil
}

// MarshalJSON writes a NaN accuracy as null.
func (f FaithReport) MarshalJSON() ([]byte, error) {
	type plain FaithReport
	q := struct {
		plain
		Accuracy *float64 `json:"accuracy"`
	}{plain: plain(f)}
	if !math.IsNaN(f.Accuracy) {
		q.Accuracy = &f.Accuracy
	}
	return jsonMarshal(q)
}

// ranking orders token positions by the method's score for class y,
// largest first; ties keep the earlier position first.
func ranking(order []int, e *Explanation, method string, y int, rng *rand.Rand) []int {
	L := len(e.Tokens)
	order = order[:0]
	for i := 0; i < L; i++ {
		order = append(order, i)
	}
	if method == MethodRandom {
		rng.Shuffle(L, func(i, j int) { order[i], order[j] = order[j], order[i] })
		return order
	}
	score := TokenScores(e, method, y)
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(score[b], score[a]) })
	return order
}

// TokenScores returns one score per token for the method and class:
// the exact share or IG attribution to logit class, or the occlusion drop of
// the predicted class (class is ignored for occlusion). It returns nil when
// the explanation lacks the method.
func TokenScores(e *Explanation, method string, class int) []float64 {
	out := make([]float64, len(e.Tokens))
	switch method {
	case MethodExact:
		for i, v := range e.Attributions.Exact {
			out[i] = v[class]
		}
	case MethodIG:
		if e.Attributions.IG == nil {
			return nil
		}
		for i, v := range e.Attributions.IG {
			out[i] = v[class]
		}
	case MethodOcclusion:
		if e.Attributions.Occlusion == nil {
			return nil
		}
		copy(out, e.Attributions.Occlusion)
	default:
		return nil
	}
	return out
}

func make2(a, b int) [][]float64 {
	out := make([][]float64, a)
	for i := range out {
		out[i] = make([]float64, b)
	}
	return out
}

// corpusWords lists the words used in ids, most frequent first.
func corpusWords(m *cnn.Model, ids [][]int32) []int32 {
	seen := make([]int, m.Config.VocabSize)
	for _, t := range ids {
		for _, id := range t {
			if id >= 0 && int(id) < len(seen) {
				seen[id]++
			}
		}
	}
	var words []int32
	for id, n := range seen {
		if n > 0 {
			words = append(words, int32(id))
		}
	}
	slices.SortStableFunc(words, func(a, b int32) int { return cmp.Compare(seen[b], seen[a]) })
	return words
}

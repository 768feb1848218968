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

// Attribution methods known to Faithfulness and the painters.
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
	// IGSteps > 0 ranks by a Riemann sum of that many steps instead of the
	// closed form of integrated gradients.
	IGSteps int
	Methods []string // default exact, occlusion, ig, random
	// Draws is the number of random rankings averaged per text for the
	// random control (default 5).
	Draws int
	// Resamples is the number of bootstrap resamples of the texts behind
	// every interval (default 1000); the pairs' intervals take more where
	// their level needs it (MethodPair.DiffCIResamples).
	Resamples int
	Seed      uint64 // seeds the random rankings, the tie-breaks and the resamples
	Table     *SlotTable
	Workers   int
	Progress  Progress
}

// Interval is a two-sided interval: 95% but for a MethodPair's DiffCI,
// whose level is its DiffCILevel.
type Interval struct {
	Low  float64 `json:"low"`
	High float64 `json:"high"`
}

// FaithReport measures how well each attribution method's ranking of tokens
// predicts what the model does when those tokens are removed (replaced by
// PAD, positions kept). All scores are on the predicted class ŷ of each
// text; higher comprehensiveness and AOPC and lower sufficiency mean a more
// faithful method.
//
// Every method ranks the tokens by an identified score: the exact share of
// the log-odds of ŷ against the runner-up, its integrated gradients, or
// the occlusion drop of p(ŷ); ties are broken at random (seeded). Removing
// the one token whose removal lowers p(ŷ) most is what single-token
// occlusion measures, so occlusion is best at one token by construction:
// every removal of a single token (k = 1) is reported apart, in Top1Comp
// and Top1Suff, and left out of the aggregates. Intervals are 95%
// percentile bootstrap intervals over the texts (Efron & Tibshirani 1993,
// "An Introduction to the Bootstrap", ch. 13); Pairs compares the methods
// text by text, with intervals simultaneous over the comparisons.
//
// For a model with the wide path, p(ŷ) of a text with every token removed
// is identified like every other (see Explanation), so the figures with
// such a removal (AOPC's last points, comprehensiveness at 100%, the
// single-token figures of a one-token text) are too.
type FaithReport struct {
	Texts    int     `json:"texts"`    // texts scored (empty texts are skipped)
	Accuracy float64 `json:"accuracy"` // of the model on the scored texts (NaN → null without gold)
	// AccuracyInterval is Accuracy with its 95% Wilson interval (nil
	// without gold).
	AccuracyInterval *cnn.Interval `json:"accuracy_interval,omitempty"`
	Percents         []float64     `json:"percents"`
	Draws            int           `json:"draws"`     // random rankings per text for the random control
	Resamples        int           `json:"resamples"` // bootstrap resamples behind the intervals
	Methods          []MethodFaith `json:"methods"`
	Pairs            []MethodPair  `json:"pairs"`
}

// MethodFaith holds one method's scores, averaged over texts. A figure with
// no text to average is NaN (JSON null).
type MethodFaith struct {
	Method string `json:"method"`
	// Comprehensiveness[k] = mean of p(ŷ|x) − p(ŷ|x without its top-k% tokens);
	// Sufficiency[k] = mean of p(ŷ|x) − p(ŷ|only its top-k% tokens)
	// (DeYoung et al. 2020, "ERASER: A Benchmark to Evaluate Rationalized
	// NLP Models", ACL, §4.2). The top k% are the ⌈k·L/100⌉ tokens with the
	// largest scores for ŷ; texts where that is one token are left out
	// (PercentTexts counts the others).
	Comprehensiveness []float64 `json:"comprehensiveness"`
	Sufficiency       []float64 `json:"sufficiency"`
	PercentTexts      []int     `json:"percent_texts"`
	// ComprehensivenessCI and SufficiencyCI are the 95% percentile
	// bootstrap intervals over the texts of each percent's figure (NaN
	// bounds, JSON null, where no text has it).
	ComprehensivenessCI []Interval `json:"comprehensiveness_ci"`
	SufficiencyCI       []Interval `json:"sufficiency_ci"`
	// Comp and Suff average, over the texts with at least one percent of
	// two or more tokens (AggregateTexts), each text's mean over those
	// percents: ERASER's aggregate without single tokens.
	Comp           float64  `json:"comp"`
	Suff           float64  `json:"suff"`
	CompCI         Interval `json:"comp_ci"`
	SuffCI         Interval `json:"suff_ci"`
	AggregateTexts int      `json:"aggregate_texts"`
	// AOPC is the area over the most-relevant-first deletion curve (Samek
	// et al. 2017, "Evaluating the Visualization of What a Deep Neural Network
	// Has Learned", IEEE TNNLS): the mean of p(ŷ|x) − p(ŷ|x^(k_j)) over the
	// points j = 0 … J, x^(k) with its k top-ranked tokens removed and
	// k_j = ⌈j·L/J⌉, the points with k_j = 1 left out.
	AOPC   float64  `json:"aopc"`
	AOPCCI Interval `json:"aopc_ci"`
	// Top1Comp and Top1Suff are comprehensiveness and sufficiency for the
	// single top-ranked token, over all texts.
	Top1Comp   float64  `json:"top1_comp"`
	Top1Suff   float64  `json:"top1_suff"`
	Top1CompCI Interval `json:"top1_comp_ci"`
	Top1SuffCI Interval `json:"top1_suff_ci"`
}

// MethodPair compares two methods text by text on one measure ("comp",
// "suff" or "aopc"): Diff is the mean over the texts where both are
// defined of A's value minus B's, with its paired bootstrap interval (the
// texts resampled), and P the two-sided p-value of the paired sign-flip
// permutation test of that mean (see signFlipTest), so that the interval
// and the test are of the same quantity. SignFlips is the number of sign
// patterns behind P (all 2ⁿ up to 16 texts, else SignFlipDraws drawn).
// PHolm is P adjusted by Holm's method across the pairs of the report with
// a P (see Holm, FaithReport.Compared). The intervals are simultaneous over
// those same k comparisons (Bonferroni): each is at level DiffCILevel = 1 −
// 0.05/k, from DiffCIResamples resamples, so that all k cover their means
// together with probability at least 95% (see pairLevel).
type MethodPair struct {
	A       string   `json:"a"`
	B       string   `json:"b"`
	Measure string   `json:"measure"`
	Texts   int      `json:"texts"`
	Diff    float64  `json:"diff"`
	DiffCI  Interval `json:"diff_ci"`
	// DiffCILevel is the level of DiffCI on its own; DiffCIResamples the
	// bootstrap resamples behind it (at least FaithOptions.Resamples). Both
	// are 0 (left out of the JSON) for a pair without a text, whose DiffCI
	// and P are NaN.
	DiffCILevel     float64 `json:"diff_ci_level,omitempty"`
	DiffCIResamples int     `json:"diff_ci_resamples,omitempty"`
	P               float64 `json:"p"`
	PHolm           float64 `json:"p_holm"`
	SignFlips       int     `json:"sign_flips"`
}

func (o *FaithOptions) defaults() {
	if len(o.Percents) == 0 {
		o.Percents = []float64{1, 5, 10, 20, 50}
	}
	if o.AOPCSteps <= 0 {
		o.AOPCSteps = 10
	}
	if len(o.Methods) == 0 {
		o.Methods = []string{MethodExact, MethodOcclusion, MethodIG, MethodRandom}
	}
	if o.Draws <= 0 {
		o.Draws = 5
	}
	if o.Resamples <= 0 {
		o.Resamples = 1000
	}
	if o.Workers <= 0 {
		o.Workers = runtime.GOMAXPROCS(0)
	}
}

// check reports the first problem with the options.
func (o *FaithOptions) check(texts, golds int, haveGold bool) error {
	if haveGold && golds != texts {
		return fmt.Errorf("explain: %d gold labels for %d texts", golds, texts)
	}
	for _, p := range o.Percents {
		if !(p > 0 && p <= 100) {
			return fmt.Errorf("explain: faithfulness percent %g: must be in (0, 100]", p)
		}
	}
	for _, meth := range o.Methods {
		switch meth {
		case MethodExact, MethodOcclusion, MethodIG, MethodRandom:
		default:
			return fmt.Errorf("explain: unknown attribution method %q: use exact, occlusion, ig or random", meth)
		}
	}
	if o.IGSteps < 0 {
		return fmt.Errorf("explain: faithfulness IGSteps %d: must be 0 (closed form) or more", o.IGSteps)
	}
	return nil
}

// textFaith is one text's figures for one method; NaN where undefined.
type textFaith struct {
	comp, suff []float64 // per percent
	aggComp    float64
	aggSuff    float64
	aopc       float64
	top1Comp   float64
	top1Suff   float64
}

// Faithfulness scores the attribution methods on a labeled set. Gold may be
// nil (Accuracy is then NaN). It returns ctx.Err() when cancelled.
func Faithfulness(ctx context.Context, m *cnn.Model, ids [][]int32, gold []int, opt FaithOptions) (*FaithReport, error) {
	opt.defaults()
	if err := opt.check(len(ids), len(gold), gold != nil); err != nil {
		return nil, err
	}
	st := opt.Table
	if st == nil {
		var err error
		if st, err = NewSlotTable(m, TableOptions{Words: corpusWords(m, ids), Workers: opt.Workers}); err != nil {
			return nil, err
		}
	}
	per := make([][]textFaith, len(ids)) // [text][method]; nil for empty texts
	correct := make([]bool, len(ids))
	var next, done atomic.Int64
	var wg sync.WaitGroup
	errs := make([]error, opt.Workers)
	for w := range opt.Workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			sc := newFaithScorer(st, &opt)
			for ctx.Err() == nil {
				i := int(next.Add(1)) - 1
				if i >= len(ids) {
					return
				}
				if len(ids[i]) > 0 {
					res, y, err := sc.text(ids[i], i)
					if err != nil {
						errs[w] = err
						return
					}
					per[i] = res
					correct[i] = gold != nil && gold[i] == y
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
	for _, err := range errs {
		if err != nil {
			return nil, err
		}
	}
	return faithReport(per, correct, gold != nil, &opt), nil
}

// faithScorer scores the texts of one worker.
type faithScorer struct {
	st    *SlotTable
	r     *Runner
	opt   *FaithOptions
	buf   []int32
	order []int
}

func newFaithScorer(st *SlotTable, opt *FaithOptions) *faithScorer {
	return &faithScorer{st: st, r: st.NewRunner(), opt: opt}
}

// text explains text i and scores every method on it. It returns the
// figures per method and the predicted class.
func (sc *faithScorer) text(text []int32, i int) ([]textFaith, int, error) {
	opt := sc.opt
	e, err := Explain(sc.st.m, nil, text, ExplainOptions{Table: sc.st,
		Occlusion: slices.Contains(opt.Methods, MethodOcclusion),
		IG:        slices.Contains(opt.Methods, MethodIG), IGSteps: opt.IGSteps})
	if err != nil {
		return nil, 0, err
	}
	y := e.Class
	p0 := float64(sc.r.Run(text).Probs[y])
	out := make([]textFaith, len(opt.Methods))
	for mi, meth := range opt.Methods {
		draws := 1
		if meth == MethodRandom {
			draws = opt.Draws
		}
		var acc textFaith
		for d := range draws {
			rng := rand.New(rand.NewPCG(opt.Seed, uint64(i)<<16|uint64(mi)<<8|uint64(d)))
			sc.order = rankTokens(sc.order, Scores(e, meth, -1), len(text), rng)
			f := sc.score(text, y, p0)
			acc = addFaith(acc, f, float64(draws))
		}
		out[mi] = acc
	}
	return out, y, nil
}

// score measures the current ranking sc.order on text.
func (sc *faithScorer) score(text []int32, y int, p0 float64) textFaith {
	opt := sc.opt
	L := len(text)
	prob := func(keep func(rank int) bool) float64 {
		sc.buf = append(sc.buf[:0], text...)
		for rank, pos := range sc.order {
			if !keep(rank) {
				sc.buf[pos] = corpus.PAD
			}
		}
		return float64(sc.r.Run(sc.buf).Probs[y])
	}
	removeTop := func(k int) float64 { return p0 - prob(func(rank int) bool { return rank >= k }) }
	keepTop := func(k int) float64 { return p0 - prob(func(rank int) bool { return rank < k }) }
	f := textFaith{comp: make([]float64, len(opt.Percents)), suff: make([]float64, len(opt.Percents))}
	var sc2, ss float64
	n := 0
	for pi, pc := range opt.Percents {
		k := int(math.Ceil(pc * float64(L) / 100))
		if k == 1 {
			f.comp[pi], f.suff[pi] = math.NaN(), math.NaN()
			continue
		}
		f.comp[pi], f.suff[pi] = removeTop(k), keepTop(k)
		sc2 += f.comp[pi]
		ss += f.suff[pi]
		n++
	}
	f.aggComp, f.aggSuff = math.NaN(), math.NaN()
	if n > 0 {
		f.aggComp, f.aggSuff = sc2/float64(n), ss/float64(n)
	}
	var area float64
	pts := 0
	J := opt.AOPCSteps
	for j := 0; j <= J; j++ {
		if k := int(math.Ceil(float64(j) * float64(L) / float64(J))); k != 1 {
			area += removeTop(k)
			pts++
		}
	}
	f.aopc = area / float64(pts)
	f.top1Comp, f.top1Suff = removeTop(1), keepTop(1)
	return f
}

// addFaith adds f/n to acc, field by field (NaN stays NaN).
func addFaith(acc, f textFaith, n float64) textFaith {
	if acc.comp == nil {
		acc.comp, acc.suff = make([]float64, len(f.comp)), make([]float64, len(f.suff))
	}
	for i := range f.comp {
		acc.comp[i] += f.comp[i] / n
		acc.suff[i] += f.suff[i] / n
	}
	acc.aggComp += f.aggComp / n
	acc.aggSuff += f.aggSuff / n
	acc.aopc += f.aopc / n
	acc.top1Comp += f.top1Comp / n
	acc.top1Suff += f.top1Suff / n
	return acc
}

// rankTokens orders the L token positions by score, largest first, ties
// in random order (rng); a nil score (the random control) gives a random
// order.
func rankTokens(order []int, score []float64, L int, rng *rand.Rand) []int {
	order = order[:0]
	for i := 0; i < L; i++ {
		order = append(order, i)
	}
	rng.Shuffle(L, func(i, j int) { order[i], order[j] = order[j], order[i] })
	if score != nil {
		slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(score[b], score[a]) })
	}
	return order
}

// Scores returns one identified score per token for the method: for
// MethodExact and MethodIG, the token's share of the log-odds of the
// predicted class against the runner-up when class is −1, else of the
// centred logit of class; for MethodOcclusion, the drop of p(ŷ) (class is
// ignored). It returns nil for MethodRandom and when the explanation lacks
// the method or the class.
func Scores(e *Explanation, method string, class int) []float64 {
	if class >= len(e.Centred) {
		return nil
	}
	switch method {
	case MethodExact:
		if class < 0 {
			return e.LogOdds.Tokens
		}
		return e.Centred[class].Tokens
	case MethodIG:
		if e.Integrated == nil {
			return nil
		}
		if class < 0 {
			return e.Integrated.LogOdds.Tokens
		}
		return e.Integrated.Centred[class].Tokens
	case MethodOcclusion:
		return e.Attributions.Occlusion
	}
	return nil
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

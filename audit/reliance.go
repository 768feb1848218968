package audit

import (
	"context"
	"hash/fnv"
	"math/rand/v2"
	"slices"

	"telltale/explain"
)

// Reliance is how much the model depends on a cue on one half of the
// held-out split, measured by editing the texts that hold it (the model is
// not retrained). Each text is edited Draws times in two ways: the cue
// replaced by as many label-neutral words (the counterfactual), and the
// cue kept with the same neutral words inserted at random places (the
// control). Both add the same words, so the difference between them is the
// cue's own doing. Intervals are 95% intervals over texts: the flip
// rates' and the decided share's exact (ExactMeanIn), the probability
// drops' the percentile bootstrap, or exact where fewer than 10 texts
// differ from the most common value (MeanIntervalIn).
type Reliance struct {
	// Texts is the number of texts of the half holding the cue; Measured
	// how many were edited (a seeded sample of at most Options.MaxTexts).
	Texts    int `json:"texts"`
	Measured int `json:"measured"`
	Draws    int `json:"draws"`
	// FlipRate is the share of edits that change the prediction with the
	// cue replaced; ControlFlipRate with the cue kept; NetFlipRate their
	// difference, paired by text.
	FlipRate        Interval `json:"flip_rate"`
	ControlFlipRate Interval `json:"control_flip_rate"`
	NetFlipRate     Interval `json:"net_flip_rate"`
	// ProbDrop is the mean over texts of p(ŷ | control) − p(ŷ | replaced),
	// ŷ the prediction on the text as it is: how much probability the
	// prediction loses with the cue gone (negative where the cue pushed
	// against the prediction).
	ProbDrop Interval `json:"prob_drop"`
	// LabelDrop is the same for the cue's label: how much of the model's
	// belief in that label rests on the cue. It ranks the cues.
	LabelDrop Interval `json:"label_drop"`
	// Decided is the share of all the half's predictions that replacing
	// the cue changes beyond the control (texts without it count 0): a
	// share, never below 0, with the exact interval of NetFlipRate times
	// the cue's share of the half (decidedShare).
	Decided Interval `json:"decided"`
	// More and Fewer count the texts where the counterfactual flips more
	// (fewer) of the draws than the control; FlipP is the one-sided exact
	// sign test of More against Fewer (McNemar's test when Draws is 1).
	More  int     `json:"more"`
	Fewer int     `json:"fewer"`
	FlipP float64 `json:"flip_p"`
	// Lower and Higher count the texts where the cue's label loses (gains)
	// probability with the cue replaced, against the control; P is the
	// one-sided exact sign test of Lower against Higher: the test of
	// reliance.
	Lower  int     `json:"lower"`
	Higher int     `json:"higher"`
	P      float64 `json:"p"`
	// Conflict is measured on the texts whose gold label is not the cue's.
	Conflict *Conflict `json:"conflict,omitempty"`
	// Examples are texts whose prediction the replacement changed.
	Examples []Example `json:"examples,omitempty"`
}

// flipSignLevel is the level of the sign test of the flips in
// FlipsConfirmed: half of 5%, the other half going to the net flip rate's
// interval (Bonferroni).
const flipSignLevel = 0.025

// FlipsConfirmed reports whether replacing the cue changes predictions
// beyond the control, by either of two exact one-sided tests at 2.5%
// each, 5% in all (Bonferroni): the net flip rate's 95% interval lies
// above 0 (its lower bound is a 2.5% test of the mean), or the sign test
// of the texts that flip more draws with the cue replaced than kept
// against those that flip fewer has FlipP ≤ 0.025. The first weighs how
// much they flip, and finds a cue whose texts flip often both ways; the
// second counts which way, and finds a few texts that all flip one way
// (6 of them with none the other way), where an interval for the mean of
// values as low as −1 cannot yet exclude 0.
func (r *Reliance) FlipsConfirmed() bool {
	return r.Measured > 0 && (r.NetFlipRate.Low > 0 || r.FlipP <= flipSignLevel)
}

// Conflict is the model on the texts holding a cue whose gold label is not
// the cue's: where the cue points away from the truth.
type Conflict struct {
	Texts int `json:"texts"`
	// Accuracy as the texts are, and with the cue replaced (mean over
	// draws).
	Accuracy         float64 `json:"accuracy"`
	AccuracyReplaced float64 `json:"accuracy_replaced"`
	// Before is Accuracy with its 95% Wilson interval; After the accuracy
	// with the cue replaced in the first draw of each text (one edited copy
	// a text, so that both count texts and pair them), with its Wilson
	// interval. Fixed and Broken count the texts that edit turns right and
	// wrong; P is the two-sided exact McNemar test of Fixed against Broken.
	Before Interval `json:"accuracy_interval"`
	After  Interval `json:"accuracy_replaced_interval"`
	Fixed  int      `json:"fixed"`
	Broken int      `json:"broken"`
	P      float64  `json:"p"`
}

// Example is one quoted text behind a figure.
type Example struct {
	// Index is the text's index in the held-out split given to Run (not
	// in its half).
	Index   int     `json:"index"`
	Snippet string  `json:"snippet"`
	Gold    string  `json:"gold"`
	Pred    string  `json:"pred"`
	After   string  `json:"pred_after"`
	Prob    float64 `json:"prob_after"` // p(ŷ) after the edit
}

// editResult is the model on one edited text.
type editResult struct {
	pred  int
	prob  float32 // p(ŷ), ŷ the original prediction
	label float32 // p(cue's label)
}

// runAll runs every text of ids through the table and returns the
// prediction, p(want[i]) and p(class) of each.
func runAll(ctx context.Context, st *explain.SlotTable, ids [][]int32, want []int, class, workers int) ([]editResult, error) {
	out := make([]editResult, len(ids))
	err := explain.Scan(ctx, st, ids, workers, nil, func(_, i int, p *explain.Pass) {
		out[i] = editResult{pred: p.Pred, prob: p.Probs[want[i]], label: p.Probs[class]}
	})
	return out, err
}

// seedOf hashes a key into a seed.
func seedOf(base uint64, key string) uint64 {
	h := fnv.New64a()
	h.Write([]byte(key))
	return base ^ h.Sum64()
}

// relianceJob is what measuring a cue's reliance on a half needs.
type relianceJob struct {
	key      string // the cue, for seeding
	class    int    // the cue's label
	occ      []span // claimed occurrences in the half, text order (text = index in half)
	half     Data
	index    []int     // index[i]: the held-out index of text i of the half
	base     *basePass // the model on the half as it is
	neutral  []int32
	draws    int
	maxTexts int
	minTexts int // the fewest texts holding the cue it measures (minCueTexts)
	boot     int
	seed     uint64
	labels   []string
	vocab    []string
	examples int
}

// measure edits the texts and computes the Reliance.
func (j *relianceJob) measure(ctx context.Context, st *explain.SlotTable, workers int) (*Reliance, error) {
	byText := map[int][]span{}
	for _, s := range j.occ {
		byText[int(s.text)] = append(byText[int(s.text)], s)
	}
	all := texts(j.occ)
	r := &Reliance{Texts: len(all), Draws: j.draws}
	chosen := all
	rng := rand.New(rand.NewPCG(seedOf(j.seed, j.key), 1))
	if len(chosen) > j.maxTexts {
		chosen = slices.Clone(all)
		rng.Shuffle(len(chosen), func(a, b int) { chosen[a], chosen[b] = chosen[b], chosen[a] })
		chosen = chosen[:j.maxTexts]
		slices.Sort(chosen)
	}
	if len(chosen) < j.minTexts {
		// Too few texts to measure: no interval over them (Measured 0).
		r.P, r.FlipP = 1, 1
		return r, nil
	}
	r.Measured = len(chosen)
	D := j.draws
	ids := make([][]int32, 0, 2*D*len(chosen))
	want := make([]int, 0, cap(ids))
	for _, i := range chosen {
		for d := range D {
			cf, ctl := edit(j.half.IDs[i], byText[i], j.neutral, rand.New(rand.NewPCG(seedOf(j.seed, j.key), uint64(i)<<8|uint64(d))))
			ids = append(ids, cf, ctl)
			want = append(want, j.base.pred[i], j.base.pred[i])
		}
	}
	res, err := runAll(ctx, st, ids, want, j.class, workers)
	if err != nil {
		return nil, err
	}
	return j.summarize(r, all, chosen, byText, res), nil
}

// summarize computes the figures of r from the edits' results res (two per
// draw and text of chosen, counterfactual first); all are the texts holding
// the cue.
func (j *relianceJob) summarize(r *Reliance, all, chosen []int, byText map[int][]span, res []editResult) *Reliance {
	f := j.perText(r, chosen, res)
	seed := seedOf(j.seed, j.key+"/boot")
	r.FlipRate = ExactMeanIn(f.flip, 0, 1, 0.95, seed)
	r.ControlFlipRate = ExactMeanIn(f.ctlFlip, 0, 1, 0.95, seed+1)
	r.NetFlipRate = ExactMeanIn(f.net, -1, 1, 0.95, seed+2)
	r.ProbDrop = MeanIntervalIn(f.drop, -1, 1, j.boot, 0.95, seed+3)
	r.LabelDrop = MeanIntervalIn(f.ldrop, -1, 1, j.boot, 0.95, seed+5)
	r.Decided = decidedShare(r.NetFlipRate, len(all), j.half.Len())
	r.FlipP = SignTest(r.More, r.Fewer)
	r.P = SignTest(r.Lower, r.Higher)
	r.Conflict = j.conflict(chosen, res)
	j.addExamples(r, chosen, byText, res, f.ctlFlip)
	return r
}

// decidedShare is Reliance.Decided: the net flip rate netIv of the
// measured texts (ExactMeanIn's exact interval) times the cue's share of
// the half, cueTexts of halfTexts: the share of all the half's
// predictions the cue changes beyond the control (texts without it count
// 0), with the cue's count in the half known. A share of predictions is
// not negative: the estimate and both bounds are read as max(0, ·) (a cue
// whose control flips as many predictions or more decides none).
// Preconditions: halfTexts ≥ cueTexts ≥ 1.
func decidedShare(netIv Interval, cueTexts, halfTexts int) Interval {
	share := float64(cueTexts) / float64(halfTexts)
	return Interval{Estimate: max(0, share*netIv.Estimate), Low: max(0, share*netIv.Low),
		High: max(0, share*netIv.High), Method: netIv.Method}
}

// textFigures are the per-text means over the draws, indexed like chosen:
// the flip rates with the cue replaced and kept, their difference, and the
// drops in the predicted class's and the cue label's probability.
type textFigures struct {
	flip, ctlFlip, net, drop, ldrop []float64
}

// perText computes the textFigures of the texts of chosen from their
// edits' results res (as for summarize) and counts in r the texts whose
// flips rose or fell (More, Fewer) and whose label probability fell or
// rose (Lower, Higher).
func (j *relianceJob) perText(r *Reliance, chosen []int, res []editResult) textFigures {
	D := j.draws
	n := len(chosen)
	flip, ctlFlip, net, drop, ldrop := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	for k, i := range chosen {
		yhat := j.base.pred[i]
		for d := range D {
			cf, ctl := res[2*(k*D+d)], res[2*(k*D+d)+1]
			if cf.pred != yhat {
				flip[k]++
			}
			if ctl.pred != yhat {
				ctlFlip[k]++
			}
			drop[k] += float64(ctl.prob - cf.prob)
			ldrop[k] += float64(ctl.label - cf.label)
		}
		flip[k] /= float64(D)
		ctlFlip[k] /= float64(D)
		drop[k] /= float64(D)
		ldrop[k] /= float64(D)
		net[k] = flip[k] - ctlFlip[k]
		switch {
		case net[k] > 0:
			r.More++
		case net[k] < 0:
			r.Fewer++
		}
		switch {
		case ldrop[k] > 0:
			r.Lower++
		case ldrop[k] < 0:
			r.Higher++
		}
	}
	return textFigures{flip: flip, ctlFlip: ctlFlip, net: net, drop: drop, ldrop: ldrop}
}

// conflict measures the texts of chosen whose gold class is not the cue's
// label, from their edits' results res (as for summarize): accuracy before
// and after the first draw's counterfactual, and over all counterfactuals.
// It returns nil when fewer than j.minTexts such texts were measured.
func (j *relianceJob) conflict(chosen []int, res []editResult) *Conflict {
	D := j.draws
	var texts, firstRight, fixed, broken int
	var right, replaced float64
	for k, i := range chosen {
		g := j.half.Gold[i]
		if g == j.class {
			continue
		}
		for d := range D {
			if res[2*(k*D+d)].pred == g {
				replaced++
			}
		}
		texts++
		before, after := j.base.pred[i] == g, res[2*k*D].pred == g // the first draw's edit
		if before {
			right++
		}
		if after {
			firstRight++
		}
		switch {
		case after && !before:
			fixed++
		case before && !after:
			broken++
		}
	}
	if texts < j.minTexts {
		return nil
	}
	return &Conflict{Texts: texts, Accuracy: right / float64(texts),
		AccuracyReplaced: replaced / float64(texts*D),
		Before:           wilsonInterval(int(right), texts), After: wilsonInterval(firstRight, texts),
		Fixed: fixed, Broken: broken, P: mcNemarTwoSided(fixed, broken)}
}

// addExamples appends to r, up to j.examples of them in text order, the
// texts of chosen whose first counterfactual changed the prediction while
// no control edit did (ctlFlip as perText returns it).
func (j *relianceJob) addExamples(r *Reliance, chosen []int, byText map[int][]span, res []editResult, ctlFlip []float64) {
	D := j.draws
	for k, i := range chosen {
		if len(r.Examples) == j.examples {
			break
		}
		cf := res[2*(k*D)]
		if cf.pred != j.base.pred[i] && ctlFlip[k] == 0 {
			r.Examples = append(r.Examples, Example{Index: j.index[i], Snippet: snippet(j.half, j.vocab, i, byText[i][0]),
				Gold: j.labels[j.half.Gold[i]], Pred: j.labels[j.base.pred[i]], After: j.labels[cf.pred], Prob: float64(cf.prob)})
		}
	}
}

// edit returns the two edits of one draw: cf has every span's tokens
// replaced by neutral words drawn with replacement; ctl keeps the text and
// inserts the same words, span by span as blocks, at random token
// boundaries outside the spans.
func edit(ids []int32, spans []span, neutral []int32, r *rand.Rand) (cf, ctl []int32) {
	cf = slices.Clone(ids)
	blocks := make([][]int32, len(spans))
	for k, s := range spans {
		for j := s.start; j < s.end; j++ {
			w := neutral[r.IntN(len(neutral))]
			cf[j] = w
			blocks[k] = append(blocks[k], w)
		}
	}
	inside := func(b int) bool {
		for _, s := range spans {
			if int(s.start) < b && b < int(s.end) {
				return true
			}
		}
		return false
	}
	var free []int
	for b := 0; b <= len(ids); b++ {
		if !inside(b) {
			free = append(free, b)
		}
	}
	at := make(map[int][]int32)
	for _, blk := range blocks {
		b := free[r.IntN(len(free))]
		at[b] = append(at[b], blk...)
	}
	ctl = make([]int32, 0, len(ids)+len(cf))
	for b := 0; b <= len(ids); b++ {
		ctl = append(ctl, at[b]...)
		if b < len(ids) {
			ctl = append(ctl, ids[b])
		}
	}
	return cf, ctl
}

// basePass is the model on a set of texts as they are.
type basePass struct {
	pred   []int
	probs  []float32 // n × C
	pooled []float32 // n × nf
	start  []int32   // n × nf: start of each filter's winning window
	// ids are the texts (not copied), for the wide path's term.
	ids [][]int32
}

// runBase runs every text of d once, keeping what the filter evidence
// needs.
func runBase(ctx context.Context, st *explain.SlotTable, d Data, classes, nf, workers int) (*basePass, error) {
	n := d.Len()
	b := &basePass{pred: make([]int, n), probs: make([]float32, n*classes), pooled: make([]float32, n*nf), start: make([]int32, n*nf),
		ids: d.IDs}
	err := explain.Scan(ctx, st, d.IDs, workers, nil, func(_, i int, p *explain.Pass) {
		b.pred[i] = p.Pred
		copy(b.probs[i*classes:], p.Probs)
		copy(b.pooled[i*nf:], p.Pooled)
		copy(b.start[i*nf:], p.Start)
	})
	return b, err
}

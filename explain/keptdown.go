package explain

import (
	"cmp"
	"math"
	"slices"
)

// KeptDownWindow is a window of one filter on the explained text whose
// positive slots alone would have beaten the filter's winning window (or,
// for a filter that did not fire, would have made it fire), but whose
// negative slots kept it down: the "lack of certain words" that exact shares
// cannot show, since they give nothing to tokens outside the winning
// windows. This is the per-text form of the negative n-grams of Jacovi, Sar
// Shalom & Goldberg (2018, "Understanding Convolutional Neural Networks for
// Text Classification", BlackboxNLP).
//
// Positive > Winner ≥ Activation always. Replacing the By tokens with PAD
// sets their slot scores to zero, so the window then scores Positive and
// the filter's pooled value becomes at least Positive: Pooled, LogOdds and
// Drop measure that edit by re-running the model, the check of Effect.
//
// Slots, Activation, Positive, Winner and Pooled are on the scale of the
// filter's activation, which is not identified (see Explanation): they are
// never shown; the fields named …LogOdds are them times the filter's
// VoteScale, in log-odds units, and are identified.
type KeptDownWindow struct {
	Filter int       `json:"filter"`
	Width  int       `json:"width"`
	Start  int       `json:"start"` // first token of the window
	Slots  []float64 `json:"-"`     // slot scores; bias + Σ Slots = Activation
	// Activation is the window's pre-activation, bias + Σ Slots.
	Activation float64 `json:"-"`
	// Positive is bias + Σ of the positive slot scores: the window's
	// pre-activation without its negative slots.
	Positive float64 `json:"-"`
	// Winner is the filter's pooled value on the text (0 when it did not
	// fire).
	Winner float64 `json:"-"`
	// By lists the positions of the tokens at the negative slots, the
	// tokens that kept the window down.
	By []int `json:"by"`
	// Effect = (OutW[ŷ][g] − OutW[r][g])·(Positive − Winner), ŷ the
	// predicted class and r the runner-up: the change in their log-odds had
	// this window won without its negative slots, every other filter
	// unchanged. Own measures that change, the other fields the rest of
	// the edit's.
	Effect float64 `json:"effect"`
	// Pooled is the filter's pooled value on the text with the By tokens
	// replaced by PAD, and Own = (OutW[ŷ][g] − OutW[r][g])·(Pooled −
	// Winner) the change of the log-odds from it: Effect's quantity
	// measured (equal to Effect unless another window of g then passes
	// Positive).
	Pooled float64 `json:"-"`
	Own    float64 `json:"own_change"`
	// WordsHeld is the log-odds of ŷ against r measured on the text with
	// the By tokens replaced by PAD in the filters' windows only, the wide
	// path's term held at its value on the text: WordsHeld − the text's
	// log-odds − Own is the change from the other filters whose windows
	// hold a By token. Without the wide path it equals LogOdds.
	WordsHeld float64 `json:"log_odds_words_held"`
	// LogOdds and Drop = p(ŷ|x) − p(ŷ|x edited) are measured on the text
	// with the By tokens replaced by PAD everywhere: with the wide path,
	// their word and bigram weights leave the wide term too, a change of
	// LogOdds − WordsHeld.
	LogOdds float64 `json:"log_odds"`
	Drop    float64 `json:"drop"`

	SlotsLogOdds      []float64 `json:"slots_log_odds"`
	ActivationLogOdds float64   `json:"activation_log_odds"`
	PositiveLogOdds   float64   `json:"positive_log_odds"`
	WinnerLogOdds     float64   `json:"winner_log_odds"`
	PooledLogOdds     float64   `json:"pooled_log_odds"`
}

// Parts splits the whole measured change of the log-odds, LogOdds − text
// (text the log-odds of the text as it is, Explanation.LogOdds.Value),
// into the change from filter g's own pooled value (Own), from the other
// filters (WordsHeld − text − Own) and from the word and bigram weights
// (LogOdds − WordsHeld, 0 without the wide path): own + others + words =
// whole.
func (kd *KeptDownWindow) Parts(text float64) (own, others, words, whole float64) {
	return kd.Own, kd.WordsHeld - text - kd.Own, kd.LogOdds - kd.WordsHeld, kd.LogOdds - text
}

// setLogOdds fills the log-odds fields of kd from the raw ones, r being the
// filter's VoteScale.
func (kd *KeptDownWindow) setLogOdds(r float64) {
	kd.SlotsLogOdds = allInLogOdds(kd.Slots, r)
	kd.ActivationLogOdds, kd.PositiveLogOdds = inLogOdds(kd.Activation, r), inLogOdds(kd.Positive, r)
	kd.WinnerLogOdds, kd.PooledLogOdds = inLogOdds(kd.Winner, r), inLogOdds(kd.Pooled, r)
}

// keptDown finds, for every unmasked filter, the window with the largest
// positive part among those whose positive part exceeds the filter's pooled
// value (the winning window itself excluded when the filter fired; top, from
// poolExplain, holds the two best of every filter), keeps
// the k with the largest |Effect| (ties: lower filter first) and measures
// each with the occluder.
func keptDown(r *Runner, e *Explanation, o *occluder, top *keptTop, k int) []KeptDownWindow {
	st := r.st
	m := st.m
	lo := logOddsContrast(m.Config.Classes, e.Class, e.RunnerUp)
	var cands []keptCand
	for g, h := range r.p.Pooled {
		skip := int32(-1)
		if h > 0 {
			skip = r.p.Start[g]
		}
		if best, at := top.best(g, skip); !m.IsMasked(g) && at >= 0 && best > h {
			kd := keptDownWindow(r, g, int(at), false)
			cands = append(cands, keptCand{g: g, at: int(at), effect: lo.column(m, g) * (kd.Positive - kd.Winner)})
		}
	}
	slices.SortStableFunc(cands, func(a, b keptCand) int {
		return cmp.Compare(math.Abs(b.effect), math.Abs(a.effect))
	})
	if len(cands) == 0 {
		return nil
	}
	out := make([]KeptDownWindow, min(k, len(cands)))
	for i := range out {
		out[i] = keptDownWindow(r, cands[i].g, cands[i].at, true)
		out[i].Effect = cands[i].effect
		measureKeptDown(o, lo, &out[i])
		out[i].Own = lo.column(m, out[i].Filter) * (out[i].Pooled - out[i].Winner)
		out[i].setLogOdds(VoteScale(m, out[i].Filter))
	}
	return out
}

// keptCand is a kept-down window while the k largest are chosen.
type keptCand struct {
	g, at  int
	effect float64
}

// keptDownWindow describes filter g's window from token t0 (slot scores,
// Activation, Positive, Winner; with full, Slots and By too).
func keptDownWindow(r *Runner, g, t0 int, full bool) KeptDownWindow {
	st := r.st
	b, f := st.m.FilterConv(g)
	tb := &st.banks[b]
	F, w := tb.filters, tb.width
	kd := KeptDownWindow{Filter: g, Width: w, Start: t0,
		Activation: float64(tb.bias[f]), Positive: float64(tb.bias[f]), Winner: float64(r.p.Pooled[g])}
	if full {
		kd.Slots = make([]float64, w)
	}
	for s := 0; s < w; s++ {
		v := float64(r.rows[b][t0+s][s*F+f])
		kd.Activation += v
		if v > 0 {
			kd.Positive += v
		}
		if !full {
			continue
		}
		kd.Slots[s] = v
		if v < 0 {
			kd.By = append(kd.By, t0+s)
		}
	}
	return kd
}

// measureKeptDown re-runs the text with the window's By tokens replaced by
// PAD, first with the wide path's term held (WordsHeld, Pooled), then
// with it moved too (LogOdds, Drop).
func measureKeptDown(o *occluder, lo contrast, kd *KeptDownWindow) {
	if len(kd.By) == 0 {
		// A window can pass its filter's pooled value with no negative
		// slot only through float rounding; nothing to replace.
		kd.Pooled, kd.LogOdds = kd.Winner, lo.dot(o.e.logits)
		kd.WordsHeld = kd.LogOdds
		return
	}
	by := kd.By
	keep := func(i int) bool { return !slices.Contains(by, i) }
	o.holdWide = true
	o.apply(by[0], by[len(by)-1], keep)
	o.holdWide = false
	kd.Pooled = float64(o.pooled[kd.Filter])
	kd.WordsHeld = lo.dot(o.z)
	o.apply(by[0], by[len(by)-1], keep)
	kd.LogOdds = lo.dot(o.z)
	kd.Drop, _ = o.drops()
}

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
type KeptDownWindow struct {
	Filter int       `json:"filter"`
	Width  int       `json:"width"`
	Start  int       `json:"start"` // first token of the window
	Slots  []float64 `json:"slots"` // slot scores; bias + Σ Slots = Activation
	// Activation is the window's pre-activation, bias + Σ Slots.
	Activation float64 `json:"activation"`
	// Positive is bias + Σ of the positive slot scores: the window's
	// pre-activation without its negative slots.
	Positive float64 `json:"positive"`
	// Winner is the filter's pooled value on the text (0 when it did not
	// fire).
	Winner float64 `json:"winner"`
	// By lists the positions of the tokens at the negative slots, the
	// tokens that kept the window down.
	By []int `json:"by"`
	// Effect = (OutW[ŷ][g] − OutW[r][g])·(Positive − Winner), ŷ the
	// predicted class and r the runner-up: the change in their log-odds had
	// this window won without its negative slots, every other filter
	// unchanged.
	Effect float64 `json:"effect"`
	// Pooled is the filter's pooled value, LogOdds the log-odds of ŷ
	// against r and Drop = p(ŷ|x) − p(ŷ|x edited), measured on the text
	// with the By tokens replaced by PAD.
	Pooled  float64 `json:"pooled"`
	LogOdds float64 `json:"log_odds"`
	Drop    float64 `json:"drop"`
}

// keptDown finds, for every unmasked filter, the window with the largest
// positive part among those whose positive part exceeds the filter's pooled
// value (the winning window itself excluded when the filter fired), keeps
// the k with the largest |Effect| (ties: lower filter first) and measures
// each with the occluder.
func keptDown(r *Runner, e *Explanation, o *occluder, k int) []KeptDownWindow {
	st := r.st
	m := st.m
	lo := logOddsContrast(m.Config.Classes, e.Class, e.RunnerUp)
	var out []KeptDownWindow
	for b := range st.banks {
		tb := &st.banks[b]
		F, w := tb.filters, tb.width
		nw := r.p.Len - w + 1
		rows := r.rows[b]
		for f := 0; f < F; f++ {
			g := b*F + f
			if m.IsMasked(g) {
				continue
			}
			h := r.p.Pooled[g]
			won := int(r.p.Start[g])
			best, bt := float32(0), -1
			for t := 0; t < nw; t++ {
				if h > 0 && t == won {
					continue
				}
				p := tb.bias[f]
				for s := 0; s < w; s++ {
					p += max(rows[t+s][s*F+f], 0)
				}
				if p > h && (bt < 0 || p > best) {
					best, bt = p, t
				}
			}
			if bt < 0 {
				continue
			}
			kd := KeptDownWindow{Filter: g, Width: w, Start: bt, Slots: make([]float64, w),
				Activation: float64(tb.bias[f]), Positive: float64(tb.bias[f]), Winner: float64(h)}
			for s := 0; s < w; s++ {
				v := float64(rows[bt+s][s*F+f])
				kd.Slots[s] = v
				kd.Activation += v
				if v > 0 {
					kd.Positive += v
				} else if v < 0 {
					kd.By = append(kd.By, bt+s)
				}
			}
			kd.Effect = lo.column(m, g) * (kd.Positive - kd.Winner)
			out = append(out, kd)
		}
	}
	slices.SortStableFunc(out, func(a, b KeptDownWindow) int {
		return cmp.Compare(math.Abs(b.Effect), math.Abs(a.Effect))
	})
	out = out[:min(k, len(out))]
	for i := range out {
		measureKeptDown(o, lo, &out[i])
	}
	return out
}

// measureKeptDown re-runs the text with the window's By tokens replaced by
// PAD.
func measureKeptDown(o *occluder, lo contrast, kd *KeptDownWindow) {
	if len(kd.By) == 0 {
		// A window can pass its filter's pooled value with no negative
		// slot only through float rounding; nothing to replace.
		kd.Pooled, kd.LogOdds = kd.Winner, lo.dot(o.e.logits)
		return
	}
	by := kd.By
	o.apply(by[0], by[len(by)-1], func(i int) bool { return !slices.Contains(by, i) })
	kd.Pooled = float64(o.pooled[kd.Filter])
	kd.LogOdds = lo.dot(o.z)
	kd.Drop, _ = o.drops()
}

package explain

// IGShares is the integrated-gradients attribution (Sundararajan, Taly & Yan
// 2017, "Axiomatic Attribution for Deep Networks", ICML) of one identified
// quantity (see Shares for Class and Against) over the word vectors, with
// every word vector zero (all PAD) as the baseline. Completeness:
//
//	Σ_i Tokens[i] = Value − Baseline
//
// exactly for the closed form, approximately for a Riemann sum.
//
// The wide path of a model (cnn.Config.Wide) does not go through the word
// vectors: its term is linear in which word each token is, so its exact
// attribution is the split of Shares, against every word of the text being
// the unknown word (the identified reference; see Shares): token i gets
// Words[i] = Σ_c v_c·(Wide[x_i][c] − Wide[UNK][c])/N, and the Baseline
// holds the rest, Σ_c v_c·Wide[UNK][c], for every text (one whose every
// token is PAD has that term alone); bigram weights are split as in
// Shares.
type IGShares struct {
	Class   int     `json:"class"`
	Against int     `json:"against"`
	Value   float64 `json:"value"` // the quantity at the text
	// Baseline is the quantity with every word vector zero, plus the wide
	// path's unknown-word weight (see above).
	Baseline float64 `json:"baseline"`
	// Tokens[i] is token i's attribution, Words[i] included.
	Tokens []float64 `json:"tokens"`
	// Words[i] is token i's part through the wide path (the same as in
	// Shares); nil for a model without the wide path.
	Words []float64 `json:"words,omitempty"`
	// Gap = Σ Tokens − (Value − Baseline): float rounding for the closed
	// form, the Riemann sum's error otherwise.
	Gap float64 `json:"gap"`
}

// IGResult holds integrated gradients of the identified quantities of
// Explanation: the log-odds of the predicted class against the runner-up,
// and every class's centred logit.
type IGResult struct {
	// Steps is 0 for the closed form, else the number of steps of the
	// right Riemann sum it was approximated with.
	Steps   int        `json:"steps"`
	LogOdds IGShares   `json:"log_odds"`
	Centred []IGShares `json:"centred"`
}

// igExact returns the per-class integrated gradients ig[i][c] in closed
// form; identifiedIG turns them into the identified quantities.
//
// Along the path αE (α from 0 to 1) every window of filter g has the
// pre-activation B_g + α·S_g[t], S_g[t] the sum of its slot scores. All these
// lines meet at α = 0, so for α > 0 the winning window is the same one as at
// α = 1, t* = argmax_t S_g[t], and the pooled value is relu(B_g + α·S*), S*
// = S_g[t*]. Its only breakpoint is where the ReLU switches, α₀ = −B_g/S*;
// the gradient with respect to the word vector at t*+s is OutW[c][g]·W_g[s]
// wherever the filter is on and zero elsewhere. So
//
//	IG_i[c] = Σ_g OutW[c][g]·λ_g·T[x_i][i − t*_g],  λ_g = |{α ∈ (0, 1] : B_g + α·S* > 0}|
//
// with λ_g = 1 when the filter is on at both ends, B_g/(−S*) when it
// switches off, 1 + B_g/S* when it switches on, 0 when it is never on; the
// sum over the window gives λ_g·S* = relu(B_g + S*) − relu(B_g), which is
// completeness, exactly. Filters that do not fire on the text but fire near
// the baseline (B_g > 0, S* < 0) thus give their negative slot scores to
// the tokens that switched them off.
func igExact(r *Runner, e *Explanation) [][]float64 {
	st := r.st
	m := st.m
	C, nf := m.Config.Classes, m.Config.NumFilters()
	L := len(e.Tokens)
	ig := make([][]float64, L)
	flat := make([]float64, L*C)
	for i := range ig {
		ig[i] = flat[i*C : (i+1)*C]
	}
	for g := 0; g < nf; g++ {
		if m.IsMasked(g) {
			continue
		}
		b, f := m.FilterConv(g)
		tb := &st.banks[b]
		w, F := tb.width, tb.filters
		t0 := int(r.p.Start[g])
		var S float64
		for s := 0; s < w; s++ {
			S += float64(r.rows[b][t0+s][s*F+f])
		}
		lambda := switchedOn(float64(tb.bias[f]), S)
		if lambda == 0 {
			continue
		}
		for s := 0; s < w && t0+s < L; s++ {
			sc := lambda * float64(r.rows[b][t0+s][s*F+f])
			if sc == 0 {
				continue
			}
			row := ig[t0+s]
			for c := 0; c < C; c++ {
				row[c] += float64(m.OutW[c*nf+g]) * sc
			}
		}
	}
	return ig
}

// switchedOn is the length of {α ∈ (0, 1] : b + α·s > 0}.
func switchedOn(b, s float64) float64 {
	end := b + s
	switch {
	case b > 0 && end > 0:
		return 1
	case b > 0:
		return b / -s
	case end > 0:
		return end / s
	}
	return 0
}

// baselineLogits are the logits with every word vector zero: each unmasked
// filter's pooled value is relu(B_g).
func baselineLogits(r *Runner) []float64 {
	m := r.st.m
	C, nf := m.Config.Classes, m.Config.NumFilters()
	base := make([]float64, C)
	for c := range base {
		base[c] = float64(m.OutB[c])
	}
	for g := 0; g < nf; g++ {
		if bias := m.FilterBias(g); bias > 0 && !m.IsMasked(g) {
			for c := range base {
				base[c] += float64(m.OutW[c*nf+g]) * float64(bias)
			}
		}
	}
	return base
}

// integratedGradients returns the per-class integrated gradients
// ig[i][c] as the right Riemann sum of the paper, α_k = k/N for k = 1 … N (α = 0 is left out: there every window ties
// at B_g and the gradient is only a tie-break convention). At αE filter g
// wins at window t*_g(α) (first maximum of B_g + α·S_g[t], S_g[t] the
// window's slot-score sum) and, when that value is positive and g is not
// masked, the gradient with respect to E_{t*+s} is OutW[c][g]·W_g[s]; its
// dot product with E_i is OutW[c][g] times the slot score. So each step adds,
// for every fired filter, OutW times the slot scores of its winning window
// at that α. It is kept as a check of the closed form (igExact), to which it
// converges as N grows.
func integratedGradients(r *Runner, e *Explanation, steps int) [][]float64 {
	st := r.st
	m := st.m
	C, nf := m.Config.Classes, m.Config.NumFilters()
	L := len(e.Tokens)
	n := r.p.Len
	ig := make([][]float64, L)
	flat := make([]float64, L*C)
	for i := range ig {
		ig[i] = flat[i*C : (i+1)*C]
	}
	for b := range st.banks {
		tb := &st.banks[b]
		F, w := tb.filters, tb.width
		nw := n - w + 1
		// S[t][f]: window slot-score sums without the bias.
		S := make([]float32, nw*F)
		rows := r.rows[b]
		for t := 0; t < nw; t++ {
			acc := S[t*F : (t+1)*F]
			for s := 0; s < w; s++ {
				addTo(acc, rows[t+s][s*F:(s+1)*F])
			}
		}
		weight := make([]float64, nw) // Riemann weight of each winning window
		for f := 0; f < F; f++ {
			g := b*F + f
			if m.IsMasked(g) {
				continue
			}
			bias := tb.bias[f]
			clear(weight)
			for k := 1; k <= steps; k++ {
				alpha := float32(k) / float32(steps)
				best, bt := negInf, 0
				for t := 0; t < nw; t++ {
					if a := bias + alpha*S[t*F+f]; a > best {
						best, bt = a, t
					}
				}
				if best <= 0 {
					continue
				}
				weight[bt] += 1 / float64(steps)
			}
			for t, wt := range weight {
				if wt == 0 {
					continue
				}
				for s := 0; s < w; s++ {
					i := t + s
					if i >= L {
						break
					}
					sc := wt * float64(rows[i][s*F+f])
					for c := 0; c < C; c++ {
						ig[i][c] += float64(m.OutW[c*nf+g]) * sc
					}
				}
			}
		}
	}
	return ig
}

// identifiedIG fills e.Integrated from the per-class attributions ig[i][c]
// (steps 0 for the closed form): integrated gradients are linear in the
// head, so the attribution of a contrast v is Σ_c v_c·ig[i][c]. The wide
// path's parts are taken from e's shares (identifiedShares must have run).
func identifiedIG(r *Runner, e *Explanation, ig [][]float64, steps int) {
	m := r.st.m
	base := baselineLogits(r)
	ts := targets(m.Config.Classes, e.Class, e.RunnerUp)
	res := &IGResult{Steps: steps}
	L := len(e.Tokens)
	flat := make([]float64, len(ts)*L)
	for j, k := range ts {
		s := IGShares{Class: k.class, Against: k.against, Value: k.dot(e.logits),
			Baseline: k.dot(base) + k.unknownPart(e.wide)}
		s.Tokens, flat = flat[:L:L], flat[L:]
		if j == 0 {
			s.Words = e.LogOdds.Words
		} else {
			s.Words = e.Centred[j-1].Words
		}
		var sum float64
		for i, row := range ig {
			s.Tokens[i] = k.dot(row)
			if s.Words != nil {
				s.Tokens[i] += s.Words[i]
			}
			sum += s.Tokens[i]
		}
		s.Gap = sum - (s.Value - s.Baseline)
		if j == 0 {
			res.LogOdds = s
		} else {
			res.Centred = append(res.Centred, s)
		}
	}
	e.Integrated = res
}

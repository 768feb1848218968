package explain

// integratedGradients fills IG and IGGap. Integrated gradients (Sundararajan,
// Taly & Yan 2017, "Axiomatic Attribution for Deep Networks", ICML) of logit c
// over the embeddings with the PAD (all-zero) baseline:
//
//	IG_i[c] = Σ_d E_id · ∫_0^1 ∂logit_c(αE)/∂E_id dα
//
// approximated by the right Riemann sum of the paper, α_k = k/N for
// k = 1 … N (α = 0 is left out: there every window ties at B_g and the
// gradient is only a tie-break convention). The model is
// piecewise linear in E: at αE filter g wins at window t*_g(α) (first
// maximum of B_g + α·S_g[t], S_g[t] the window's slot-score sum) and, when
// that value is positive and g is not masked, the gradient with respect to
// E_{t*+s} is OutW[c][g]·W_g[s]; its dot product with E_i is OutW[c][g]
// times the slot score. So each step adds, for every fired filter, OutW times
// the slot scores of its winning window at that α.
//
// The completeness gap Σ_i IG_i[c] − (logit_c(E) − logit_c(0)) is reported;
// it shrinks as N grows (it is not zero because the winning windows switch
// between the sample points).
func integratedGradients(r *Runner, e *Explanation, steps int) {
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
	base := make([]float64, C)
	for c := range base {
		base[c] = float64(m.OutB[c])
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
			if bias > 0 {
				for c := range base {
					base[c] += float64(m.OutW[c*nf+g]) * float64(bias)
				}
			}
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
	gap := make([]float64, C)
	for c := range gap {
		var sum float64
		for i := range ig {
			sum += ig[i][c]
		}
		gap[c] = sum - (e.Logits[c] - base[c])
	}
	e.Attributions.IG = ig
	e.Attributions.IGGap = gap
	e.Attributions.IGSteps = steps
}

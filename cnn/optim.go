package cnn

import "math"

// adadeltaUpdate is one Adadelta step (Zeiler 2012, "ADADELTA: An Adaptive
// Learning Rate Method", Algorithm 1), in torch.optim.Adadelta's form with a
// learning rate:
//
//	E[g²]  ← ρ·E[g²] + (1−ρ)·g²
//	Δ      = √(E[Δ²]+eps) / √(E[g²]+eps) · g
//	E[Δ²]  ← ρ·E[Δ²] + (1−ρ)·Δ²
//	p      ← p − lr·Δ
func adadeltaUpdate(p, g, eg, ed []float32, lr, rho, eps float32) {
	g = g[:len(p)]
	eg = eg[:len(p)]
	ed = ed[:len(p)]
	for i := range p {
		gi := g[i]
		e := rho*eg[i] + (1-rho)*gi*gi
		eg[i] = e
		delta := float32(math.Sqrt(float64(ed[i]+eps))/math.Sqrt(float64(e+eps))) * gi
		ed[i] = rho*ed[i] + (1-rho)*delta*delta
		p[i] -= lr * delta
	}
}

// sparseAdamRow is torch.optim.SparseAdam's update of the values of one
// row with gradient (PyTorch, torch/optim/_functional.py, sparse_adam), in
// its order of operations, step being lr·√(1−β₂ᵗ)/(1−β₁ᵗ):
//
//	m ← m + (1−β₁)·(g − m)
//	v ← v + (1−β₂)·(g² − v)
//	p ← p − step · m / (√v + eps)
//
// Unlike torch.optim.Adam, eps is added to √v before the bias correction.
// c1 and c2 are 1−β₁ and 1−β₂, formed in float64 and rounded as PyTorch
// does. The four slices must have the same length.
func sparseAdamRow(p, g, m, v []float32, c1, c2, eps, step float32) {
	g = g[:len(p)]
	m = m[:len(p)]
	v = v[:len(p)]
	for i, gi := range g {
		mo, vo := m[i], v[i]
		mu := (gi - mo) * c1
		vu := (gi*gi - vo) * c2
		m[i], v[i] = mo+mu, vo+vu
		p[i] -= step * ((mu + mo) / (sqrt32(vu+vo) + eps))
	}
}

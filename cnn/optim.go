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

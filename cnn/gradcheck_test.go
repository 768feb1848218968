package cnn

import (
	"fmt"
	"maps"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// ref64 is an independent float64 implementation of the batch loss by
// direct convolution, used as the ground truth for finite differences. It
// also returns the pattern of winning windows and ReLU signs, so that a
// difference across a kink (where the loss is not differentiable) can be
// recognised and skipped.
func ref64(m *Model, texts [][]int32, labels []int, drop []float32) (float64, []int) {
	return ref64Scaled(m, texts, labels, drop, nil)
}

// ref64Scaled is ref64 with every word vector (as the convolutions read it)
// multiplied elementwise by its word's row of scale, where it has one: the
// embedding dropout of a batch.
func ref64Scaled(m *Model, texts [][]int32, labels []int, drop []float32, scale map[int32][]float32) (float64, []int) {
	cfg := m.Config
	nf := cfg.NumFilters()
	var loss float64
	row, pattern := rows64(m)
	for i, ids := range texts {
		x := Padded(ids, cfg.MaxWidth())
		h := make([]float64, nf)
		for g := 0; g < nf; g++ {
			w := m.FilterWidth(g)
			best, bt := math.Inf(-1), 0
			for t := 0; t+w <= len(x); t++ {
				a := float64(m.FilterBias(g))
				for s := 0; s < w; s++ {
					e := row(x[t+s])
					if sc := scale[x[t+s]]; sc != nil {
						e = slices.Clone(e)
						for k := range e {
							e[k] *= float64(sc[k])
						}
					}
					for k, v := range m.FilterSlot(g, s) {
						a += float64(v) * e[k]
					}
				}
				if a > best {
					best, bt = a, t
				}
			}
			on := best > 0 && !m.IsMasked(g)
			pattern = append(pattern, bt)
			if on {
				h[g] = best
				pattern = append(pattern, 1)
			} else {
				pattern = append(pattern, 0)
			}
			if drop != nil {
				h[g] *= float64(drop[i*nf+g])
			}
		}
		z := make([]float64, cfg.Classes)
		mx := math.Inf(-1)
		for c := range z {
			z[c] = float64(m.OutB[c])
			for g := range h {
				z[c] += float64(m.OutW[c*nf+g]) * h[g]
			}
			z[c] += wide64(m, ids, c)
			mx = math.Max(mx, z[c])
		}
		var s float64
		for _, v := range z {
			s += math.Exp(v - mx)
		}
		loss += math.Log(s) + mx - z[labels[i]]
	}
	return loss / float64(len(texts)), pattern
}

// wide64 is the wide term of logit c for the text ids in float64, written
// from its definition (model.go): the mean over the non-PAD ids of their
// weights for class c, and with Config.WideBigrams over the pairs of
// adjacent ids listed in m.Bigrams too (found by a linear scan of the
// keys, not the model's index); the unknown word's (id 1) weight when no
// id is non-PAD; 0 without Config.Wide.
func wide64(m *Model, ids []int32, c int) float64 {
	if !m.Config.Wide {
		return 0
	}
	var sum float64
	n := 0
	for t, id := range ids {
		if id != 0 {
			sum += float64(m.Wide[int(id)*m.Config.Classes+c])
			n++
		}
		if !m.Config.WideBigrams || t+1 == len(ids) {
			continue
		}
		for r, k := range m.Bigrams {
			if k == uint64(id)<<32|uint64(ids[t+1]) {
				sum += float64(m.WideBigram[r*m.Config.Classes+c])
				n++
			}
		}
	}
	if n == 0 {
		return float64(m.Wide[1*m.Config.Classes+c])
	}
	return sum / float64(n)
}

// analytic returns the trainer's loss and gradients for one batch without
// updating the model.
func analytic(m *Model, texts [][]int32, labels []int, drop []float32, threads int) (float64, *trainer) {
	tr := newTrainer(m, TrainConfig{Threads: threads})
	tr.texts = texts
	tr.labels = labels
	tr.drop = append(tr.drop[:0], drop...)
	loss := tr.forwardBackward()
	tr.close()
	return loss, tr
}

type paramRef struct {
	name string
	p, g []float32
}

// gradParams lists every parameter group with its analytic gradient.
func gradParams(m *Model, tr *trainer) []paramRef {
	ps := []paramRef{{"Emb", m.Emb, tr.gEmb}}
	if l := m.Char; l != nil {
		g := tr.ch.th[0]
		ps = append(ps, paramRef{"CharEmb", l.Emb, g.emb}, paramRef{"CharW", l.W, g.w}, paramRef{"CharB", l.B, g.b})
	}
	for b, c := range m.Convs {
		g := tr.th[0].w[tr.wOff[b] : tr.wOff[b]+len(c.W)]
		ps = append(ps, paramRef{"W" + string(rune('0'+c.Width)), c.W, g})
		ps = append(ps, paramRef{"B" + string(rune('0'+c.Width)), c.B, tr.th[0].b[b*m.Config.Filters : (b+1)*m.Config.Filters]})
	}
	ps = append(ps, paramRef{"OutW", m.OutW, tr.th[0].ow}, paramRef{"OutB", m.OutB, tr.th[0].ob})
	if m.Wide != nil {
		ps = append(ps, paramRef{"Wide", m.Wide, tr.gWide})
	}
	if m.WideBigram != nil {
		ps = append(ps, paramRef{"WideBigram", m.WideBigram, tr.gBig})
	}
	return ps
}

// Gradients of the mean cross-entropy with respect to every parameter agree
// with central finite differences of the float64 reference loss (common
// practice, no source; the tolerance allows float32 rounding in the analytic
// path: 1e-4 relative plus 1e-6 absolute).
func TestGradientFiniteDifferences(t *testing.T) {
	for seed := uint64(1); seed <= 6; seed++ {
		gradCheck(t, seed, false, false)
	}
}

// The same check with the wide word-weight path on (Config.Wide), its table
// filled with random values so that its term is not zero; the PAD row and
// the rows of words outside the batch must get no gradient. UNK appears
// only through texts with no non-PAD id, whose wide term is UNK's row, so
// UNK's row gradient checks that case alone.
func TestWideGradientFiniteDifferences(t *testing.T) {
	for seed := uint64(1); seed <= 6; seed++ {
		gradCheck(t, seed, true, false)
	}
}

// The same check with bigram weights in the wide path
// (Config.WideBigrams): the set holds half of the batch's pairs of word
// ids and pairs the batch lacks, its table random; a pair is counted with
// the words (the divisor N+M), pairs with PAD or UNK never, and the rows
// of pairs outside the batch get no gradient.
func TestWideBigramGradientFiniteDifferences(t *testing.T) {
	for seed := uint64(1); seed <= 6; seed++ {
		gradCheck(t, seed, true, true)
	}
}

// withTestBigrams gives m (with the wide path) bigram weights: every
// other pair of word ids of texts, in order of appearance, and two pairs
// that may be absent, with random weights.
func withTestBigrams(t *testing.T, m *Model, texts [][]int32, seed uint64) {
	t.Helper()
	var pairs [][]int32
	k := 0
	for _, ids := range texts {
		for j := 0; j+1 < len(ids); j++ {
			if ids[j] > 1 && ids[j+1] > 1 {
				if k%2 == 0 {
					pairs = append(pairs, ids[j:j+2])
				}
				k++
			}
		}
	}
	pairs = append(pairs, []int32{2, 3}, []int32{int32(m.Config.VocabSize - 1), 2})
	keys := CollectBigrams(pairs)
	if err := m.SetBigrams(keys); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(seed, 13))
	for i := range m.WideBigram {
		m.WideBigram[i] = float32(2*rng.Float64() - 1)
	}
}

// gradCheck compares the analytic gradients of one random batch with
// finite differences (see TestGradientFiniteDifferences).
func gradCheck(t *testing.T, seed uint64, wide, bigrams bool) {
	t.Helper()
	const h = 1e-3
	m := randModel(seed, 12, 4, []int{1, 2, 3}, 3, 3)
	// Larger weights than the default spread the activations.
	for i := range m.OutW {
		m.OutW[i] *= 3
	}
	if wide {
		m.Config.Wide = true
		m.Wide = make([]float32, m.Config.VocabSize*m.Config.Classes)
		wr := rand.New(rand.NewPCG(seed, 7))
		for i := m.Config.Classes; i < len(m.Wide); i++ {
			m.Wide[i] = float32(2*wr.Float64() - 1)
		}
	}
	if seed%3 == 0 {
		m.Masked = make([]bool, m.Config.NumFilters())
		m.Masked[4] = true
	}
	rng := rand.New(rand.NewPCG(seed, 99))
	texts := randTexts(rng, 5, 8, 12)
	texts[0] = []int32{3} // shorter than the widest filter
	if wide {
		for _, ids := range texts {
			for j, id := range ids {
				if id == 1 { // UNK is left to the PAD-only text
					ids[j] = 2
				}
			}
		}
		texts[1] = []int32{0, 5, 0, 7} // N counts the non-PAD ids alone
		texts[2] = []int32{0, 0}       // no non-PAD id: UNK's wide row
	}
	if bigrams {
		texts[3] = append(texts[3], 1, 4, 4, 0, 4) // pairs with UNK and PAD are never found
		withTestBigrams(t, m, texts, seed)
	}
	labels := make([]int, len(texts))
	for i := range labels {
		labels[i] = rng.IntN(3)
	}
	var drop []float32
	if seed%2 == 0 {
		drop = make([]float32, len(texts)*m.Config.NumFilters())
		for i := range drop {
			if rng.IntN(3) > 0 {
				drop[i] = 1.5
			}
		}
	}
	loss, tr := analytic(m, texts, labels, drop, 1+int(seed%2))
	ref, _ := ref64(m, texts, labels, drop)
	if math.Abs(loss-ref) > 1e-5*math.Abs(ref) {
		t.Fatalf("seed %d: loss %g, float64 reference %g", seed, loss, ref)
	}
	used := map[int]bool{}
	for _, ids := range texts {
		for _, id := range ids {
			used[int(id)] = true
		}
	}
	usedWide := maps.Clone(used)
	if wide {
		usedWide[1] = true // texts[2] is scored by UNK's wide row
	}
	var fd fdTally
	for _, pr := range gradParams(m, tr) {
		for i := range pr.p {
			if pr.name == "Emb" && (!used[i/m.Config.Dim] || i < m.Config.Dim) { // PAD is fixed at zero
				if pr.g[i] != 0 {
					t.Fatalf("seed %d: gradient %g for unused embedding entry %d", seed, pr.g[i], i)
				}
				continue
			}
			if pr.name == "Wide" && (!usedWide[i/m.Config.Classes] || i < m.Config.Classes) {
				if pr.g[i] != 0 {
					t.Fatalf("seed %d: gradient %g for unused or PAD wide entry %d", seed, pr.g[i], i)
				}
				continue
			}
			if pr.name == "WideBigram" && !usedPair(texts, m.Bigrams[i/m.Config.Classes]) {
				if pr.g[i] != 0 {
					t.Fatalf("seed %d: gradient %g for the bigram entry %d outside the batch", seed, pr.g[i], i)
				}
				continue
			}
			fd.compare(t, fmt.Sprintf("seed %d %s[%d]", seed, pr.name, i), pr.p, pr.g, i, h,
				func() (float64, []int) { return ref64(m, texts, labels, drop) })
		}
	}
	if pad := tr.gEmb[:m.Config.Dim]; slices.ContainsFunc(pad, func(v float32) bool { return v != 0 }) {
		t.Errorf("seed %d: PAD row has a gradient", seed)
	}
	fd.enough(t, seed)
}

// usedPair reports whether the pair of key k occurs in texts.
func usedPair(texts [][]int32, k uint64) bool {
	for _, ids := range texts {
		for j := 0; j+1 < len(ids); j++ {
			if BigramKey(ids[j], ids[j+1]) == k {
				return true
			}
		}
	}
	return false
}

// centralDiff is the central finite difference of the loss eval gives with
// respect to p[i], stepped by ±h (in float32, the step actually taken is
// used), p[i] restored afterwards. ok is false when the pattern eval
// returns (which window wins each max) differs between the two steps: the
// loss is not differentiable across such a change.
func centralDiff(p []float32, i int, h float64, eval func() (float64, []int)) (num float64, ok bool) {
	p0 := p[i]
	p[i] = float32(float64(p0) + h)
	up := p[i]
	pu, patU := eval()
	p[i] = float32(float64(p0) - h)
	dn := p[i]
	pd, patD := eval()
	p[i] = p0
	if !slices.Equal(patU, patD) {
		return 0, false
	}
	return (pu - pd) / (float64(up) - float64(dn)), true
}

// gradAgrees reports whether an analytic gradient a agrees with its finite
// difference num: within 1e-4 relative plus 1e-6 absolute (float32
// weights, float64 reference loss; common practice, no source).
func gradAgrees(a, num float64) bool {
	return math.Abs(a-num) <= 1e-4*math.Max(math.Abs(a), math.Abs(num))+1e-6
}

// fdTally counts the coordinates a finite-difference check compared and
// those it skipped at kinks.
type fdTally struct{ checked, skipped int }

// compare checks the analytic gradient g[i] of the weight p[i] against the
// central difference of eval (centralDiff, step h), failing t, naming what,
// when they disagree (gradAgrees). It returns false for a coordinate
// skipped at a kink.
func (c *fdTally) compare(t *testing.T, what string, p, g []float32, i int, h float64, eval func() (float64, []int)) bool {
	t.Helper()
	num, ok := centralDiff(p, i, h, eval)
	if !ok {
		c.skipped++
		return false
	}
	if a := float64(g[i]); !gradAgrees(a, num) {
		t.Errorf("%s: analytic %g, finite difference %g", what, a, num)
	}
	c.checked++
	return true
}

// enough fails t when more than a tenth of the coordinates were skipped at
// kinks: too few compared to trust the check.
func (c *fdTally) enough(t *testing.T, seed uint64) {
	t.Helper()
	if c.skipped > c.checked/10 {
		t.Errorf("seed %d: %d coordinates skipped at kinks, %d checked: too many to trust the check", seed, c.skipped, c.checked)
	}
}

// The gradient of the learned scale of a held fitted start
// (TrainConfig.WideFitScale; the batch's wide term times the scale s)
// agrees with the central finite difference of the float64 reference loss
// of the model whose word weights are multiplied by s: the same function
// (common practice, no source; gradAgrees' tolerance). The step is 1e-2,
// not the other checks' 1e-3: the scaled weights are rounded to float32,
// and over a step of 1e-3 that rounding alone moves the difference of a
// gradient this small (a sum over the batch) by about 5e-6.
func TestWideScaleGradientFiniteDifferences(t *testing.T) {
	const h = 1e-2
	for seed := uint64(1); seed <= 4; seed++ {
		m := withWide(randModel(seed, 12, 4, []int{1, 2, 3}, 3, 3), seed, 1)
		rng := rand.New(rand.NewPCG(seed, 99))
		texts := randTexts(rng, 6, 8, 12)
		texts[1] = []int32{} // a text with no word: UNK's row
		labels := make([]int, len(texts))
		for i := range labels {
			labels[i] = rng.IntN(3)
		}
		const s = 1.3
		tr := newTrainer(m, TrainConfig{Threads: 2, WideFit: true, WideFitScale: true})
		tr.scale[0] = s
		tr.texts, tr.labels = texts, labels
		tr.forwardBackward()
		tr.close()
		if tr.gWide != nil {
			t.Fatal("the held start's word weights have a gradient buffer: they would be trained")
		}
		loss := func(scale float64) float64 {
			c := m.Clone()
			for j := range c.Wide {
				c.Wide[j] = float32(float64(c.Wide[j]) * scale)
			}
			l, _ := ref64(c, texts, labels, nil)
			return l
		}
		num := (loss(s+h) - loss(s-h)) / (2 * h)
		if a := float64(tr.gScale[0]); !gradAgrees(a, num) {
			t.Errorf("seed %d: scale gradient %g, finite difference %g", seed, a, num)
		}
	}
}

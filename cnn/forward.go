package cnn

import (
	"math"

	"telltale/corpus"
)

// Output is the full result of one forward pass over one text.
type Output struct {
	Logits []float32 // Classes
	Probs  []float32 // softmax of Logits
	Pooled []float32 // NumFilters: h[g] = relu(Pre[g]), 0 when masked
	Pre    []float32 // NumFilters: pre-activation of the winning window
	Argmax []int     // NumFilters: start of the winning window (first maximum)
	Len    int       // padded length L' = max(len(ids), MaxWidth)
}

// Padded returns ids right-padded with PAD to at least n tokens. It returns
// ids itself when no padding is needed.
func Padded(ids []int32, n int) []int32 {
	if len(ids) >= n {
		return ids
	}
	p := make([]int32, n)
	copy(p, ids)
	for i := len(ids); i < n; i++ {
		p[i] = corpus.PAD
	}
	return p
}

// Forward runs the model on one text by direct convolution. It is the
// reference every faster path is tested against. Ids must be < VocabSize.
func (m *Model) Forward(ids []int32) Output {
	cfg := m.Config
	x := Padded(ids, cfg.MaxWidth())
	nf := cfg.NumFilters()
	out := Output{
		Logits: make([]float32, cfg.Classes),
		Probs:  make([]float32, cfg.Classes),
		Pooled: make([]float32, nf),
		Pre:    make([]float32, nf),
		Argmax: make([]int, nf),
		Len:    len(x),
	}
	d := cfg.Dim
	for g := 0; g < nf; g++ {
		b, f := m.FilterConv(g)
		c := &m.Convs[b]
		best, bestT := float32(math.Inf(-1)), 0
		for t := 0; t+c.Width <= len(x); t++ {
			a := c.B[f]
			for s := 0; s < c.Width; s++ {
				w := c.W[(f*c.Width+s)*d : (f*c.Width+s)*d+d]
				e := m.Row(x[t+s])
				for k := range w {
					a += w[k] * e[k]
				}
			}
			if a > best {
				best, bestT = a, t
			}
		}
		out.Pre[g], out.Argmax[g] = best, bestT
		if best > 0 && !m.IsMasked(g) {
			out.Pooled[g] = best
		}
	}
	m.Head(out.Pooled, out.Logits)
	m.addWide(ids, out.Logits)
	Softmax(out.Logits, out.Probs)
	return out
}

// addWide adds the wide path's term to logits (len Classes) for the text
// ids as given, before padding: each non-PAD token t adds Wide[x[t]][c]/N,
// N the number of non-PAD ids; a text with N = 0 adds UNK's row, so that
// the term is Wide[UNK][c] + Σ_t (Wide[x[t]][c] − Wide[UNK][c])/N for every
// N (the sum empty at 0) and shifting every row but PAD's by one vector is
// undone by shifting OutB. With Config.WideBigrams each of the M pairs of
// adjacent ids found in Bigrams adds its WideBigram row too, and the
// divisor is N+M (Model's doc). It does nothing without Config.Wide.
func (m *Model) addWide(ids []int32, logits []float32) {
	if !m.Config.Wide {
		return
	}
	// The rows of the found pairs, looked up once for counting and summing
	// (on the stack; a longer text's pairs are looked up twice).
	var buf [widePairsOnStack]int32
	var rows []int32
	if m.Config.WideBigrams && len(ids) <= len(buf) {
		rows = buf[:len(ids)]
	}
	n, pairs := m.wideCounts(ids, rows)
	C := m.Config.Classes
	if n == 0 {
		unk := int(corpus.UNK) * C
		for c, w := range m.Wide[unk : unk+C] {
			logits[c] += w
		}
		return
	}
	inv := 1 / float32(n+pairs)
	for t, id := range ids {
		if id == corpus.PAD {
			continue
		}
		row := m.Wide[int(id)*C : int(id)*C+C]
		for c, w := range row {
			logits[c] += w * inv
		}
		if pairs > 0 && t+1 < len(ids) {
			r := -1
			if rows != nil {
				r = int(rows[t])
			} else {
				r = m.bigramRow(id, ids[t+1])
			}
			if r >= 0 {
				for c, w := range m.WideBigram[r*C : r*C+C] {
					logits[c] += w * inv
				}
			}
		}
	}
}

// widePairsOnStack is the length of the longest text whose pairs addWide
// looks up once.
const widePairsOnStack = 512

// wideCounts returns the number n of non-PAD ids of the text ids and the
// number of its pairs of adjacent ids found in the model's bigram set (0
// without Config.WideBigrams). Rows, when not nil (len(ids) values), gets
// the row in WideBigram of the pair at each position t of a non-PAD id,
// −1 where there is none.
func (m *Model) wideCounts(ids []int32, rows []int32) (n, pairs int) {
	bigrams := m.Config.WideBigrams
	for t, id := range ids {
		if rows != nil {
			rows[t] = -1
		}
		if id == corpus.PAD {
			continue
		}
		n++
		if bigrams && t+1 < len(ids) {
			if r := m.bigramRow(id, ids[t+1]); r >= 0 {
				pairs++
				if rows != nil {
					rows[t] = int32(r)
				}
			}
		}
	}
	return n, pairs
}

// Head computes logits = OutB + OutW·pooled. Len(pooled) must be NumFilters
// and len(logits) Classes.
func (m *Model) Head(pooled, logits []float32) {
	nf := m.Config.NumFilters()
	for c := range logits {
		row := m.OutW[c*nf : (c+1)*nf]
		z := m.OutB[c]
		for g, h := range pooled {
			z += row[g] * h
		}
		logits[c] = z
	}
}

// Softmax writes the softmax of z into p (same length), stably.
func Softmax(z, p []float32) {
	mx := z[0]
	for _, v := range z[1:] {
		mx = max(mx, v)
	}
	var sum float64
	for i, v := range z {
		e := math.Exp(float64(v - mx))
		p[i] = float32(e)
		sum += e
	}
	for i := range p {
		p[i] = float32(float64(p[i]) / sum)
	}
}

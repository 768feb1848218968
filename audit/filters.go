package audit

import (
	"cmp"
	"slices"

	"telltale/cnn"
)

// Filters are the model's filters keyed on a cue and what masking them
// does. Keyed filters are found on the selection half: a filter is keyed
// on the cue when its winning window (the one max-pooling keeps) lies on
// an occurrence of the cue in at least half of the texts holding it, and it
// votes for the cue's label more than for any other; the 20 whose votes
// weigh most are kept. Ablation is measured
// on the confirmation half, which took no part in finding them.
type Filters struct {
	Keyed    []int     `json:"keyed"`
	Ablation *Ablation `json:"ablation,omitempty"`
}

// Ablation is the model with some filters masked (model surgery,
// cnn.Model.MaskedCopy: their pooled units held at zero) on a half of the
// held-out split.
type Ablation struct {
	Filters        []int   `json:"filters"`
	Texts          int     `json:"texts"`
	Accuracy       float64 `json:"accuracy"`
	AccuracyMasked float64 `json:"accuracy_masked"`
	// Before and After are Accuracy and AccuracyMasked with their 95%
	// Wilson intervals.
	Before Interval `json:"accuracy_interval"`
	After  Interval `json:"accuracy_masked_interval"`
	// Fixed and Broken count the predictions masking turns right and
	// wrong; P is the one-sided exact McNemar test of Fixed against Broken.
	Fixed  int     `json:"fixed"`
	Broken int     `json:"broken"`
	P      float64 `json:"p"`
	// CueTexts is how many texts of the half hold the cue, CueFlipped how
	// many of their predictions masking changes.
	CueTexts   int `json:"cue_texts"`
	CueFlipped int `json:"cue_flipped"`
}

// maxKeyed bounds the keyed filters kept per cue, strongest first.
const maxKeyed = 20

// keyedFilters finds the filters keyed on a cue of label class with
// occurrences occ in the half whose base pass is b.
func keyedFilters(m *cnn.Model, b *basePass, occ []span, class int) []int {
	nf, C := m.Config.NumFilters(), m.Config.Classes
	byText := map[int][]span{}
	for _, s := range occ {
		byText[int(s.text)] = append(byText[int(s.text)], s)
	}
	n := len(byText)
	if n == 0 {
		return nil
	}
	type keyed struct {
		g      int
		texts  int
		weight float64
	}
	var out []keyed
	for g := range nf {
		if m.IsMasked(g) {
			continue
		}
		margin := float64(m.OutW[class*nf+g])
		worst := margin
		for c := range C {
			if c != class {
				worst = min(worst, margin-float64(m.OutW[c*nf+g]))
			}
		}
		if worst <= 0 {
			continue
		}
		w := m.FilterWidth(g)
		k := keyed{g: g}
		for i, spans := range byText {
			h := b.pooled[i*nf+g]
			if h <= 0 {
				continue
			}
			st := int(b.start[i*nf+g])
			for _, s := range spans {
				if st < int(s.end) && int(s.start) < st+w {
					k.texts++
					k.weight += worst * float64(h)
					break
				}
			}
		}
		if 2*k.texts >= n && k.texts >= 3 {
			out = append(out, k)
		}
	}
	slices.SortFunc(out, func(x, y keyed) int {
		if x.weight != y.weight {
			return cmp.Compare(y.weight, x.weight)
		}
		return cmp.Compare(x.g, y.g)
	})
	out = out[:min(len(out), maxKeyed)]
	gs := make([]int, len(out))
	for i, k := range out {
		gs[i] = k.g
	}
	return gs
}

// maskedPreds predicts every text of the half with the filters gs masked,
// by the layout's identity: the pooled units of gs set to zero and the
// output layer applied again (cnn.Model.Head), plus the text's wide-path
// term (cnn.Model.AddWide), which masking does not touch.
func maskedPreds(m *cnn.Model, b *basePass, gs []int) []int {
	nf, C := m.Config.NumFilters(), m.Config.Classes
	n := len(b.pred)
	out := make([]int, n)
	pooled := make([]float32, nf)
	logits := make([]float32, C)
	for i := range n {
		copy(pooled, b.pooled[i*nf:(i+1)*nf])
		for _, g := range gs {
			pooled[g] = 0
		}
		m.Head(pooled, logits)
		m.AddWide(b.ids[i], logits)
		out[i] = slices.Index(logits, slices.Max(logits))
	}
	return out
}

// ablate measures masking gs on a half with gold labels gold; cueTexts
// are the texts holding the cue (may be nil).
func ablate(m *cnn.Model, b *basePass, gold []int, gs []int, cueTexts []int) *Ablation {
	after := maskedPreds(m, b, gs)
	a := &Ablation{Filters: slices.Clone(gs), Texts: len(gold), CueTexts: len(cueTexts)}
	var right, rightMasked int
	for i, g := range gold {
		if b.pred[i] == g {
			right++
		}
		if after[i] == g {
			rightMasked++
		}
		switch {
		case after[i] == g && b.pred[i] != g:
			a.Fixed++
		case after[i] != g && b.pred[i] == g:
			a.Broken++
		}
	}
	for _, i := range cueTexts {
		if after[i] != b.pred[i] {
			a.CueFlipped++
		}
	}
	a.Before, a.After = wilsonInterval(right, len(gold)), wilsonInterval(rightMasked, len(gold))
	a.Accuracy, a.AccuracyMasked = a.Before.Estimate, a.After.Estimate
	a.P = SignTest(a.Fixed, a.Broken)
	return a
}

// bestPrefix returns the shortest prefix of gs whose masking gives the
// best accuracy on the half (b, gold), and whether it beats the model as
// it is.
func bestPrefix(m *cnn.Model, b *basePass, gold []int, gs []int) ([]int, bool) {
	base := 0
	for i, g := range gold {
		if b.pred[i] == g {
			base++
		}
	}
	best, bestK := base, 0
	for k := 1; k <= len(gs); k++ {
		right := 0
		for i, p := range maskedPreds(m, b, gs[:k]) {
			if p == gold[i] {
				right++
			}
		}
		if right > best {
			best, bestK = right, k
		}
	}
	return slices.Clone(gs[:bestK]), bestK > 0
}

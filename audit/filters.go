package audit

import (
	"cmp"
	"math"
	"slices"

	"telltale/cnn"
	"telltale/corpus"
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
	// Words, WordTexts and WordPart are the word-weight path's part of the
	// cue, on a model with that path (else empty): Words are the cue's
	// words the remedy reads as the unknown word (cueWords), WordTexts the
	// confirmation half's texts holding the cue, and WordPart the mean over
	// those texts of those words' word part of the centred logit of the
	// cue's label, Σ_t Σ_c v_c (Wide[x_t][c] − Wide[UNK][c])/N over the
	// text's tokens t of those words, v_c = [c = label] − 1/C, N its
	// non-PAD tokens (the split of explain.Shares), with its 95% percentile
	// bootstrap interval over texts (BootstrapMean: the texts resampled,
	// with no correction for few of them, so that over a handful of texts
	// it tends to be too narrow). As for a reliance, WordPart is nil when
	// WordTexts is below minCueTexts: no mean or interval over so few texts
	// is given. With bigram weights (cnn.Config.WideBigrams) N counts the
	// text's found pairs too, and every found pair holding one of the
	// words adds its whole part Σ_c v_c (WideBigram[p][c] − Wide[UNK][c])/N,
	// as the remedy sets its row to the unknown word's
	// (cnn.Model.MaskedWordsCopy). Reading the words as the unknown word
	// lowers that logit by exactly this part on each text.
	Words     []string  `json:"words,omitempty"`
	WordTexts int       `json:"word_texts,omitempty"`
	WordPart  *Interval `json:"word_part,omitempty"`
}

// Ablation is the model with some filters masked (model surgery,
// cnn.Model.MaskedCopy: their pooled units held at zero) on a half of the
// held-out split. On a model with the word-weight path (cnn.Config.Wide)
// the cue's words are also read as the unknown word by that path
// (cnn.Model.MaskedWordsCopy), so the remedy measured takes the cue out of
// the word weights too.
type Ablation struct {
	Filters []int `json:"filters"`
	// Words are the words the word-weight path reads as the unknown word
	// (nil on a model without it): the cue's words that occur mostly in
	// it (cueWords), less any number (NumberWord matches numbers the
	// remedy leaves as they are).
	Words          []string `json:"words,omitempty"`
	Texts          int      `json:"texts"`
	Accuracy       float64  `json:"accuracy"`
	AccuracyMasked float64  `json:"accuracy_masked"`
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
		// The filter's least margin for class over every other class: only
		// differences of a column are identified (a constant added to it
		// moves every logit alike; cnn.Model.WithVotesShifted).
		margin := float64(m.OutW[class*nf+g])
		worst := math.Inf(1)
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

// cueWords are the ids of the cue's words the word-weight path reads as
// the unknown word in the audit's remedy: nil on a model without that
// path, else the phrase's words (less any number, PAD and UNK) at least
// half of whose training occurrences lie in the cue's, in order of first
// appearance. The word weights are per word, not per occurrence: a word
// the cue shares with the rest of the text ("the", "at") keeps its row.
func (a *auditor) cueWords(c *Candidate) []int32 {
	if !a.m.Config.Wide {
		return nil
	}
	if a.wordCount == nil {
		a.wordCount = make([]int, a.m.Config.VocabSize)
		for _, ids := range a.train.IDs {
			for _, id := range ids {
				a.wordCount[id]++
			}
		}
	}
	inCue := map[int32]int{}
	for _, s := range c.trainOcc {
		for _, id := range a.train.IDs[s.text][s.start:s.end] {
			inCue[id]++
		}
	}
	var ids []int32
	for _, id := range c.phrase {
		if id > corpus.UNK && !slices.Contains(ids, id) && 2*inCue[id] >= a.wordCount[id] {
			ids = append(ids, id)
		}
	}
	return ids
}

// wordPart is Filters.WordPart of cue c with words ws (cueWords, not
// empty) on the confirmation half: nil when fewer than minCueTexts of its
// texts hold the cue, the minimum of a reliance.
func (a *auditor) wordPart(c *Candidate, ws []int32) *Interval {
	if len(texts(c.confOcc)) < minCueTexts {
		return nil
	}
	return a.wordPartOn(a.conf, c.confOcc, c, ws, "word part "+c.Text)
}

// wordPartOn is the word part of cue c with words ws (as for
// Filters.WordPart) over the texts of half d holding its occurrences occ,
// with its 95% bootstrap interval seeded by key.
func (a *auditor) wordPartOn(d Data, occ []span, c *Candidate, ws []int32, key string) *Interval {
	C := a.m.Config.Classes
	unk := a.m.WideRow(corpus.UNK)
	part := func(row []float32) float64 {
		var s float64
		for k := range C {
			v := -1 / float64(C)
			if k == c.Class {
				v++
			}
			s += v * (float64(row[k]) - float64(unk[k]))
		}
		return s
	}
	var parts []float64
	for _, i := range texts(occ) {
		ids := d.IDs[i]
		n, sum := 0, 0.0
		for t, id := range ids {
			if t+1 < len(ids) {
				if row := a.m.BigramRow(id, ids[t+1]); row != nil {
					n++
					if slices.Contains(ws, id) || slices.Contains(ws, ids[t+1]) {
						sum += part(row)
					}
				}
			}
			if id == corpus.PAD {
				continue
			}
			n++
			if slices.Contains(ws, id) {
				sum += part(a.m.WideRow(id))
			}
		}
		parts = append(parts, sum/float64(max(1, n)))
	}
	iv := BootstrapMean(parts, a.opt.Bootstrap, 0.95, seedOf(a.opt.Seed, key))
	return &iv
}

// wordNames writes word ids as m's vocabulary writes them (nil for none).
func wordNames(m *cnn.Model, ids []int32) []string {
	if len(ids) == 0 {
		return nil
	}
	out := make([]string, len(ids))
	for i, id := range ids {
		out[i] = m.Vocab[id]
	}
	return out
}

// remedied is m with words read as the unknown word by the word-weight
// path (cnn.Model.MaskedWordsCopy), or m itself when that changes nothing.
// Its filters are m's: maskedPreds masks them itself. Words must be valid
// ids of m other than PAD.
func remedied(m *cnn.Model, words []int32) *cnn.Model {
	if !m.Config.Wide || len(words) == 0 {
		return m
	}
	w, err := m.MaskedWordsCopy(nil, words)
	if err != nil {
		panic(err) // the audit's own ids: a bug
	}
	return w
}

// maskedPreds predicts every text of the half with the filters gs masked,
// by the layout's identity: the pooled units of gs set to zero and the
// output layer applied again (cnn.Model.Head), plus the text's wide-path
// term (cnn.Model.AddWide) of w, which is m or m with the cue's words read
// as the unknown word by that path (remedied).
func maskedPreds(m, w *cnn.Model, b *basePass, gs []int) []int {
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
		w.AddWide(b.ids[i], logits)
		out[i] = slices.Index(logits, slices.Max(logits))
	}
	return out
}

// ablate measures masking gs, and reading words as the unknown word by the
// word-weight path, on a half with gold labels gold; cueTexts are the
// texts holding the cue (may be nil).
func ablate(m *cnn.Model, b *basePass, gold []int, gs []int, words []int32, cueTexts []int) *Ablation {
	after := maskedPreds(m, remedied(m, words), b, gs)
	a := &Ablation{Filters: slices.Clone(gs), Words: wordNames(m, words), Texts: len(gold), CueTexts: len(cueTexts)}
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

// bestPrefix returns the shortest prefix of gs whose masking, with words
// read as the unknown word by the word-weight path, gives the best
// accuracy on the half (b, gold), and whether it beats the model as it is.
// With no filters (gs empty) the words alone are the one mask tried, and
// the prefix returned is empty.
func bestPrefix(m *cnn.Model, b *basePass, gold []int, gs []int, words []int32) ([]int, bool) {
	w := remedied(m, words)
	best, bestK, better := correct(b.pred, gold), 0, false
	first := 1
	if len(gs) == 0 && w != m {
		first = 0 // a word-only mask
	}
	for k := first; k <= len(gs); k++ {
		if right := correct(maskedPreds(m, w, b, gs[:k]), gold); right > best {
			best, bestK, better = right, k, true
		}
	}
	return slices.Clone(gs[:bestK]), better
}

// correct counts the predictions pred that match gold.
func correct(pred, gold []int) int {
	n := 0
	for i, g := range gold {
		if pred[i] == g {
			n++
		}
	}
	return n
}

package explain

import (
	"fmt"
	"math"

	"telltale/cnn"
	"telltale/corpus"
)

// Explanation says why one text got its label. Every number is exact or
// measured: LogOdds.Value = LogOdds.Parts() (and the same for each of
// Centred) up to float rounding, and the occlusion values are what
// re-predicting the edited text gives.
//
// Every number it shows (its JSON) is identified: Probabilities, LogOdds,
// Centred, Integrated, the occlusion drops, KeptDown's log-odds fields,
// Effect, LogOdds and Drop and, per fired filter, its activation, bias and
// slot scores in log-odds units (FiredFilter). The logits themselves are
// not given: adding the same number to every class's output bias, or to
// every class's output weight on one filter, changes no probability but
// shifts every logit and every share of one class's logit (see Shares).
// Nor are a filter's raw activation, bias and slot scores: rescaling the
// filter (its convolution weights and bias times k > 0, its output-weight
// column divided by k) changes no prediction but multiplies them by k (see
// VoteScale); they are kept for computing and left out of JSON.
//
// A model with the wide path (cnn.Config.Wide) has one more such change:
// a vector added to every word's wide row but PAD's and subtracted from
// the output biases moves no logit of any text, and every number here
// stays put under it too, the occlusion drops and kept-down edits that
// remove every word of the text included: a text with no word left is
// scored by the unknown word's wide row, which that change moves with the
// output biases (cnn.Model.AddWide). With bigram weights the change moves
// every bigram row too, and an edit that replaces a word by PAD takes its
// found pairs out of the mean with it.
type Explanation struct {
	Tokens        []TokenSpan   `json:"tokens"`
	Label         string        `json:"label"`
	Class         int           `json:"class"`
	Labels        []string      `json:"labels"`
	Probabilities []float64     `json:"probabilities"`
	Attributions  Attributions  `json:"attributions"`
	Filters       []FiredFilter `json:"filters"`

	// RunnerUp is the class with the largest logit after Class.
	RunnerUp int `json:"runner_up"`
	// LogOdds splits log p(Class)/p(RunnerUp), the default view.
	LogOdds Shares `json:"log_odds"`
	// Centred[c] splits class c's centred logit (its logit minus the mean
	// over classes; log p(c) minus the mean of the log-probabilities), the
	// per-class view.
	Centred []Shares `json:"centred"`
	// Integrated holds integrated gradients of the same quantities when
	// ExplainOptions.IG is set.
	Integrated *IGResult `json:"integrated_gradients,omitempty"`
	// KeptDown lists, when ExplainOptions.KeptDown > 0, the windows that
	// would have won their filter but for their negative slots (see
	// KeptDownWindow), largest |Effect| first.
	KeptDown []KeptDownWindow `json:"kept_down,omitempty"`

	// logits are the model's logits in float64, which the identified
	// quantities are contrasts of.
	logits []float64
	// wide is the wide path's part of them (zero without the path).
	wide wideText
}

// TokenSpan is one token of the explained text. Start and End are byte
// offsets into the original text (both 0 when the caller gave no tokens).
type TokenSpan struct {
	Text  string `json:"text"`
	Start int    `json:"start"`
	End   int    `json:"end"`
	ID    int32  `json:"id"`
}

// Attributions holds the occlusion measurements of the text (the shares
// and integrated gradients are in Explanation.LogOdds, Centred and
// Integrated).
type Attributions struct {
	// Occlusion[i] = p(ŷ|x) − p(ŷ|x with token i replaced by PAD), ŷ the
	// predicted class: positive when the token supported the prediction.
	Occlusion []float64 `json:"occlusion,omitempty"`
	// OcclusionLog[i] = log p(ŷ|x) − log p(ŷ|x with token i replaced by PAD).
	OcclusionLog []float64 `json:"occlusion_log,omitempty"`
	// Windows holds the occlusion of every n-gram window of the widths asked
	// for in ExplainOptions.OcclusionWidths.
	Windows []SpanOcclusion `json:"windows,omitempty"`
}

// SpanOcclusion is the effect of replacing tokens Start … End−1 with PAD.
type SpanOcclusion struct {
	Start   int     `json:"start"`
	End     int     `json:"end"`
	Drop    float64 `json:"drop"`     // p(ŷ|x) − p(ŷ|x edited)
	DropLog float64 `json:"drop_log"` // log p(ŷ|x) − log p(ŷ|x edited)
}

// FiredFilter is a filter whose pooled unit is positive for the text.
type FiredFilter struct {
	Filter int `json:"filter"`
	Width  int `json:"width"`
	Start  int `json:"start"` // first token of the winning window
	// Activation, BiasTerm and Slots are the raw pooled value, filter bias
	// and slot scores (BiasTerm + Σ Slots = Activation): not identified
	// (see Explanation), never shown.
	Activation float64   `json:"-"`
	BiasTerm   float64   `json:"-"`
	Slots      []float64 `json:"-"`
	// ActivationLogOdds, BiasLogOdds and SlotsLogOdds are the same in
	// log-odds units, times the filter's VoteScale r (BiasLogOdds + Σ
	// SlotsLogOdds = ActivationLogOdds): the most the window moves the
	// log-odds between two classes. With two classes ActivationLogOdds is
	// the size of the filter's part of LogOdds; in general the filter's
	// part of the log-odds of c against d is ActivationLogOdds·(OutW[c][g]
	// − OutW[d][g])/r.
	ActivationLogOdds float64   `json:"activation_log_odds"`
	BiasLogOdds       float64   `json:"bias_log_odds"`
	SlotsLogOdds      []float64 `json:"slots_log_odds"`
	// Family is the index of the filter's family (in its Profile) whose
	// centroid is nearest to Slots, or −1 without profiles or when the
	// activation is below the filter's selectivity threshold. Its part of
	// each identified quantity is in Explanation.LogOdds.Filters and
	// Centred[c].Filters, at the filter's index in Explanation.Filters.
	Family int `json:"family"`
}

// ExplainOptions selects the methods of Explain. The identified shares
// (LogOdds, Centred) are always computed.
type ExplainOptions struct {
	// Table is a prebuilt table of the model. Nil builds one over the
	// text's own words (the cost of one direct convolution of the text).
	Table *SlotTable
	// Profiles, when not nil, names the family of every fired window.
	Profiles *Profiles
	// Occlusion computes single-token occlusion.
	Occlusion bool
	// OcclusionWidths adds the occlusion of every n-gram window of each width.
	OcclusionWidths []int
	// IG computes integrated gradients: in closed form, or, with IGSteps >
	// 0, as a right Riemann sum of that many steps (kept as a check).
	IG      bool
	IGSteps int
	// KeptDown is the number of kept-down windows to report (0: none).
	KeptDown int
}

// Explain explains the prediction of m on one text. Ids are the text's
// vocabulary ids (each < VocabSize); tokens, if not nil, must have the same
// length and give the token texts and offsets. The explanation's Tokens are
// the real tokens only: the PAD positions added to reach MaxWidth have zero
// embeddings and so zero shares. Options are checked before any work.
func Explain(m *cnn.Model, tokens []corpus.Token, ids []int32, opt ExplainOptions) (*Explanation, error) {
	if err := checkExplain(m, tokens, ids, opt); err != nil {
		return nil, err
	}
	st := opt.Table
	if st == nil {
		var err error
		if st, err = NewSlotTable(m, TableOptions{Words: distinct(ids), Workers: 1}); err != nil {
			return nil, err
		}
	}
	r, _ := st.explainers.Get().(*Runner)
	if r == nil {
		r = st.NewRunner()
		r.keep = true
	}
	defer st.explainers.Put(r)
	r.load(ids)
	var top *keptTop
	if opt.KeptDown > 0 {
		// The kept-down search's positive parts come with the pooling.
		top = newKeptTop(m.Config.NumFilters())
		poolExplain(r, top)
	} else {
		r.pool()
	}
	e := newExplanation(m, tokens, ids, &r.p)
	firedFilters(st, r, e, opt.Profiles)
	identifiedShares(m, e, ids)
	var o *occluder
	if opt.Occlusion || len(opt.OcclusionWidths) > 0 || opt.KeptDown > 0 {
		o = newOccluder(r, e)
	}
	if opt.Occlusion {
		e.Attributions.Occlusion = make([]float64, len(ids))
		e.Attributions.OcclusionLog = make([]float64, len(ids))
		for i := range ids {
			e.Attributions.Occlusion[i], e.Attributions.OcclusionLog[i] = o.span(i, i)
		}
	}
	for _, w := range opt.OcclusionWidths {
		for i := 0; i+w <= len(ids) || (i == 0 && len(ids) > 0); i++ {
			j := min(i+w, len(ids))
			d, dl := o.span(i, j-1)
			e.Attributions.Windows = append(e.Attributions.Windows, SpanOcclusion{Start: i, End: j, Drop: d, DropLog: dl})
		}
	}
	if opt.IG {
		var perClass [][]float64
		if opt.IGSteps > 0 {
			perClass = integratedGradients(r, e, opt.IGSteps)
		} else {
			perClass = igExact(r, e)
		}
		identifiedIG(r, e, perClass, opt.IGSteps)
	}
	if opt.KeptDown > 0 {
		e.KeptDown = keptDown(r, e, o, top, opt.KeptDown)
	}
	return e, nil
}

// checkExplain checks Explain's input and options.
func checkExplain(m *cnn.Model, tokens []corpus.Token, ids []int32, opt ExplainOptions) error {
	if tokens != nil && len(tokens) != len(ids) {
		return fmt.Errorf("explain: %d tokens but %d ids", len(tokens), len(ids))
	}
	for i, id := range ids {
		if id < 0 || int(id) >= m.Config.VocabSize {
			return fmt.Errorf("explain: token %d has id %d outside the vocabulary of %d", i, id, m.Config.VocabSize)
		}
	}
	if opt.Table != nil && opt.Table.m != m {
		return fmt.Errorf("explain: the slot table was built for another model")
	}
	for _, w := range opt.OcclusionWidths {
		if w < 1 {
			return fmt.Errorf("explain: occlusion window width %d: must be at least 1", w)
		}
	}
	if opt.IGSteps < 0 || opt.KeptDown < 0 {
		return fmt.Errorf("explain: IGSteps %d and KeptDown %d: must be 0 or more", opt.IGSteps, opt.KeptDown)
	}
	return nil
}

func distinct(ids []int32) []int32 {
	seen := make(map[int32]bool, len(ids))
	var out []int32
	for _, id := range ids {
		if !seen[id] {
			seen[id] = true
			out = append(out, id)
		}
	}
	return out
}

func newExplanation(m *cnn.Model, tokens []corpus.Token, ids []int32, p *Pass) *Explanation {
	C := m.Config.Classes
	e := &Explanation{
		Tokens: make([]TokenSpan, len(ids)),
		Labels: labelNames(m),
		wide:   newWideText(m, ids),
	}
	e.logits = logits64(m, p.Pooled, e.wide)
	for i, id := range ids {
		ts := TokenSpan{ID: id}
		if tokens != nil {
			ts.Text, ts.Start, ts.End = tokens[i].Text, tokens[i].Start, tokens[i].End
		} else {
			ts.Text = wordOf(m, id)
		}
		e.Tokens[i] = ts
	}
	e.Probabilities = softmax64(e.logits, make([]float64, C))
	e.Class = argmax64(e.logits)
	e.Label = e.Labels[e.Class]
	e.RunnerUp = runnerUp(e.logits, e.Class)
	return e
}

func labelNames(m *cnn.Model) []string {
	out := make([]string, m.Config.Classes)
	for c := range out {
		if c < len(m.Labels) {
			out[c] = m.Labels[c]
		} else {
			out[c] = fmt.Sprintf("class %d", c)
		}
	}
	return out
}

func wordOf(m *cnn.Model, id int32) string {
	if id >= 0 && int(id) < len(m.Vocab) {
		return m.Vocab[id]
	}
	switch id {
	case corpus.PAD:
		return corpus.PADWord
	case corpus.UNK:
		return corpus.UNKWord
	}
	return fmt.Sprintf("#%d", id)
}

// logits64 is the head in float64: OutB[c] + Σ_g OutW[c][g]·pooled[g],
// plus the wide path's term of the text (wide).
func logits64(m *cnn.Model, pooled []float32, wide wideText) []float64 {
	nf := m.Config.NumFilters()
	z := make([]float64, m.Config.Classes)
	for c := range z {
		s := float64(m.OutB[c])
		for g, h := range pooled {
			if h != 0 {
				s += float64(m.OutW[c*nf+g]) * float64(h)
			}
		}
		z[c] = s
	}
	wide.addTo(z)
	return z
}

func softmax64(z, p []float64) []float64 {
	mx := z[0]
	for _, v := range z[1:] {
		mx = max(mx, v)
	}
	var sum float64
	for i, v := range z {
		p[i] = math.Exp(v - mx)
		sum += p[i]
	}
	for i := range p {
		p[i] /= sum
	}
	return p
}

// logSoftmax64 returns log softmax(z)[c].
func logSoftmax64(z []float64, c int) float64 {
	mx := z[0]
	for _, v := range z[1:] {
		mx = max(mx, v)
	}
	var sum float64
	for _, v := range z {
		sum += math.Exp(v - mx)
	}
	return z[c] - mx - math.Log(sum)
}

func argmax64(v []float64) int {
	best := 0
	for i, x := range v {
		if x > v[best] {
			best = i
		}
	}
	return best
}

// firedFilters lists the fired filters with their winning windows' slot
// scores. With ReLU, 1-max pooling and a linear head,
//
//	logit[c] = OutB[c] + Σ_{g fired} OutW[c][g]·(B_g + Σ_s W_g[s]·Emb[x[t*_g+s]])
//	         + (1/N)·Σ_{t: x_t ≠ PAD} Wide[x_t][c]   (wide path only)
//
// where "fired" means pooled h_g > 0 and g not masked, so every contrast of
// the logits splits exactly over the output biases, the fired filters'
// biases, the slot scores of their winning windows and the words' wide
// rows (identifiedShares).
// Slots on PAD positions past the text have zero embeddings and score zero.
func firedFilters(st *SlotTable, r *Runner, e *Explanation, prof *Profiles) {
	m := st.m
	nf := m.Config.NumFilters()
	p := &r.p
	// One allocation for the list and one for every filter's slots.
	fired, slots := 0, 0
	for g, h := range p.Pooled {
		if h != 0 {
			fired++
			slots += m.FilterWidth(g)
		}
	}
	if fired == 0 {
		return
	}
	e.Filters = make([]FiredFilter, 0, fired)
	flat := make([]float64, slots)
	for g := 0; g < nf; g++ {
		h := p.Pooled[g]
		if h == 0 {
			continue
		}
		b, f := m.FilterConv(g)
		tb := &st.banks[b]
		w, F := tb.width, tb.filters
		t0 := int(p.Start[g])
		ff := FiredFilter{
			Filter: g, Width: w, Start: t0, Activation: float64(h),
			BiasTerm: float64(tb.bias[f]), Slots: flat[:w:w], Family: -1,
		}
		flat = flat[w:]
		for s := 0; s < w; s++ {
			ff.Slots[s] = float64(r.rows[b][t0+s][s*F+f])
		}
		r := VoteScale(m, g)
		ff.ActivationLogOdds, ff.BiasLogOdds = inLogOdds(ff.Activation, r), inLogOdds(ff.BiasTerm, r)
		ff.SlotsLogOdds = allInLogOdds(ff.Slots, r)
		if prof != nil {
			ff.Family = prof.familyOf(g, ff.Slots, ff.Activation)
		}
		e.Filters = append(e.Filters, ff)
	}
}

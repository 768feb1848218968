package gui

import (
	"context"
	"fmt"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
)

// runExplain explains text with the open model in the background and hands
// the explanation to done on the UI goroutine. One explanation runs at a
// time (explain.Explain cannot be stopped midway): a text typed while one
// runs waits for it, and only the newest text is explained next.
func (st *State) runExplain(text string, done func(*explainState)) {
	ms := itemGet(st.model)
	if ms == nil || strings.TrimSpace(text) == "" {
		st.cancel(taskExplain)
		done(nil)
		return
	}
	var prof *explain.Profiles
	if ps := itemGet(st.profiles); ps != nil {
		prof = ps.P
	}
	st.start(taskExplain, false, func(ctx context.Context, _ reporter) (func(), error) {
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
		m, enc, table, err := ms.reading(text)
		if err != nil {
			return nil, err
		}
		toks, ids := enc.Encode(text)
		if len(toks) == 0 {
			return func() { done(&explainState{Text: text}) }, nil
		}
		e, err := explain.Explain(m, toks, ids, explain.ExplainOptions{
			Table: table, Profiles: prof, Occlusion: true, IG: true, KeptDown: keptDownShown,
		})
		if err != nil {
			return nil, err
		}
		return func() { done(&explainState{Text: text, E: e, Known: len(ms.Model.Vocab)}) }, nil
	})
}

// reading is the model, encoder and word-slot table that read text as
// telltale predict does: with a character layer, the text's unseen words
// get vectors of their own (cnn.Model.WithUnseen), rows the vocabulary's
// table does not hold, so the table is nil then (explain builds the
// text's own). Other models and texts come back as ms holds them.
func (ms *modelState) reading(text string) (*cnn.Model, *corpus.Encoder, *explain.SlotTable, error) {
	m, enc, err := ms.Model.WithUnseen(ms.Enc, []string{text})
	if err != nil || m == ms.Model {
		return ms.Model, ms.Enc, ms.Table, err
	}
	return m, enc, nil, nil
}

// keptDownShown is the number of windows kept down the view lists.
const keptDownShown = 8

// quantityName names what the view splits: the log-odds of the predicted
// label against the runner-up (class −1) or class's centred logit.
func quantityName(e *explain.Explanation, class int) string {
	if class < 0 {
		return fmt.Sprintf("log p(%s)/p(%s)", e.Label, e.Labels[e.RunnerUp])
	}
	return fmt.Sprintf("the centred logit of %s", e.Labels[class])
}

// sharesFor is the split of the log-odds (class −1) or of class's centred
// logit.
func sharesFor(e *explain.Explanation, class int) *explain.Shares {
	if class < 0 {
		return &e.LogOdds
	}
	return &e.Centred[class]
}

// tokenValues returns the painted value of every token for the method and
// class (−1: the log-odds of the predicted label against the runner-up),
// and a sentence naming what it is.
func tokenValues(e *explain.Explanation, method string, class int) ([]float64, string) {
	v := make([]float64, len(e.Tokens))
	switch method {
	case methodOcclusion:
		copy(v, explain.Scores(e, explain.MethodOcclusion, -1))
		return v, fmt.Sprintf("how much p(%s) falls when the token is replaced by padding", e.Label)
	case methodIG:
		copy(v, explain.Scores(e, explain.MethodIG, class))
		return v, "integrated gradients of " + quantityName(e, class) + " from a text of padding only"
	default:
		copy(v, explain.Scores(e, explain.MethodExact, class))
		return v, "exact share of " + quantityName(e, class)
	}
}

// tokenDetail lists every number of token i (tokens counted from 0) for
// class (−1: the log-odds); known is the size of the model's vocabulary
// (explainState.Known).
func tokenDetail(e *explain.Explanation, i, class, known int) string {
	t := e.Tokens[i]
	word := fmt.Sprintf("word %d of the vocabulary", t.ID)
	if int(t.ID) >= known {
		word = "not in the vocabulary: its vector is read from its characters"
	}
	var b strings.Builder
	sh := sharesFor(e, class)
	fmt.Fprintf(&b, "Token %d, %q (%s, bytes %d–%d of the text). Exact share of %s: %+.5f",
		i, t.Text, word, t.Start, t.End, quantityName(e, class), sh.Tokens[i])
	if i < len(sh.Words) { // the wide path's part, already in the share
		fmt.Fprintf(&b, " (of which word weight %+.5f)", sh.Words[i])
	}
	if i < len(e.Attributions.Occlusion) {
		fmt.Fprintf(&b, "; occlusion: p(%s) falls by %+.5f (log-probability by %+.5f)", e.Label, e.Attributions.Occlusion[i], e.Attributions.OcclusionLog[i])
	}
	if ig := explain.Scores(e, explain.MethodIG, class); i < len(ig) {
		fmt.Fprintf(&b, "; integrated gradients: %+.5f", ig[i])
	}
	b.WriteString(".")
	return b.String()
}

package gui

import (
	"context"
	"fmt"
	"strings"

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
		toks, ids := ms.Enc.Encode(text)
		if len(toks) == 0 {
			return func() { done(&explainState{Text: text}) }, nil
		}
		e, err := explain.Explain(ms.Model, toks, ids, explain.ExplainOptions{
			Table: ms.Table, Profiles: prof, Occlusion: true, IG: true,
		})
		if err != nil {
			return nil, err
		}
		return func() { done(&explainState{Text: text, E: e}) }, nil
	})
}

// tokenValues returns the painted value of every token for the method and
// class, and a sentence naming what it is.
func tokenValues(e *explain.Explanation, method string, class int) ([]float64, string) {
	n := len(e.Tokens)
	v := make([]float64, n)
	switch method {
	case methodOcclusion:
		copy(v, e.Attributions.Occlusion)
		return v, fmt.Sprintf("how much p(%s) falls when the token is replaced by padding", e.Label)
	case methodIG:
		for i := range n {
			if i < len(e.Attributions.IG) {
				v[i] = e.Attributions.IG[i][class]
			}
		}
		return v, fmt.Sprintf("integrated gradients (%d steps) on the logit of %s", e.Attributions.IGSteps, e.Labels[class])
	default:
		for i := range n {
			v[i] = e.Attributions.Exact[i][class]
		}
		return v, fmt.Sprintf("exact share of the logit of %s", e.Labels[class])
	}
}

// tokenDetail lists every number of token i (tokens counted from 0).
func tokenDetail(e *explain.Explanation, i, class int) string {
	t := e.Tokens[i]
	var b strings.Builder
	fmt.Fprintf(&b, "Token %d, %q (word %d of the vocabulary, bytes %d–%d of the text). Exact share of the logit of %s: %+.5f",
		i, t.Text, t.ID, t.Start, t.End, e.Labels[class], e.Attributions.Exact[i][class])
	if i < len(e.Attributions.Occlusion) {
		fmt.Fprintf(&b, "; occlusion: p(%s) falls by %+.5f (log-probability by %+.5f)", e.Label, e.Attributions.Occlusion[i], e.Attributions.OcclusionLog[i])
	}
	if i < len(e.Attributions.IG) {
		fmt.Fprintf(&b, "; integrated gradients: %+.5f", e.Attributions.IG[i][class])
	}
	b.WriteString(".")
	return b.String()
}

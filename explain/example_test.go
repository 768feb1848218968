package explain_test

import (
	"fmt"

	"telltale/cnn"
	"telltale/explain"
)

// A one-filter model: the bigram filter scores "not" negatively in its first
// slot and "good" positively in its second, and votes for class "pos". The
// winning window is "not good" (0.5 − 2 + 3 = 1.5), so the logits are ∓1.5
// and the log-odds of pos against neg is 3. The filter's vote for pos over
// neg is 1 − (−1) = 2, so that splits into 2·0.5 = 1 for the filter's bias
// and the shares 2·(−2) = −4 ("not") and 2·3 = +6 (the second "good").
// Occluding "not" lets "PAD good" win with 3.5, which raises p(pos) from
// σ(3) to σ(7): a negative drop of 0.952574 − 0.999089.
func ExampleExplain() {
	m := &cnn.Model{
		Config: cnn.Config{VocabSize: 4, Dim: 2, Widths: []int{2}, Filters: 1, Classes: 2},
		Labels: []string{"neg", "pos"},
		Vocab:  []string{"<pad>", "<unk>", "not", "good"},
		Emb:    []float32{0, 0, 0, 0, 1, 0, 0, 1}, // not = (1, 0), good = (0, 1)
		// slot 0: not −2, good +1; slot 1: not −1, good +3
		Convs: []cnn.Conv{{Width: 2, W: []float32{-2, 1, -1, 3}, B: []float32{0.5}}},
		OutW:  []float32{-1, 1},
		OutB:  []float32{0, 0},
	}
	ids := []int32{3, 2, 3} // good not good
	e, _ := explain.Explain(m, nil, ids, explain.ExplainOptions{Occlusion: true})
	fmt.Printf("label %s, log p(pos)/p(neg) %.2f, filter bias part %.2f\n", e.Label, e.LogOdds.Value, e.LogOdds.FilterBias)
	for i, t := range e.Tokens {
		fmt.Printf("%-4s share %+.2f  occlusion %+.3f\n", t.Text, e.LogOdds.Tokens[i], e.Attributions.Occlusion[i])
	}
	// Output:
	// label pos, log p(pos)/p(neg) 3.00, filter bias part [1.00]
	// good share +0.00  occlusion +0.000
	// not  share -4.00  occlusion -0.047
	// good share +6.00  occlusion +0.222
}

// The same model and text, split into identified shares: the log-odds of
// "pos" against "neg" is 1.5 − (−1.5) = 3. The filter's vote for pos over
// neg is 1 − (−1) = 2, so its bias part is 2·0.5 = 1 and the tokens get
// 2·(−2) = −4 ("not") and 2·3 = +6 (the second "good"): 0 + 1 − 4 + 6 = 3.
// The centred logit of pos (its logit minus the mean of both) is half of
// that.
func ExampleExplain_logOdds() {
	m := &cnn.Model{
		Config: cnn.Config{VocabSize: 4, Dim: 2, Widths: []int{2}, Filters: 1, Classes: 2},
		Labels: []string{"neg", "pos"},
		Vocab:  []string{"<pad>", "<unk>", "not", "good"},
		Emb:    []float32{0, 0, 0, 0, 1, 0, 0, 1},
		Convs:  []cnn.Conv{{Width: 2, W: []float32{-2, 1, -1, 3}, B: []float32{0.5}}},
		OutW:   []float32{-1, 1},
		OutB:   []float32{0, 0},
	}
	e, _ := explain.Explain(m, nil, []int32{3, 2, 3}, explain.ExplainOptions{IG: true})
	lo := e.LogOdds
	fmt.Printf("log p(%s)/p(%s) = %.2f = output bias %.2f + filter bias %.2f + tokens %.2f\n",
		e.Labels[lo.Class], e.Labels[lo.Against], lo.Value, lo.OutputBias, lo.FilterBias, lo.Tokens)
	pos := e.Centred[1]
	fmt.Printf("centred logit of pos %.2f = %.2f + %.2f + %.2f\n", pos.Value, pos.OutputBias, pos.FilterBias, pos.Tokens)
	ig := e.Integrated.LogOdds
	fmt.Printf("integrated gradients from %.2f: %.2f\n", ig.Baseline, ig.Tokens)
	// Output:
	// log p(pos)/p(neg) = 3.00 = output bias 0.00 + filter bias [1.00] + tokens [0.00 -4.00 6.00]
	// centred logit of pos 1.50 = 0.00 + [0.50] + [0.00 -2.00 3.00]
	// integrated gradients from 1.00: [0.00 -4.00 6.00]
}

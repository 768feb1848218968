// Package explain tells what a trained sentence CNN (package cnn) responds to
// and why a text got its label. Every number it reports is an identity a
// test asserts or a quantity measured by re-running the model.
//
// # Word-slot tables
//
// With the model frozen, the dot product of a word's embedding with each
// filter slot never changes. A SlotTable holds T[word][slot][filter], so a
// window's pre-activation for all filters of a bank is the bias plus a sum of
// Width contiguous rows: the slot-score identity
//
//	a[g][t] = B_g + Σ_s T[x[t+s]][s][g]
//
// The table's memory is bounded (TableOptions.MaxBytes); words past the bound
// are computed on the fly. A Runner runs texts through a table; Scan does so
// for a whole corpus in parallel.
//
// # Why a text got its label
//
// Explain splits each logit exactly into a bias part and one share per token,
// and measures occlusion (each token, or each n-gram window, replaced by PAD)
// incrementally, touching only the windows that contain the replaced tokens.
// Integrated gradients over the embeddings with a PAD baseline are optional.
//
//	st, _ := explain.NewSlotTable(model, explain.TableOptions{})
//	e, _ := explain.Explain(model, tokens, ids, explain.ExplainOptions{Table: st, Occlusion: true})
//	// e.Bias[c] + Σ_i e.Attributions.Exact[i][c] == e.Logits[c]
package explain

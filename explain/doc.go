// Package explain tells what a trained sentence CNN (package cnn) responds to
// and why a text got its label. Every number it reports is an identity a
// test asserts or a quantity measured by re-running the model. It keeps
// profiles, families, attributions and faithfulness; the cue audit, which
// runs texts through its word-slot tables (SlotTable, Scan), is package
// audit.
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
// for a whole corpus in parallel. Built with GOEXPERIMENT=simd on amd64, the
// window sums with their running maximum and the table build run on
// AVX-512 or AVX2 kernels chosen at start-up (kernel_simd_amd64.go); other
// builds use the portable kernels of kernel.go, which give the same window
// sums bit for bit.
//
// # Why a text got its label
//
// Explain splits each logit exactly into a bias part and one share per token,
// and measures occlusion (each token, or each n-gram window, replaced by PAD)
// incrementally, touching only the windows that contain the replaced tokens.
// Integrated gradients over the embeddings with a PAD baseline are optional.
//
// # What each filter responds to
//
// Profile makes one parallel, cancellable pass over a corpus and describes
// every filter (FilterProfile): the class it votes for and by how much, its
// top distinct n-grams with per-slot scores and counts, an activation
// histogram, the purity threshold of Jacovi, Sar Shalom & Goldberg (2018)
// with the count above it and an idle mark, the trigger and suppressor words
// of each slot, and its families: above-threshold n-grams clustered by
// slot-score vector with average linkage (Sokal & Michener 1958), each
// described by its dominant slots and wildcards. Memory does not grow with
// the corpus: per filter it keeps bounded top lists and a fine histogram.
// ProfileStream does the same over a TextSource, for corpora too big to
// hold in memory; Profiles.WriteText writes a readable summary.
//
// # How much to trust an attribution
//
// Faithfulness measures comprehensiveness and sufficiency (DeYoung et al.
// 2020) and the deletion AOPC (Samek et al. 2017) of each method against a
// random ranking. WriteColored paints a text on ColorBrewer's PuOr scale.
//
//	st, _ := explain.NewSlotTable(model, explain.TableOptions{})
//	e, _ := explain.Explain(model, tokens, ids, explain.ExplainOptions{Table: st, Occlusion: true})
//	// e.Bias[c] + Σ_i e.Attributions.Exact[i][c] == e.Logits[c]
package explain

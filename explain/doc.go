// Package explain tells what a trained sentence CNN (package cnn) responds to
// and why a text got its label. Every number it reports is an identity a
// test asserts or a quantity measured by re-running the model, with its
// uncertainty where it is estimated. It keeps profiles, families,
// attributions and faithfulness; the cue audit, which runs texts through
// its word-slot tables (SlotTable, Scan), is package audit.
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
// window sums with their running maximum, the negative-window screen, the
// occluder's maxima, single-token occlusion and the kept-down search run on
// AVX-512 or AVX2 kernels chosen at start-up (kernel_simd_amd64.go,
// occkernel_simd_amd64.go, keptkernel_simd_amd64.go); other builds use the
// portable kernels (kernel.go, occkernel.go, keptkernel.go), which give the
// same results bit for bit. A GrowingTable is a SlotTable filled text by
// text, each word's row computed alone, so the rows equal the
// whole-vocabulary table's whichever texts came first.
//
// # Identified quantities
//
// Softmax does not change when the same number is added to every class's
// logit, and training's loss does not either; so the constant added to one
// filter's output weights over all classes (and to all output biases) is
// left free by the data, and any number that moves with it describes the
// arbitrary constant, not the model. Explain therefore splits identified
// quantities only: the log-odds of the predicted class against the
// runner-up (the default view, Explanation.LogOdds) and each class's
// centred logit, its logit minus the mean over classes (the per-class
// view, Explanation.Centred). Both are contrasts of logits whose class
// weights sum to zero. The logits themselves, the shares of one class's
// logit and a filter's raw output-weight column are not given; a property
// test asserts that every number given is invariant under such shifts.
//
// A model with the wide path (cnn.Config.Wide) adds the mean of its words'
// class weights to the logits, and with it one more free direction: a
// vector added to every word's weights but PAD's and taken from the output
// biases moves no logit of any text (a text with no word left is scored by
// the unknown word's weights). So a word's own wide
// weights are not given either, only their difference from the unknown
// word's (Shares.Words), the unknown word's going with the output bias;
// a second property test asserts invariance under that shift too. With
// bigram weights (cnn.Config.WideBigrams) the mean also runs over the
// text's pairs of adjacent words found in the model's set, the shift moves
// every pair's weights too, and each found pair's part (its difference
// from the unknown word's weights) is split evenly between its two tokens.
//
// ReLU and max pooling are positively homogeneous, so multiplying one
// filter's convolution weights and bias by k > 0 and dividing its
// output-weight column by k changes no prediction either, but multiplies
// its activation, slot scores, thresholds and histogram by k. Such numbers
// are given in log-odds units, times the filter's vote scale (VoteScale,
// the range of its output-weight column, which the rescaling divides by
// k), in the fields named …LogOdds; the raw ones are kept for computing
// and left out of JSON. The property tests rescale filters too.
//
// # Why a text got its label
//
// Explain splits each identified quantity exactly (Shares): the output
// bias, one part per fired filter's convolution bias, and one share per
// token (with a word part through the wide path, when the model has it). The method is gradient × input at the word vectors with every
// filter's winning window held fixed, against the zero word vector (PAD):
// with ReLU, max pooling and a linear head it is an exact decomposition.
// It measures occlusion (each token, or each n-gram window, replaced by
// PAD) incrementally, touching only the windows that contain the replaced
// tokens, and integrated gradients (Sundararajan, Taly & Yan 2017) with
// the PAD baseline in closed form: along the straight path every window of
// a filter starts from its bias, so the winning window never changes and
// each pooled value has one breakpoint, where its ReLU switches (IGResult;
// the Riemann sum is kept as a check that converges to it). KeptDown lists
// the windows that would have won their filter but for their negative
// slots, with the tokens that kept them down, checked by occluding those
// tokens.
//
// # What each filter responds to
//
// Profile makes one parallel, cancellable pass over a corpus and describes
// every filter (FilterProfile): the class it votes for and by how much, its
// top distinct n-grams with per-slot scores and counts, an activation
// histogram, the trigger and suppressor words of each slot, and:
//
//   - Selectivity: a purity threshold (Jacovi, Sar Shalom & Goldberg 2018)
//     measured from the class's base rate up, chosen on one half of the
//     corpus and tested on the other (which took no part in choosing it,
//     though the filter was trained on it too) with a one-sided exact
//     binomial test, Holm-corrected over the filters; filters that fail
//     are not selective.
//   - Negative n-grams (Jacovi et al. 2018): corpus windows whose positive
//     slots would pass the threshold but whose negative slots hold them
//     below it, ranked by how far they were held down. The threshold is
//     known only at the end of the pass, so each worker searches a band
//     around an early estimate with a k-skyline of candidate windows and the
//     texts it saw first are searched again at the end; a filter whose
//     threshold left a band is searched again over the texts read anew
//     (ProfileOptions.Reopen) or marked inexact.
//   - Families: a stratified random sample of the winning windows above
//     the threshold in the half that chose the threshold, each weighted by
//     the windows it stands for (Horvitz–Thompson), clustered by slot-score
//     vector with weighted average linkage (Sokal & Michener 1958),
//     clusters that read the same pattern joined into one family; each
//     family's share is measured on the other half's sample (its windows
//     placed in the nearest family), which took no part in choosing the
//     families, with a resampling interval (the exact Clopper–Pearson
//     interval in Kish's effective size where a family, or the rest, holds
//     fewer than 10 measured windows), and the estimated number of texts
//     with its interval; its bootstrap stability (Hennig 2007) is measured
//     on the half that chose the families, and its interval is the Monte
//     Carlo error of 50 resamples, not the sampling error of the texts.
//
// Memory does not grow with the corpus: per filter it keeps bounded top
// lists, skylines and samples and a fine histogram. ProfileStream does the
// same over a TextSource, for corpora too big to hold in memory. The
// command line (telltale filters) writes them as text.
//
// # How much to trust an attribution
//
// Faithfulness measures comprehensiveness and sufficiency (DeYoung et al.
// 2020) and the deletion AOPC (Samek et al. 2017) of each method's ranking
// of identified scores against a random ranking averaged over several
// draws, with bootstrap intervals and, between methods, the mean
// difference with an interval simultaneous over the comparisons
// (Bonferroni) and a sign-flip test with Holm's adjustment; single-token
// removals, where occlusion is best by construction, are reported apart. Paint paints a text on ColorBrewer's PuOr scale.
//
//	st, _ := explain.NewSlotTable(model, explain.TableOptions{})
//	e, _ := explain.Explain(model, tokens, ids, explain.ExplainOptions{Table: st, Occlusion: true, IG: true})
//	// e.LogOdds.Value == e.LogOdds.Parts(): output bias + filter biases + token shares
package explain

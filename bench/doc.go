// Command bench measures telltale's classifier side by side with a PyTorch
// reference implementation of the same recipe (bench/reference.py), on the
// same machine, the same thread count and the same encoded data.
//
// It is driven by bench/run.sh (`make bench`); its subcommands are
//
//	bench prepare -corpus synth -n N -out DIR   a seeded synthetic corpus
//	bench prepare -corpus spam -root R -out DIR the SpamAssassin corpus (subject + body)
//	bench train -dir DIR [-epochs E] [-threads T] [-json FILE]
//	bench tools -synth DIR -spam DIR [-json FILE]
//	bench table FILE...                          the ratio table of result files
//
// prepare encodes the texts once with telltale's tokenizer and vocabulary and
// writes DIR/ids.bin (see writeIDs for the layout), which both this command
// and the reference read, so tokenization, vocabulary and labels are
// identical on both sides. train trains the default recipe (128-d
// embeddings, widths 3, 4, 5 × 100 feature maps, dropout 0.5, Adam 1e-3,
// batch 50, length-bucketed batches, no early stopping) and then times
// inference in batches of 100; it writes one JSON result per run. tools times
// the explanation work of the tool alone: filter profiles of a corpus, one
// explanation of a 200-token text with every single-token occlusion, and the
// spurious-cue audit.
package main

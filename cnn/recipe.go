package cnn

import (
	"telltale/corpus"
	"telltale/linear"
)

// Default shares of the labeled data held out when no separate file is
// given: the dev split (early stopping) and the test split (the final
// evaluation). Both are stratified by label and seeded.
const (
	DefaultDevFrac  = 0.1
	DefaultTestFrac = 0.1
)

// DefaultWideLR is the factor on the learning rate of the word-weight
// table (TrainConfig.WideLR) that `train --wide` and the window use: of
// 1, 10, 30, 100, 300 and 1000, the best mean dev macro-F1 on the State of
// the Union addresses over seeds 1–3 (docs/default-recipe.md). At the
// rest's rate the table barely moves from zero before early stopping ends
// the run.
const DefaultWideLR = 100

// DefaultRecipe is the one recipe the command line, the window, the
// benchmark and the tests start from: the architecture of Kim (2014) with
// dropout 0.3 and Adam at a learning rate of 0.002 for at most 20 epochs
// with patience 5, word and bigram weights beside the filters (Config.Wide and
// WideBigrams, at DefaultWideLR times the learning rate; Joulin et al.
// 2017), a tenth of the training tokens replaced by UNK in every batch
// (TokenDropout), and the linear baseline fitted beside the CNN. VocabSize
// and Classes are filled in from the data by TrainText.
//
// It was chosen on the dev splits of the demo, SpamAssassin and State of
// the Union corpora, never on a test split, as the candidate with the best
// mean dev macro-F1 over seeds 1–3 (docs/default-recipe.md;
// internal/recipesearch measures the candidates): the word and bigram
// weights gained +0.035 on the State of the Union dev split and lost
// nothing beyond noise on the other two. Earlier searches (more filters,
// larger embeddings, a PPMI start, merged ensembles, batch size, learning
// rate, EmbedDropout, HeadWarmup, LRDecay, max-norm, pretrained vectors)
// found no change that beats Kim's model by more than two standard errors
// of the seeds' spread. The learning rate of 0.002 (twice Adam's usual
// 0.001) was the best candidate of the twelfth round on those three dev
// splits and is ahead on the dev folds of real product reviews too
// (internal/reviewset; +0.0049, 1.9 standard errors), the thirteenth
// round: a mean gain of +0.0032 over the four corpora, below the earlier
// rounds' rule of two standard errors, taken as the one candidate carried
// forward (docs/default-recipe.md). The fourteenth round took 20
// epochs with patience 5 and dropout 0.3 (Kim's 0.5 before): on fresh
// seeds of the reviews' dev folds +0.0081 (3.9 standard errors of the 50
// paired runs), and no loss beyond 0.005 on the other three corpora's dev
// splits, the rule fixed before the round. The sixteenth round's fitted
// start of the word weights (TrainConfig.WideFit) qualified on dev and
// drew level with the baseline on the reviews' test folds, but leaned on
// the demo's planted cues harder than the baseline, so it stays an option.
// The seventeenth round (that start with its C fixed, WideFitC) and the
// eighteenth (the balanced ClassWeight, on review sentences with unbalanced
// labels) failed that check or its stand-in on the demo's dev split: in
// each, a seed that kept its first or second epoch leaned on the cues.
// The nineteenth round joined each of the two with KeepFrom 5: both held
// with the cues spread, but the fitted start lost 0.0082 on the demo's dev
// split and the balanced weight 0.0128 on the addresses', so KeepFrom stays
// an option (train --keep-from). Screens of the fitted start held at the
// fit, or at ×1 or ×10 the rate, lost 0.005–0.008 on the addresses' dev
// split (held at C 1: 0.03), so none went on to a round; held beside
// out-of-fold terms (WideFitFolds) it lost 0.0185 there, and held with a
// learned scale (WideFitScale) it leaned on the demo's cues. A moving
// average of the weights over the steps (WeightAverage) lost on the
// skewed review sentences at every horizon tried, and the held start
// shrunk by half (WideFitShrink) lost 0.0161 on the addresses' dev split
// (the seventh and eighth screens after the nineteenth round).
func DefaultRecipe() Recipe {
	base := linear.DefaultConfig()
	return Recipe{
		Tokenizer: corpus.TokenizerConfig{Lower: true, MinCount: 1},
		Model:     Config{Dim: 128, Widths: []int{3, 4, 5}, Filters: 100, Dropout: 0.3, Wide: true, WideBigrams: true},
		Train: TrainConfig{Epochs: 20, Batch: 50, Optimizer: "adam", Seed: 1, Patience: 5, MaxLen: 400,
			TokenDropout: 0.1, WideLR: DefaultWideLR, LR: 2e-3},
		Baseline: &base,
	}
}

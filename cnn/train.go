package cnn

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"time"
)

// TrainConfig is the training recipe. Zero fields take the defaults noted.
type TrainConfig struct {
	Epochs    int     `json:"epochs"`    // passes over the training split; default 10
	Batch     int     `json:"batch"`     // mini-batch size; default 50 (Kim 2014)
	Optimizer string  `json:"optimizer"` // "adam" (default) or "adadelta"
	LR        float64 `json:"lr"`        // learning rate; 0: 1e-3 for Adam, 1.0 for Adadelta (DefaultRecipe sets 2e-3)
	Beta1     float64 `json:"beta1"`     // Adam; default 0.9
	Beta2     float64 `json:"beta2"`     // Adam; default 0.999
	Rho       float64 `json:"rho"`       // Adadelta decay; default 0.95 (Kim 2014; Zeiler 2012)
	Eps       float64 `json:"eps"`       // default 1e-8 for Adam, 1e-6 for Adadelta
	Seed      uint64  `json:"seed"`      // shuffling and dropout
	Threads   int     `json:"threads"`   // goroutines; 0 means GOMAXPROCS
	// Patience stops training after this many epochs without a better dev
	// macro-F1; 0 means the default 3, negative turns early stopping off.
	Patience  int  `json:"patience"`
	MaxLen    int  `json:"max_len"`    // texts are cut to this many tokens; 0 keeps them whole
	FreezeEmb bool `json:"freeze_emb"` // keep the embeddings fixed
	// ClassWeight "balanced" weights each training text's loss by
	// n/(k·n_c) (n texts, k classes, n_c texts of its class: scikit-learn's
	// "balanced"); "" weighs every text 1.
	ClassWeight string `json:"class_weight,omitempty"`
	// WordDropout is α of the word dropout of Kiperwasser & Goldberg (2016,
	// "Simple and Accurate Dependency Parsing Using Bidirectional LSTM
	// Feature Representations", TACL): in every training batch each
	// occurrence of a word seen #w times in the training split is replaced
	// by UNK with probability α/(#w+α), so the UNK vector is trained on
	// what unknown words are like, the rare words. 0 turns it off.
	WordDropout float64 `json:"word_dropout,omitempty"`
	// TokenDropout is the probability that any token of a training batch is
	// replaced by UNK, whatever its count (word dropout as in Bowman et al.
	// 2016, "Generating Sentences from a Continuous Space", CoNLL): no one
	// word can carry a prediction alone. It combines with WordDropout (a
	// word is kept only if both keep it). 0 turns it off.
	TokenDropout float64 `json:"token_dropout,omitempty"`
	// EmbedInit is how TrainText starts the embedding table before
	// training: "" (uniform in ±0.25, Kim 2014) or "ppmi" (the frequent
	// training words' PPMI-SVD vectors, Model.InitCooccurrence; the others
	// uniform). Train starts from the model it is given and ignores it.
	EmbedInit string `json:"embed_init,omitempty"`
	// WeightDecay is the decoupled weight decay of Loshchilov & Hutter
	// (2019, "Decoupled Weight Decay Regularization", ICLR): every step
	// multiplies the weights (embeddings, filters and output weights, not
	// the biases) by 1 − LR·WeightDecay before the optimizer's step. 0
	// turns it off.
	WeightDecay float64 `json:"weight_decay,omitempty"`
	// AverageLast, when 2 or more, makes the model of each epoch the mean
	// of the weights at the ends of the last AverageLast epochs (fewer in
	// the first epochs): checkpoint averaging as in Vaswani et al. (2017,
	// "Attention Is All You Need", section 6.1). The mean of weights is one
	// model of the same shape; dev chooses among these means, and training
	// continues from the latest weights. 0 or 1 keeps each epoch's own.
	AverageLast int `json:"average_last,omitempty"`
	// WeightAverage, when set, makes the model of each epoch the
	// exponential moving average of the weights over the training steps so
	// far (sampled every few steps), with a horizon of this many epochs (at
	// most 1e6): the decay per step is
	// 1 − 1/(WeightAverage·S), S the batches of an epoch (average.go:
	// averaged iterates, Polyak & Juditsky 1992, bias-corrected so the
	// random start carries no weight). Dev chooses among these averages
	// and the run keeps one; training continues from the latest weights.
	// 0 turns it off. It excludes AverageLast and WideFitScale.
	WeightAverage float64 `json:"weight_average,omitempty"`
	// StopOn is what early stopping and the choice of the kept epoch
	// follow on the dev split: "macro-f1" ("" too: the highest), "loss"
	// (the lowest mean cross-entropy) or "macro-f1,loss" (the highest
	// macro-F1, and of epochs tied on it the lowest loss: a small or easy
	// dev split often scores several epochs the same).
	StopOn string `json:"stop_on,omitempty"`
	// EmbedDropout is the dropout probability of the values of the word
	// vectors the convolutions read (Srivastava et al. 2014; on the input
	// layer of a sentence CNN as Zhang & Wallace 2015, "A Sensitivity
	// Analysis of (and Practitioners' Guide to) Convolutional Neural
	// Networks for Sentence Classification", discuss): in every training
	// batch each value of each of the batch's word vectors is zeroed with
	// this probability, the kept ones scaled by 1/(1−p), one mask per word
	// of the batch. 0 turns it off; it must be below 1.
	EmbedDropout float64 `json:"embed_dropout,omitempty"`
	// HeadWarmup is how many first epochs train the output layer alone,
	// the embeddings, filters and character layer kept as they started
	// (the last layer first, as the gradual unfreezing of Howard & Ruder
	// 2018, "Universal Language Model Fine-tuning for Text
	// Classification", ACL). These epochs count among Epochs and are
	// evaluated on dev like the others. 0 turns it off.
	HeadWarmup int `json:"head_warmup,omitempty"`
	// KeepFrom is the first epoch (1-based) the run may keep: the choice
	// of the kept epoch starts again there, so an earlier epoch is kept
	// only when the run ends before it (cancelled or diverged), and
	// patience counts from it at the earliest. The first epochs are where
	// the word weights, at their higher rate, have learned the easiest
	// tokens and little else, artifacts of the collection among them
	// (docs/default-recipe.md, the eighteenth round). 0 or 1 may keep any epoch; one
	// beyond Epochs counts as Epochs (the run keeps its last epoch), so that
	// a recipe with a KeepFrom still allows a short run of a few epochs.
	KeepFrom int `json:"keep_from,omitempty"`
	// LRDecay γ, when set, makes the learning rate of epoch e (1-based)
	// LR·γ^(e−1): an exponential schedule, common practice, no source. 0
	// (or 1) keeps LR throughout; it must be in [0, 1].
	LRDecay float64 `json:"lr_decay,omitempty"`
	// WideLR multiplies the learning rate (and so the decoupled weight
	// decay) of the wide word-weight table (Config.Wide); 0 means 1.
	WideLR float64 `json:"wide_lr,omitempty"`
	// WideSparse trains the word and bigram weight tables (Config.Wide,
	// WideBigrams) with a row-sparse ("lazy") Adam, as
	// torch.optim.SparseAdam does: in each step only the rows the batch
	// touches (its words after word dropout, UNK's row when a text has no
	// word, its kept pairs) get the Adam update, with their own moments;
	// every other row keeps its value and moments, instead of moving on
	// its momentum. The step count of the bias correction is one per table,
	// counted every step, as SparseAdam keeps one per parameter tensor. The
	// step costs the batch's rows, not the whole tables. It needs the Adam
	// optimizer and refuses WeightDecay (SparseAdam has none); without wide
	// tables it changes nothing.
	WideSparse bool `json:"wide_sparse,omitempty"`
	// WideDecay is a decoupled weight decay (Loshchilov & Hutter 2019) on
	// the word and bigram weight tables alone (Config.Wide, WideBigrams):
	// every step multiplies every row of both, before the optimizer's step
	// as torch.optim.AdamW does, by 1 − LR·WideLR·WideDecay, on top of
	// WeightDecay's shrink: together 1 − LR·WideLR·(WeightDecay+WideDecay),
	// which must stay above 0. 0 turns it off. It must be finite and not
	// negative; Train refuses it with WideSparse (the sparse update has no
	// weight decay) and for a model without word or bigram weights.
	WideDecay float64 `json:"wide_decay,omitempty"`
	// WideNBRate γ, when set, gives each row of the word and bigram weight
	// tables (Config.Wide, WideBigrams) its own factor on the learning
	// rate: |r|^γ over the table's mean of |r|^γ, r the row's naive-Bayes
	// log-count ratio in the training split (Wang & Manning 2012,
	// "Baselines and Bigrams: Simple, Good Sentiment and Topic
	// Classification", ACL: NBSVM scales its features by r; under Adam a
	// feature scaled by r moves its effect about r times as fast, so the
	// factor does for the rate what that scale does for the features,
	// leaving the model and its explanations as they are). Binarized
	// counts, α = 1, each table on its own, one class against the rest
	// (the largest |r| over the classes); nbrate.go. The factor scales
	// the optimizer's step, not the decoupled weight decay. 0 turns it
	// off; a screen on the review sets measured 1 and 0.5 and left it out
	// of the default (docs/default-recipe.md, "Each word's and pair's own
	// rate"). It must be finite and not negative; Train
	// refuses it with the fitted start held (WideFitFolds, WideFitScale)
	// and for a model without word weights.
	WideNBRate float64 `json:"wide_nb_rate,omitempty"`
	// WideFit starts the word and bigram weights (Config.Wide,
	// WideBigrams) at the logistic regression fitted on the wide path's
	// features, C chosen on dev like the baseline's unless WideFitC fixes
	// it, and the filters' output weights at zero (widefit.go), so training
	// starts from that linear model (or a part of it: WideFitShrink). It
	// needs the word weights.
	WideFit bool `json:"wide_fit,omitempty"`
	// WideFitFolds, 2 or more, holds the fitted start (WideFit) where the
	// fit put it (the word and bigram weights take no update) and trains
	// the rest beside out-of-fold wide terms: the training split is cut
	// into that many folds (by Seed), the logistic regression refitted at
	// the chosen C on all folds but one, and each training text's wide
	// term in a step is that of the fit that did not see it
	// (cross-fitting, as in stacked generalization, Wolpert 1992,
	// "Stacked generalization"). Dev evaluation and the trained model use
	// the full fit. 0 trains the fitted start like any weight; it needs
	// WideFit.
	WideFitFolds int `json:"wide_fit_folds,omitempty"`
	// WideFitScale holds the fitted start (WideFit) where the fit put it,
	// as WideFitFolds does, and multiplies its whole wide term by one
	// scale that training learns (started at 1, with the rest's optimizer
	// and rate), folded into the word and bigram weights at the end of
	// every epoch, so the model keeps its shape. It needs WideFit.
	WideFitScale bool `json:"wide_fit_scale,omitempty"`
	// WideFitShrink multiplies the fitted start (WideFit: the word and
	// bigram weights and the intercepts) by this factor before the first
	// step: the first stage of a boosting with shrinkage (Friedman 2001,
	// "Greedy Function Approximation: A Gradient Boosting Machine", Ann.
	// Statist. 29(5), section 5; the intercepts are shrunk too, where
	// Friedman's first stage, a constant, is not), so that the filters fit
	// what that part of the linear model leaves. 0 means 1 (no shrink); it must be in [0, 1],
	// and 0 without WideFit or with WideFitFolds.
	WideFitShrink float64 `json:"wide_fit_shrink,omitempty"`
	// WideFitC fixes the fitted start's inverse regularisation strength
	// (WideFit); 0 chooses it on dev from the baseline's grid. It must be
	// finite and not negative, and 0 without WideFit. A C chosen on dev
	// follows whatever predicts dev, artifacts of the collection included
	// (docs/default-recipe.md, the seventeenth round).
	WideFitC float64 `json:"wide_fit_c,omitempty"`
	// MaskTokens are the patterns (corpus.MaskTokens: plain tokens, or
	// regular expressions between slashes) that TrainText takes out of
	// every training and dev text before it builds the vocabulary: train's
	// --mask-tokens, and the cues a model was retrained without (audit
	// --retrain). The model file records them, so that training the
	// model's recipe again (audit --seeds and --retrain, the window's
	// retraining) takes the same tokens out. Train, which is given encoded
	// texts, ignores them; nil (every model file written before they were
	// recorded) takes nothing out.
	MaskTokens []string `json:"mask_tokens,omitempty"`
}

// WithDefaults returns tc with every zero field set to its default, or an
// error naming the first invalid setting.
func (tc TrainConfig) WithDefaults() (TrainConfig, error) {
	if tc.Epochs == 0 {
		tc.Epochs = 10
	}
	if tc.Batch == 0 {
		tc.Batch = 50
	}
	if tc.Optimizer == "" {
		tc.Optimizer = "adam"
	}
	switch tc.Optimizer {
	case "adam":
		tc.LR = or(tc.LR, 1e-3)
		tc.Eps = or(tc.Eps, 1e-8)
	case "adadelta":
		tc.LR = or(tc.LR, 1.0)
		tc.Eps = or(tc.Eps, 1e-6)
	default:
		return tc, fmt.Errorf("cnn: optimizer %q: use adam or adadelta", tc.Optimizer)
	}
	tc.Beta1 = or(tc.Beta1, 0.9)
	tc.Beta2 = or(tc.Beta2, 0.999)
	tc.Rho = or(tc.Rho, 0.95)
	if tc.Patience == 0 {
		tc.Patience = 3
	}
	if tc.Threads <= 0 {
		tc.Threads = runtime.GOMAXPROCS(0)
	}
	switch {
	case tc.Epochs < 0:
		return tc, fmt.Errorf("cnn: %d epochs: must be at least 1", tc.Epochs)
	case tc.Batch < 1:
		return tc, fmt.Errorf("cnn: batch size %d: must be at least 1", tc.Batch)
	case tc.LR <= 0:
		return tc, fmt.Errorf("cnn: learning rate %g: must be positive", tc.LR)
	case tc.Beta1 < 0 || tc.Beta1 >= 1 || tc.Beta2 < 0 || tc.Beta2 >= 1 || tc.Rho < 0 || tc.Rho >= 1:
		return tc, fmt.Errorf("cnn: optimizer decay rates must be in [0, 1)")
	case tc.Eps <= 0:
		return tc, fmt.Errorf("cnn: optimizer epsilon %g: must be positive", tc.Eps)
	case tc.MaxLen < 0:
		return tc, fmt.Errorf("cnn: max length %d: must be 0 (no limit) or positive", tc.MaxLen)
	case tc.ClassWeight != "" && tc.ClassWeight != "balanced":
		return tc, fmt.Errorf("cnn: class weight %q: use balanced or leave it empty", tc.ClassWeight)
	case tc.WordDropout < 0 || math.IsInf(tc.WordDropout, 0) || math.IsNaN(tc.WordDropout):
		return tc, fmt.Errorf("cnn: word dropout %g: must be 0 (off) or positive", tc.WordDropout)
	case !(tc.TokenDropout >= 0 && tc.TokenDropout < 1):
		return tc, fmt.Errorf("cnn: token dropout %g: must be in [0, 1)", tc.TokenDropout)
	case tc.EmbedInit != "" && tc.EmbedInit != InitPPMI:
		return tc, fmt.Errorf("cnn: embedding start %q: use %s or leave it empty", tc.EmbedInit, InitPPMI)
	case !(tc.WeightDecay >= 0) || tc.WeightDecay*tc.LR >= 1:
		return tc, fmt.Errorf("cnn: weight decay %g: must be 0 (off) or positive with decay × learning rate below 1", tc.WeightDecay)
	case tc.AverageLast < 0:
		return tc, fmt.Errorf("cnn: average of the last %d epochs: must be 0 (off) or positive", tc.AverageLast)
	case tc.StopOn != "" && tc.StopOn != StopMacroF1 && tc.StopOn != StopLoss && tc.StopOn != StopMacroF1Loss:
		return tc, fmt.Errorf("cnn: stop on %q: use %s, %s or %s", tc.StopOn, StopMacroF1, StopLoss, StopMacroF1Loss)
	case !(tc.EmbedDropout >= 0 && tc.EmbedDropout < 1):
		return tc, fmt.Errorf("cnn: embedding dropout %g: must be in [0, 1)", tc.EmbedDropout)
	case tc.HeadWarmup < 0 || tc.HeadWarmup >= tc.Epochs:
		return tc, fmt.Errorf("cnn: head warm-up of %d epochs: must be 0 (off) or fewer than the %d epochs", tc.HeadWarmup, tc.Epochs)
	case tc.KeepFrom < 0:
		return tc, fmt.Errorf("cnn: keep from epoch %d: must be 0 (any epoch) or positive", tc.KeepFrom)
	case !(tc.LRDecay >= 0 && tc.LRDecay <= 1):
		return tc, fmt.Errorf("cnn: learning-rate decay %g: must be in [0, 1] (0: none)", tc.LRDecay)
	case !(tc.WideLR >= 0) || math.IsInf(tc.WideLR, 0) || tc.WeightDecay*tc.LR*tc.WideLR >= 1:
		return tc, fmt.Errorf("cnn: wide learning-rate factor %g: must be 0 (1×) or positive, with decay × learning rate × factor below 1", tc.WideLR)
	case tc.WideSparse && tc.Optimizer != "adam":
		return tc, fmt.Errorf("cnn: sparse word weights need the adam optimizer, not %s: choose adam or turn the sparse update off", tc.Optimizer)
	case tc.WideSparse && tc.WeightDecay > 0:
		return tc, fmt.Errorf("cnn: sparse word weights with weight decay %g: the sparse update has no weight decay; set weight decay 0 or turn the sparse update off", tc.WeightDecay)
	}
	if err := tc.checkWideFitSettings(); err != nil {
		return tc, err
	}
	if err := tc.checkWeightAverage(); err != nil {
		return tc, err
	}
	return tc, tc.checkWideDecay()
}

// checkWeightAverage returns an error if WeightAverage is negative or not
// finite, or set with AverageLast or WideFitScale.
func (tc TrainConfig) checkWeightAverage() error {
	switch {
	case !(tc.WeightAverage >= 0 && tc.WeightAverage <= maxAverageEpochs):
		return fmt.Errorf("cnn: moving average over %g epochs: must be 0 (off) or positive, at most a million epochs", tc.WeightAverage)
	case tc.WeightAverage > 0 && tc.AverageLast >= 2:
		return fmt.Errorf("cnn: a moving average of the weights and an average of the last %d epochs: choose one", tc.AverageLast)
	case tc.WeightAverage > 0 && tc.WideFitScale:
		return fmt.Errorf("cnn: a moving average of the weights with a learned scale of the fitted start: the scale lives outside the weights until an epoch ends; turn one off")
	}
	return nil
}

// checkWideFitSettings returns an error if a setting of the fitted start
// (WideFitC, WideFitFolds, WideFitScale, WideFitShrink) is out of range or
// set without WideFit, or if WideNBRate is out of range or set with the
// start held.
func (tc TrainConfig) checkWideFitSettings() error {
	switch {
	case !(tc.WideFitC >= 0) || math.IsInf(tc.WideFitC, 0):
		return fmt.Errorf("cnn: C %g of the fitted start: must be 0 (chosen on dev) or a finite positive number", tc.WideFitC)
	case tc.WideFitC > 0 && !tc.WideFit:
		return fmt.Errorf("cnn: C %g of the fitted start, but no fitted start: turn WideFit on or set WideFitC to 0", tc.WideFitC)
	case tc.WideFitFolds < 0 || tc.WideFitFolds == 1:
		return fmt.Errorf("cnn: %d folds for the fitted start's out-of-fold terms: must be 0 (none) or 2 or more", tc.WideFitFolds)
	case tc.WideFitFolds > 0 && !tc.WideFit:
		return fmt.Errorf("cnn: %d folds for the fitted start, but no fitted start: turn WideFit on or set WideFitFolds to 0", tc.WideFitFolds)
	case tc.WideFitScale && !tc.WideFit:
		return fmt.Errorf("cnn: a learned scale of the fitted start, but no fitted start: turn WideFit on or WideFitScale off")
	case !(tc.WideFitShrink >= 0 && tc.WideFitShrink <= 1):
		return fmt.Errorf("cnn: shrink %g of the fitted start: must be in [0, 1] (0: none)", tc.WideFitShrink)
	case tc.WideFitShrink > 0 && (!tc.WideFit || tc.WideFitFolds > 0):
		return fmt.Errorf("cnn: shrink %g of the fitted start needs a fitted start without out-of-fold terms: turn WideFit on and WideFitFolds off, or set the shrink to 0", tc.WideFitShrink)
	case !(tc.WideNBRate >= 0) || math.IsInf(tc.WideNBRate, 0):
		return fmt.Errorf("cnn: naive-Bayes rate exponent %g: must be 0 (off) or a finite positive number", tc.WideNBRate)
	case tc.WideNBRate > 0 && (tc.WideFitFolds > 0 || tc.WideFitScale):
		return fmt.Errorf("cnn: naive-Bayes rates of the word weights, but the fitted start holds them: set the exponent to 0 or turn WideFitFolds and WideFitScale off")
	}
	return nil
}

// checkWideDecay returns an error if WideDecay is negative, not finite,
// shrinks the wide tables to zero or below in a step together with
// WeightDecay, or is set with WideSparse. tc must have its defaults (LR).
func (tc TrainConfig) checkWideDecay() error {
	switch k := tc.LR * or(tc.WideLR, 1) * (tc.WeightDecay + tc.WideDecay); {
	case !(tc.WideDecay >= 0) || math.IsInf(tc.WideDecay, 0):
		return fmt.Errorf("cnn: wide weight decay %g: must be 0 (off) or a finite positive number", tc.WideDecay)
	case k >= 1:
		return fmt.Errorf("cnn: wide weight decay %g: learning rate %g × wide factor %g × (weight decay %g + wide decay %g) = %g must be below 1; lower the wide decay", tc.WideDecay, tc.LR, or(tc.WideLR, 1), tc.WeightDecay, tc.WideDecay, k)
	case tc.WideSparse && tc.WideDecay > 0:
		return fmt.Errorf("cnn: sparse word weights with wide weight decay %g: the sparse update has no weight decay; set wide decay 0 or turn the sparse update off", tc.WideDecay)
	}
	return nil
}

// Values of TrainConfig.EmbedInit and StopOn.
const (
	InitPPMI    = "ppmi"
	StopMacroF1 = "macro-f1"
	StopLoss    = "loss"
	// StopMacroF1Loss is macro-F1 with ties broken by the lower dev loss.
	StopMacroF1Loss = "macro-f1,loss"
)

func or(v, def float64) float64 {
	if v == 0 {
		return def
	}
	return v
}

// EpochResult is the record of one training epoch.
type EpochResult struct {
	Epoch          int      `json:"epoch"`
	Loss           float64  `json:"loss"` // mean training cross-entropy
	Dev            *Metrics `json:"dev,omitempty"`
	ExamplesPerSec float64  `json:"examples_per_second"`
	Seconds        float64  `json:"seconds"` // training time of the epoch, dev evaluation excluded
}

// TrainResult is the record of a training run.
type TrainResult struct {
	Epochs    []EpochResult `json:"epochs"`
	BestEpoch int           `json:"best_epoch"` // 1-based; 0 when no epoch completed
	// ExamplesPerSec is the training throughput in steady state: examples over
	// training time of the epochs after the first (the first alone when there
	// is only one).
	ExamplesPerSec float64 `json:"examples_per_second"`
	Cancelled      bool    `json:"cancelled"`     // the context ended training
	StoppedEarly   bool    `json:"stopped_early"` // patience ran out
	// Diverged, when set, says where the loss or the weights stopped being
	// finite numbers; training stopped there.
	Diverged *Divergence `json:"diverged,omitempty"`
}

// Divergence is where a training run diverged.
type Divergence struct {
	Epoch int `json:"epoch"`
	// Batch is the batch of the epoch (1-based) whose loss was not finite,
	// or 0 when the loss was finite but a weight was not at the end of the
	// epoch.
	Batch int `json:"batch"`
	// Value is the loss ("NaN", "+Inf") or, when Batch is 0, "weights".
	Value string `json:"value"`
}

// Progress is what Train reports while it runs.
type Progress struct {
	Epoch, Epochs  int
	Batch, Batches int      // batches done in this epoch, of Batches
	Loss           float64  // mean training loss of the epoch so far
	Dev            *Metrics // set on the report at the end of an epoch when there is a dev split
	ExamplesPerSec float64  // throughput of the epoch so far
	Phase          string   // "train" during an epoch, "epoch" at its end, "done" at the very end
	// Model, on the "epoch" report, is the epoch's model: the one the dev
	// split scored (with WeightAverage or AverageLast an average). It is
	// valid only during the call and must not be changed or kept; nil on
	// the other reports.
	Model *Model
}

// progressEvery is how many batches pass between progress reports.
const progressEvery = 10

// Train fits m to train by mini-batch gradient descent and returns the
// training record. After each epoch the epoch's model (its weights, with
// WeightAverage their moving average over the steps, or with AverageLast
// the mean of the last epochs' weights) is evaluated on dev
// (which may be empty); the model of the epoch with the best dev macro-F1
// (or lowest dev loss, or with StopMacroF1Loss the lower dev loss of epochs
// tied on macro-F1: StopOn; otherwise the earlier one on ties; with no dev
// split, the last epoch) is kept, and training stops when Patience epochs
// pass without such an improvement. On return m holds those
// weights, also when ctx is cancelled (then Cancelled is set and the error is
// nil; if no epoch completed, m holds the weights reached so far). A batch
// whose loss is NaN or infinite, or a weight that is not finite at the end
// of an epoch, stops training at once (a learning rate far too large, say):
// Diverged says where, m holds the best epoch's weights, and BestEpoch is 0
// when no epoch had completed (m's weights are then unusable).
//
// Progress, if not nil, is called from Train's goroutine every few batches and
// at the end of every epoch. Results are identical for the same model, data,
// seed and thread count.
//
// The batch step (Kim 2014): embeddings, convolution of each width, ReLU,
// max over time, dropout on the pooled layer (inverted: kept units are scaled
// by 1/(1−p)), a linear layer, softmax cross-entropy averaged over the batch;
// Adam (Kingma & Ba 2015, in PyTorch's formulation) or Adadelta (Zeiler 2012);
// then the optional max-norm constraint on each row of OutW (Kim 2014).
// EmbedDropout, HeadWarmup and LRDecay add dropout on the word vectors, a
// first phase that trains the output layer alone, and a falling learning
// rate; all three are off by default. With
// ClassWeight each text's loss is weighted by its class's weight (the batch
// mean of the weighted losses is minimised and reported); with WordDropout
// the batch's words are replaced by UNK first (a copy: train is unchanged).
// Batches are length-bucketed: the shuffled split is cut into chunks of 100
// batches, each chunk sorted by length and cut into batches, and the batch
// order shuffled. With WideFit the word and bigram weights first start at
// the logistic regression fitted on them (widefit.go; times WideFitShrink
// when it is set); a cancel during
// that fit ends the run before its first epoch, m unchanged.
func Train(ctx context.Context, m *Model, train, dev Data, tc TrainConfig, progress func(Progress)) (*TrainResult, error) {
	tc, err := tc.WithDefaults()
	if err != nil {
		return nil, err
	}
	if err := checkModelSettings(m, tc); err != nil {
		return nil, err
	}
	if train.Len() == 0 {
		return nil, fmt.Errorf("cnn: the training split is empty")
	}
	if err := train.check(m.Config, "training"); err != nil {
		return nil, err
	}
	if err := dev.check(m.Config, "dev"); err != nil {
		return nil, err
	}
	train, dev = train.Truncate(tc.MaxLen), dev.Truncate(tc.MaxLen)
	oof, cancelled, err := startWide(ctx, m, train, dev, tc, progress) // cancelled: no epoch runs
	if err != nil {
		return nil, err
	}
	tr := newTrainer(m, tc)
	defer tr.close()
	tr.prepare(train)
	tr.wideOOF = oof
	rng := rand.New(rand.NewPCG(tc.Seed, tc.Seed^0x5bd1e995))
	tr.avg = newWeightAverage(m, tc.WeightAverage, (train.Len()+tc.Batch-1)/tc.Batch)
	run := &trainRun{ctx: ctx, m: m, tr: tr, tc: tc, train: train, progress: progress, res: &TrainResult{Cancelled: cancelled}}
	res := run.res
	sel := newSelector(tc, dev, tr.avg)
	order := make([]int, train.Len())
	var batches [][]int
	for epoch := 1; epoch <= tc.Epochs && !res.Cancelled; epoch++ {
		batches = makeBatches(rng, train.IDs, tc.Batch, order, batches)
		tr.setEpoch(epoch)
		start := time.Now()
		sum, done := run.epoch(epoch, batches, start)
		tr.endEpoch()
		if res.Diverged == nil && !finiteWeights(m) {
			res.Diverged = &Divergence{Epoch: epoch, Value: "weights"}
		}
		if res.Cancelled || res.Diverged != nil {
			break
		}
		el := time.Since(start)
		run.timed(epoch, done, el)
		er := EpochResult{Epoch: epoch, Loss: sum / float64(done), ExamplesPerSec: float64(done) / el.Seconds(), Seconds: el.Seconds()}
		if epoch == tc.firstKept() {
			sel.restart() // no earlier epoch is kept once this one has ended
		}
		var improved bool
		if er.Dev, improved, err = sel.epochEnd(m); err != nil {
			return nil, err
		}
		res.Epochs = append(res.Epochs, er)
		if improved {
			res.BestEpoch = epoch
		}
		if progress != nil {
			progress(Progress{Epoch: epoch, Epochs: tc.Epochs, Batch: len(batches), Batches: len(batches),
				Loss: er.Loss, Dev: er.Dev, ExamplesPerSec: er.ExamplesPerSec, Phase: "epoch", Model: sel.cand})
		}
		// Patience counts from the end of the head warm-up and from
		// KeepFrom at the earliest: the warm-up must not end a run whose
		// lower layers have not trained yet, nor a run end before it may
		// keep an epoch.
		if tc.Patience > 0 && dev.Len() > 0 && epoch-max(res.BestEpoch, tc.HeadWarmup, tc.firstKept()-1) >= tc.Patience && epoch < tc.Epochs {
			res.StoppedEarly = true
			break
		}
	}
	run.finish(sel)
	return res, nil
}

// checkModelSettings returns an error if m's tensors do not fit its
// configuration or a setting of tc needs a part m lacks (the fitted start,
// the wide tables' decay and rates need the word weights).
func checkModelSettings(m *Model, tc TrainConfig) error {
	if err := m.checkShapes(); err != nil {
		return err
	}
	if err := checkWideFit(m.Config, tc); err != nil {
		return err
	}
	if tc.WideDecay > 0 && !m.Config.Wide && !m.Config.WideBigrams {
		return fmt.Errorf("cnn: wide weight decay %g on a model without word or bigram weights: set wide decay 0 or turn the word weights on", tc.WideDecay)
	}
	if tc.WideNBRate > 0 && !m.Config.Wide {
		return fmt.Errorf("cnn: naive-Bayes rate exponent %g on a model without word weights: set it to 0 or turn the word weights on", tc.WideNBRate)
	}
	return nil
}

// endEpoch brings the model up to date with the epoch's training: the
// vocabulary's character parts follow the character layer, the learned
// scale of the wide term moves into its weights (foldWideScale), and
// predictions rebuild their table, the weights having changed.
func (tr *trainer) endEpoch() {
	tr.m.FillChars()
	tr.foldWideScale()
	tr.m.Invalidate()
}

// firstKept is the first epoch the run may keep: KeepFrom, or the last
// epoch when KeepFrom is beyond it (0: any).
func (tc TrainConfig) firstKept() int { return min(tc.KeepFrom, tc.Epochs) }

// setEpoch sets the learning rate and the head warm-up of the epoch
// (1-based).
func (tr *trainer) setEpoch(epoch int) {
	tr.lr = tr.tc.LR
	if g := tr.tc.LRDecay; g > 0 && g < 1 {
		tr.lr *= math.Pow(g, float64(epoch-1))
	}
	tr.headOnly = epoch <= tr.tc.HeadWarmup
}

// trainRun is the state of one Train call that outlives an epoch.
type trainRun struct {
	ctx      context.Context
	m        *Model
	tr       *trainer
	tc       TrainConfig // with defaults
	train    Data        // truncated to tc.MaxLen
	progress func(Progress)
	res      *TrainResult

	// Training throughput: the first epoch apart, the later ones summed.
	firstN, steadyN int
	firstT, steadyT time.Duration
}

// epoch takes one step per batch of the epoch (1-based) that began at
// start, and returns the summed loss (each batch's mean times its size) and
// the number of examples stepped. It stops early, setting r.res.Cancelled
// or r.res.Diverged, when the context ends or a batch's loss is not finite.
func (r *trainRun) epoch(epoch int, batches [][]int, start time.Time) (sum float64, done int) {
	for bi, b := range batches {
		if r.ctx.Err() != nil {
			r.res.Cancelled = true
			break
		}
		loss := r.tr.step(r.train, b)
		if math.IsNaN(loss) || math.IsInf(loss, 0) {
			r.res.Diverged = &Divergence{Epoch: epoch, Batch: bi + 1, Value: fmt.Sprint(loss)}
			break
		}
		sum += loss * float64(len(b))
		done += len(b)
		if r.progress != nil && (bi+1)%progressEvery == 0 && bi+1 < len(batches) {
			r.progress(Progress{Epoch: epoch, Epochs: r.tc.Epochs, Batch: bi + 1, Batches: len(batches),
				Loss: sum / float64(done), ExamplesPerSec: float64(done) / time.Since(start).Seconds(), Phase: "train"})
		}
	}
	return sum, done
}

// timed records that the completed epoch (1-based) stepped n examples in el.
func (r *trainRun) timed(epoch, n int, el time.Duration) {
	if epoch == 1 {
		r.firstN, r.firstT = n, el
	} else {
		r.steadyN, r.steadyT = r.steadyN+n, r.steadyT+el
	}
}

// finish gives r.m the weights sel chose, records the run in r.m.Info and
// r.res, and sends the "done" progress report.
func (r *trainRun) finish(sel *selector) {
	m, res, tc := r.m, r.res, r.tc
	if sel.best != nil {
		copyWeights(m, sel.best)
		m.Invalidate()
	}
	// The model file keeps the record of how it was trained.
	m.Info = Info{Created: time.Now().UTC().Format(time.RFC3339), Recipe: &tc, Epochs: res.Epochs,
		BestEpoch: res.BestEpoch, Test: m.Info.Test, Splits: m.Info.Splits, Notes: m.Info.Notes}
	if res.BestEpoch > 0 {
		m.Info.Dev = res.Epochs[res.BestEpoch-1].Dev
	}
	switch {
	case r.steadyN > 0:
		res.ExamplesPerSec = float64(r.steadyN) / r.steadyT.Seconds()
	case r.firstN > 0:
		res.ExamplesPerSec = float64(r.firstN) / r.firstT.Seconds()
	}
	m.Info.ExamplesPerSec = res.ExamplesPerSec
	if r.progress != nil {
		var last Progress
		if k := len(res.Epochs); k > 0 {
			e := res.Epochs[res.BestEpoch-1]
			last = Progress{Epoch: k, Epochs: tc.Epochs, Loss: e.Loss, Dev: e.Dev, ExamplesPerSec: res.ExamplesPerSec}
		}
		last.Phase = "done"
		r.progress(last)
	}
}

// finiteWeights reports whether every trainable weight of m is a finite number.
func finiteWeights(m *Model) bool {
	for _, xs := range trainableSlices(m) {
		for _, x := range xs {
			if f := float64(x); math.IsNaN(f) || math.IsInf(f, 0) {
				return false
			}
		}
	}
	return true
}

// Truncate returns d with every text cut to at most n tokens (n ≤ 0 keeps
// them whole). The texts share storage with d.
func (d Data) Truncate(n int) Data {
	if n <= 0 {
		return d
	}
	out := Data{IDs: make([][]int32, len(d.IDs)), Labels: d.Labels}
	for i, ids := range d.IDs {
		out.IDs[i] = ids[:min(len(ids), n)]
	}
	return out
}

// batchChunk is how many batches are sorted by length together.
const batchChunk = 100

// makeBatches shuffles 0..len(ids)−1 into order, sorts each chunk of
// batchChunk batches by text length, cuts it into batches of size bs and
// shuffles the batch order.
func makeBatches(rng *rand.Rand, ids [][]int32, bs int, order []int, batches [][]int) [][]int {
	for i := range order {
		order[i] = i
	}
	rng.Shuffle(len(order), func(i, j int) { order[i], order[j] = order[j], order[i] })
	batches = batches[:0]
	for c := 0; c < len(order); c += bs * batchChunk {
		chunk := order[c:min(len(order), c+bs*batchChunk)]
		slices.SortStableFunc(chunk, func(a, b int) int { return len(ids[a]) - len(ids[b]) })
		for b := 0; b < len(chunk); b += bs {
			batches = append(batches, chunk[b:min(len(chunk), b+bs)])
		}
	}
	rng.Shuffle(len(batches), func(i, j int) { batches[i], batches[j] = batches[j], batches[i] })
	return batches
}

// copyWeights copies the trainable weights of src into dst, allocating dst
// when nil, and returns dst.
func copyWeights(dst, src *Model) *Model {
	if dst == nil {
		return src.Clone()
	}
	to := trainableSlices(dst)
	for i, s := range trainableSlices(src) {
		copy(to[i], s)
	}
	return dst
}

package main

import "telltale/cnn"

// variants are the changes a candidate recipe makes to the default recipe.
var variants = map[string]func(r *cnn.Recipe){
	"default": func(r *cnn.Recipe) {},
	// vocabulary and unknown words
	"min2": func(r *cnn.Recipe) { r.Tokenizer.MinCount = 2 },
	"min3": func(r *cnn.Recipe) { r.Tokenizer.MinCount = 3 },
	"wd":   func(r *cnn.Recipe) { r.Train.WordDropout = 0.25 },
	"wd1":  func(r *cnn.Recipe) { r.Train.WordDropout = 1 },
	"sub":  func(r *cnn.Recipe) { r.Tokenizer.Subword = true },
	// character-aware word vectors (cnn.CharConfig) beside the word table
	"chars": func(r *cnn.Recipe) {
		r.Model.Chars = &cnn.CharConfig{Filters: cnn.DefaultCharFilters, Width: cnn.DefaultCharWidth,
			Dim: cnn.DefaultCharDim, MaxChars: cnn.DefaultMaxChars}
		r.Model.Dim += cnn.DefaultCharFilters // the word table keeps its columns
	},
	"tok0":  func(r *cnn.Recipe) { r.Train.TokenDropout = 0 },
	"tok10": func(r *cnn.Recipe) { r.Train.TokenDropout = 0.1 },
	"tok25": func(r *cnn.Recipe) { r.Train.TokenDropout = 0.25 },
	"tok40": func(r *cnn.Recipe) { r.Train.TokenDropout = 0.4 },
	// each class weighed by n/(k·n_c) in the loss (train --class-weight balanced)
	"cwbal": func(r *cnn.Recipe) { r.Train.ClassWeight = "balanced" },
	// architecture
	"w123":   func(r *cnn.Recipe) { r.Model.Widths = []int{1, 2, 3} },
	"w12":    func(r *cnn.Recipe) { r.Model.Widths = []int{1, 2} },
	"w2345":  func(r *cnn.Recipe) { r.Model.Widths = []int{2, 3, 4, 5} },
	"f50":    func(r *cnn.Recipe) { r.Model.Filters = 50 },
	"f200":   func(r *cnn.Recipe) { r.Model.Filters = 200 },
	"dim64":  func(r *cnn.Recipe) { r.Model.Dim = 64 },
	"dim200": func(r *cnn.Recipe) { r.Model.Dim = 200 },
	"dim300": func(r *cnn.Recipe) { r.Model.Dim = 300 },
	"drop3":  func(r *cnn.Recipe) { r.Model.Dropout = 0.3 },
	"drop6":  func(r *cnn.Recipe) { r.Model.Dropout = 0.6 },
	"drop7":  func(r *cnn.Recipe) { r.Model.Dropout = 0.7 },
	// optimisation
	"ep5":      func(r *cnn.Recipe) { r.Train.Epochs = 5 },
	"ep20":     func(r *cnn.Recipe) { r.Train.Epochs, r.Train.Patience = 20, 5 },
	"pat5":     func(r *cnn.Recipe) { r.Train.Patience = 5 },
	"lr1":      func(r *cnn.Recipe) { r.Train.LR = 1e-3 }, // the default before the thirteenth round
	"lr2":      func(r *cnn.Recipe) { r.Train.LR = 2e-3 }, // the default's since the thirteenth round
	"lr5":      func(r *cnn.Recipe) { r.Train.LR = 5e-4 },
	"batch25":  func(r *cnn.Recipe) { r.Train.Batch = 25 },
	"batch100": func(r *cnn.Recipe) { r.Train.Batch = 100 },
	"maxnorm3": func(r *cnn.Recipe) { r.Model.MaxNorm = 3 },
	"adadelta": func(r *cnn.Recipe) { r.Train.Optimizer, r.Train.LR, r.Model.MaxNorm = "adadelta", 0, 3 }, // Adadelta's own rate, 1.0
	"len200":   func(r *cnn.Recipe) { r.Train.MaxLen = 200 },
	"len800":   func(r *cnn.Recipe) { r.Train.MaxLen = 800 },
	// regularisation, averaging and the start of the embeddings
	"decay01": func(r *cnn.Recipe) { r.Train.WeightDecay = 0.1 },
	"decay1":  func(r *cnn.Recipe) { r.Train.WeightDecay = 1 },
	"avg2":    func(r *cnn.Recipe) { r.Train.AverageLast = 2 },
	"avg3":    func(r *cnn.Recipe) { r.Train.AverageLast = 3 },
	"avg5":    func(r *cnn.Recipe) { r.Train.AverageLast = 5 },
	// the weights' moving average over the steps, its horizon in epochs
	// (TrainConfig.WeightAverage; the seventh screen's first try, ema99 and
	// ema995, set the decay per step instead: commit f2becff)
	"emah05":   func(r *cnn.Recipe) { r.Train.WeightAverage = 0.5 },
	"emah1":    func(r *cnn.Recipe) { r.Train.WeightAverage = 1 },
	"stoploss": func(r *cnn.Recipe) { r.Train.StopOn = cnn.StopLoss },
	"tieloss":  func(r *cnn.Recipe) { r.Train.StopOn = cnn.StopMacroF1Loss },
	"ppmi":     func(r *cnn.Recipe) { r.Train.EmbedInit = cnn.InitPPMI },
	// the training loop: dropout on the word vectors, the output layer
	// trained alone first, a falling learning rate
	"edrop10": func(r *cnn.Recipe) { r.Train.EmbedDropout = 0.1 },
	"edrop25": func(r *cnn.Recipe) { r.Train.EmbedDropout = 0.25 },
	"edrop50": func(r *cnn.Recipe) { r.Train.EmbedDropout = 0.5 },
	"warm1":   func(r *cnn.Recipe) { r.Train.HeadWarmup = 1 },
	"warm2":   func(r *cnn.Recipe) { r.Train.HeadWarmup = 2 },
	"warm3":   func(r *cnn.Recipe) { r.Train.HeadWarmup = 3 },
	"lrd8":    func(r *cnn.Recipe) { r.Train.LRDecay = 0.8 },
	// no epoch kept before the third or the fifth (TrainConfig.KeepFrom)
	"keep3": func(r *cnn.Recipe) { r.Train.KeepFrom = 3 },
	"keep5": func(r *cnn.Recipe) { r.Train.KeepFrom = 5 },
	"lrd6":  func(r *cnn.Recipe) { r.Train.LRDecay = 0.6 },
	// Kim's model as the default had it before the word and bigram weights
	"kim": kim,
	// the default before the fourteenth round
	"r13": r13,
	// the words' weights alone beside the pooled filters (cnn.Config.Wide
	// without WideBigrams), their learning rate as the others' or 10 to
	// 1000 times it
	"wide":       func(r *cnn.Recipe) { r.Model.Wide, r.Model.WideBigrams, r.Train.WideLR = true, false, 0 },
	"widelr10":   func(r *cnn.Recipe) { r.Model.Wide, r.Model.WideBigrams, r.Train.WideLR = true, false, 10 },
	"widelr30":   func(r *cnn.Recipe) { r.Model.Wide, r.Model.WideBigrams, r.Train.WideLR = true, false, 30 },
	"widelr100":  func(r *cnn.Recipe) { r.Model.Wide, r.Model.WideBigrams, r.Train.WideLR = true, false, 100 },
	"widelr300":  func(r *cnn.Recipe) { r.Model.Wide, r.Model.WideBigrams, r.Train.WideLR = true, false, 300 },
	"widelr1000": func(r *cnn.Recipe) { r.Model.Wide, r.Model.WideBigrams, r.Train.WideLR = true, false, 1000 },
	// the word and bigram weights trained by a row-sparse ("lazy") Adam:
	// rows the batch does not touch keep their values and moments
	// (cnn.TrainConfig.WideSparse)
	"lazywide": func(r *cnn.Recipe) { r.Train.WideSparse = true },
	// The wide path started at its own fitted logistic regression
	// (TrainConfig.WideFit), at the default's ×100 rate, at ×10 and at ×1.
	"wfit":   func(r *cnn.Recipe) { r.Train.WideFit = true },
	"wfit10": func(r *cnn.Recipe) { r.Train.WideFit, r.Train.WideLR = true, 10 },
	"wfit1":  func(r *cnn.Recipe) { r.Train.WideFit, r.Train.WideLR = true, 1 },
	// the fitted start held where the fit put it (a rate of 1e-6 times the
	// rest's): the filters learn what the logistic regression leaves
	"wfitfrz": func(r *cnn.Recipe) { r.Train.WideFit, r.Train.WideLR = true, 1e-6 },
	// the same, the start shrunk by half (TrainConfig.WideFitShrink; the eighth screen)
	"wfitfrz5": func(r *cnn.Recipe) { r.Train.WideFit, r.Train.WideLR, r.Train.WideFitShrink = true, 1e-6, 0.5 },
	// held, the filters trained beside 5-fold out-of-fold wide terms
	// (TrainConfig.WideFitFolds)
	"wfitxf": func(r *cnn.Recipe) { r.Train.WideFit, r.Train.WideFitFolds = true, 5 },
	// held, its whole term times one scale that training learns
	// (TrainConfig.WideFitScale)
	"wfitsc": func(r *cnn.Recipe) { r.Train.WideFit, r.Train.WideFitScale = true, true },
	// the fitted start with its C fixed instead of chosen on dev
	"wfitC1":   func(r *cnn.Recipe) { r.Train.WideFit, r.Train.WideFitC = true, 1 },
	"wfitC10":  func(r *cnn.Recipe) { r.Train.WideFit, r.Train.WideFitC = true, 10 },
	"wfitC100": func(r *cnn.Recipe) { r.Train.WideFit, r.Train.WideFitC = true, 100 },
	// the factor on the word and bigram weights' rate alone, the bigram
	// weights kept (to pair with lazywide, whose rare rows move less)
	"wlr300":  func(r *cnn.Recipe) { r.Train.WideLR = 300 },
	"wlr1000": func(r *cnn.Recipe) { r.Train.WideLR = 1000 },
	// a decoupled weight decay on the word and bigram weights alone, as the
	// linear baseline's L2 penalty (cnn.TrainConfig.WideDecay)
	"wdec01": func(r *cnn.Recipe) { r.Train.WideDecay = 0.01 },
	"wdec03": func(r *cnn.Recipe) { r.Train.WideDecay = 0.03 },
	"wdec10": func(r *cnn.Recipe) { r.Train.WideDecay = 0.1 },
	// each row of the word and bigram weights at its own rate, by its
	// naive-Bayes log-count ratio r in the training split (Wang & Manning
	// 2012; cnn.TrainConfig.WideNBRate): |r| or √|r| over the table's mean
	// (docs/default-recipe.md, "Each word's and pair's own rate")
	"nbrate":      func(r *cnn.Recipe) { r.Train.WideNBRate = 1 },
	"nbrate-sqrt": func(r *cnn.Recipe) { r.Train.WideNBRate = 0.5 },
}

// kim turns the word and bigram weights off and the rest back to the
// default of that time: token dropout 0.25, Adam 0.001, dropout 0.5, at
// most 10 epochs with patience 3.
func kim(r *cnn.Recipe) {
	r13(r)
	r.Model.Wide, r.Model.WideBigrams, r.Train.WideLR, r.Train.TokenDropout, r.Train.LR = false, false, 0, 0.25, 1e-3
}

// r13 is the default of the thirteenth round, before the fourteenth took
// 20 epochs with patience 5 and dropout 0.3 (ep20, pat5 and drop3 change
// nothing since).
func r13(r *cnn.Recipe) {
	r.Model.Dropout, r.Train.Epochs, r.Train.Patience = 0.5, 10, 3
}

func init() {
	// ensembles of Kim's model merged into one model (cnn.Merge, which
	// refuses word weights); "thin" members share the default's width
	// between them, so the merged model has its shape
	variants["ens2"] = func(r *cnn.Recipe) { kim(r); r.Members = 2 }
	variants["ens3"] = func(r *cnn.Recipe) { kim(r); r.Members = 3 }
	variants["ens2thin"] = func(r *cnn.Recipe) { kim(r); r.Members, r.Model.Dim, r.Model.Filters = 2, 64, 50 }
	variants["ens4thin"] = func(r *cnn.Recipe) { kim(r); r.Members, r.Model.Dim, r.Model.Filters = 4, 32, 25 }
}

package cnn

import (
	"context"
	"fmt"
	"runtime"
	"sync"

	"telltale/corpus"
	"telltale/linear"
)

// Recipe is everything needed to train a model from labeled text: how to
// tokenize, the architecture (VocabSize and Classes are filled in from the
// data) and the training settings.
type Recipe struct {
	Tokenizer corpus.TokenizerConfig
	Model     Config
	Train     TrainConfig
	// VectorsPath, when set, names a word-vector file (corpus.ReadVectors)
	// whose vectors of vocabulary words are copied into the embedding table
	// before training. Their dimension must equal Model.Dim, unless Model.Dim
	// is 0 or DimFromVectors is set: then the embedding dimension is the
	// file's.
	//
	// With Model.Chars (whose Alphabet TrainText fills from the
	// vocabulary), Model.Dim is the whole word vector's width: the word
	// table's Dim − Chars.Filters columns and the character part; a
	// vectors file then gives the table's columns (DimFromVectors: Dim is
	// the file's plus Chars.Filters). A trained model's Config is thus a
	// recipe for the same architecture.
	VectorsPath    string
	DimFromVectors bool
	// Members, when 2 or more, asks TrainText for that many models, trained
	// with seeds Train.Seed + i·memberSeedStride on the same vocabulary and
	// merged into one (Merge: the mean of their logits). 0 or 1 trains one.
	Members int
	// Baseline, when not nil, asks TrainText to fit the linear baseline
	// (package linear) with this configuration on the same training split,
	// its tokens (the tokenizer's words, cut to Train.MaxLen) and the dev
	// split (its C chosen by dev macro-F1), and keep it with the model. An
	// empty ClassWeight takes Train.ClassWeight, zero Solver.Threads
	// Train.Threads.
	Baseline *linear.Config
}

// Trained is the outcome of TrainText.
type Trained struct {
	Model   *Model
	Result  *TrainResult
	Encoder *corpus.Encoder
	// VectorsFound is how many vocabulary words had a pretrained vector.
	VectorsFound int
}

// PhaseBaseline is the Progress phase reported once before TrainText fits
// the linear baseline.
const PhaseBaseline = "baseline"

// PhaseWideFit is the Progress phase Train reports once before it fits the
// start of the word and bigram weights (TrainConfig.WideFit).
const PhaseWideFit = "wide-fit"

// TrainText builds the vocabulary of train, encodes both splits, initialises
// a model with r.Train.Seed and trains it with early stopping on dev (which
// may be nil or empty: then every epoch counts as the best so far). With
// r.Members it trains several and merges them; Result is the first
// member's record, and a member that is cancelled or diverges ends the
// training with the first member kept alone. Every
// label of dev must occur in train. The command line and the window both
// train through here, so they give the same model for the same recipe.
//
// With r.Baseline it then fits the linear baseline into Model.Baseline
// (reporting Phase PhaseBaseline first); a cancellation during that fit
// keeps the trained CNN and leaves Model.Baseline nil. A run cancelled
// before the baseline was fitted records so (Info.BaselineStopped).
//
// The patterns of r.Train.MaskTokens are taken out of the training and
// dev texts first (the CNN and the baseline learn from the masked copy, and
// the epoch and the baseline's C are chosen on the masked dev copy, so
// that no choice follows the tokens taken out), as train --mask-tokens
// asks, and the model records them. Every caller that retrains without
// cues (audit.Retrain, a recipe rebuilt from a model file) masks through
// here, so all of them choose on the same dev text.
func TrainText(ctx context.Context, train, dev *corpus.Dataset, r Recipe, progress func(Progress)) (*Trained, error) {
	if err := checkTrainText(train, r); err != nil {
		return nil, err
	}
	train, dev, err := maskSplits(train, dev, r.Train.MaskTokens)
	if err != nil {
		return nil, err
	}
	enc, err := corpus.TrainEncoder(r.Tokenizer, train.Texts())
	if err != nil {
		return nil, err
	}
	threads := r.Train.Threads
	trainData, err := EncodeDataset(enc, train, train.Labels, threads)
	if err != nil {
		return nil, err
	}
	var devData Data
	if dev != nil && len(dev.Examples) > 0 {
		if devData, err = EncodeDataset(enc, dev, train.Labels, threads); err != nil {
			return nil, fmt.Errorf("%w (every dev label must occur in the training data)", err)
		}
	}
	cfg, vecs, err := modelConfig(r, enc, len(train.Labels))
	if err != nil {
		return nil, err
	}
	out := &Trained{Encoder: enc}
	var members []*Model
	for i := range max(1, r.Members) {
		tc := r.Train
		tc.Seed += uint64(i) * memberSeedStride
		m, res, found, err := trainOne(ctx, cfg, enc, train.Labels, trainData, devData, tc, r.VectorsPath, vecs, progress)
		if err != nil {
			return nil, err
		}
		if i == 0 {
			out.Result, out.VectorsFound = res, found
		}
		members = append(members, m)
		if res.Cancelled || res.Diverged != nil {
			break // an unfinished member ends the ensemble; the first is kept alone
		}
	}
	m := members[0]
	if len(members) == max(1, r.Members) && len(members) > 1 {
		var err error
		if m, err = mergeMembers(members, devData, r.Train.Threads); err != nil {
			return nil, err
		}
	}
	out.Model = m
	res := out.Result
	// Later texts are cut to the length the model was trained on, as the
	// encoder of a loaded model (Model.Encoder) does.
	out.Encoder.MaxTokens = m.Info.Recipe.MaxLen
	if r.Baseline != nil && res.Cancelled {
		m.Info.BaselineStopped = true
	}
	if r.Baseline != nil && !res.Cancelled {
		if progress != nil {
			progress(Progress{Phase: PhaseBaseline})
		}
		if m.Baseline, err = fitBaseline(ctx, enc.Tok, train, dev, train.Labels, *r.Baseline, *m.Info.Recipe); err != nil {
			if ctx.Err() != nil {
				m.Info.BaselineStopped = true // cancelled: the CNN is kept, the baseline left out
				return out, nil
			}
			return nil, err
		}
	}
	return out, nil
}

// checkTrainText refuses what TrainText cannot train: no training texts,
// an ensemble of models with a character layer or word weights, a fitted
// start of the word weights that the recipe cannot have.
func checkTrainText(train *corpus.Dataset, r Recipe) error {
	if train == nil || len(train.Examples) == 0 {
		return fmt.Errorf("cnn: the training split is empty: give a file with labeled texts")
	}
	if r.Model.Chars != nil && r.Members > 1 {
		return fmt.Errorf("cnn: models with a character layer cannot be merged into an ensemble: train one member")
	}
	if err := checkWideFit(r.Model, r.Train); err != nil {
		return err
	}
	if r.Model.Wide && r.Members > 1 {
		return fmt.Errorf("cnn: models with a wide word-weight path cannot be merged into an ensemble yet: train one member")
	}
	return nil
}

// maskSplits is train and dev with the patterns (TrainConfig.MaskTokens)
// taken out of every text (corpus.CueMasker.Mask), copies; the splits
// themselves when there are none. dev may be nil.
func maskSplits(train, dev *corpus.Dataset, patterns []string) (*corpus.Dataset, *corpus.Dataset, error) {
	if len(patterns) == 0 {
		return train, dev, nil
	}
	cm, err := corpus.MaskTokens(patterns)
	if err != nil {
		return nil, nil, fmt.Errorf("cnn: the recipe's tokens to take out: %w", err)
	}
	mask := func(s string) string {
		s, _ = cm.Mask(s)
		return s
	}
	if dev != nil {
		dev = dev.MapTexts(mask)
	}
	return train.MapTexts(mask), dev, nil
}

// modelConfig is r.Model sized for enc's vocabulary and classes labels:
// with r.VectorsPath it also reads the vectors of the vocabulary, whose
// dimension sets the embedding's when r.Model leaves it 0 or
// r.DimFromVectors asks (plus the character layer's filters), and a
// character layer gets the alphabet of the vocabulary (a copy: r is not
// changed).
func modelConfig(r Recipe, enc *corpus.Encoder, classes int) (Config, *corpus.Vectors, error) {
	cfg := r.Model
	cfg.VocabSize, cfg.Classes = enc.Vocab.Len(), classes
	var vecs *corpus.Vectors
	if r.VectorsPath != "" {
		var err error
		if vecs, err = readVectorsFor(enc.Vocab.Words, r.VectorsPath); err != nil {
			return Config{}, nil, err
		}
		if cfg.Dim == 0 || r.DimFromVectors {
			cfg.Dim = vecs.Dim
			if cfg.Chars != nil {
				cfg.Dim += cfg.Chars.Filters
			}
		}
	}
	if cfg.Chars != nil {
		cc := *cfg.Chars
		cc.Alphabet = Alphabet(enc.Vocab.Words)
		cfg.Chars = &cc
	}
	return cfg, vecs, nil
}

// memberSeedStride spaces the seeds of the members of one ensemble, so
// that the ensembles of nearby seeds share no member.
const memberSeedStride = 0x9e3779b97f4a7c15

// trainOne initialises a model of cfg for the vocabulary of enc with
// tc.Seed (its embeddings from tc.EmbedInit, then the vectors read from
// vectorsPath, when vecs is not nil) and trains it.
func trainOne(ctx context.Context, cfg Config, enc *corpus.Encoder, labels []string, train, dev Data, tc TrainConfig, vectorsPath string, vecs *corpus.Vectors, progress func(Progress)) (*Model, *TrainResult, int, error) {
	m, err := New(cfg, enc.Vocab.Words, labels, tc.Seed)
	if err != nil {
		return nil, nil, 0, err
	}
	m.Tokenizer = enc.Tok.Config()
	if cfg.WideBigrams {
		// The pairs of the training split as Train cuts it.
		if err := m.SetBigrams(CollectBigrams(train.Truncate(tc.MaxLen).IDs)); err != nil {
			return nil, nil, 0, err
		}
	}
	if tc.EmbedInit == InitPPMI {
		// Cut as Train cuts them, so the statistics are of what it sees.
		m.InitCooccurrence(train.Truncate(tc.MaxLen).IDs, tc.Seed, tc.Threads)
	}
	found := 0
	if vecs != nil {
		if found, err = setVectors(m, vecs, vectorsPath); err != nil {
			return nil, nil, 0, err
		}
	}
	res, err := Train(ctx, m, train, dev, tc, progress)
	if err != nil {
		return nil, nil, 0, err
	}
	return m, res, found, nil
}

// mergeMembers merges the trained members (Merge) and records the merged
// model's dev metrics.
func mergeMembers(members []*Model, dev Data, threads int) (*Model, error) {
	m, err := Merge(members)
	if err != nil {
		return nil, err
	}
	if dev.Len() > 0 {
		mt, _, err := evaluate(m, dev, threads, false)
		if err != nil {
			return nil, err
		}
		m.Info.Dev = &mt
	}
	return m, nil
}

// fitBaseline fits the linear baseline on the words of train (dev chooses
// its C by macro-F1), cut to the CNN's training length.
func fitBaseline(ctx context.Context, tok *corpus.Tokenizer, train, dev *corpus.Dataset, labels []string, cfg linear.Config, tc TrainConfig) (*linear.Model, error) {
	split := func(ds *corpus.Dataset) (linear.Split, error) {
		if ds == nil || len(ds.Examples) == 0 {
			return linear.Split{}, nil
		}
		y, err := ds.LabelIndex(labels)
		if err != nil {
			return linear.Split{}, err
		}
		return linear.Split{Docs: baselineDocs(tok, ds.Texts(), tc.MaxLen, tc.Threads), Labels: y}, nil
	}
	tr, err := split(train)
	if err != nil {
		return nil, err
	}
	dv, err := split(dev)
	if err != nil {
		return nil, err
	}
	if cfg.ClassWeight == "" {
		cfg.ClassWeight = tc.ClassWeight
	}
	if cfg.Solver.Threads == 0 {
		cfg.Solver.Threads = tc.Threads
	}
	macroF1 := func(gold, pred []int) float64 { return ComputeMetrics(labels, gold, pred, nil, 0).MacroF1 }
	return linear.Fit(ctx, tr, dv, labels, cfg, macroF1, nil)
}

// baselineDocs is the tokens the baseline sees of each text: the
// tokenizer's words (no subword pieces), cut to maxLen (0: whole).
func baselineDocs(tok *corpus.Tokenizer, texts []string, maxLen, threads int) [][]string {
	out := make([][]string, len(texts))
	parallel(len(texts), threads, func(i int) {
		toks := tok.Tokenize(texts[i])
		if maxLen > 0 && len(toks) > maxLen {
			toks = toks[:maxLen]
		}
		words := make([]string, len(toks))
		for j, t := range toks {
			words[j] = t.Text
		}
		out[i] = words
	})
	return out
}

// parallel calls fn(i) for i in [0, n) on threads goroutines (0: GOMAXPROCS).
func parallel(n, threads int, fn func(i int)) {
	if threads <= 0 {
		threads = runtime.GOMAXPROCS(0)
	}
	threads = max(1, min(threads, n))
	var wg sync.WaitGroup
	for w := 0; w < threads; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			for i := w; i < n; i += threads {
				fn(i)
			}
		}(w)
	}
	wg.Wait()
}

// readVectorsFor reads the vectors of words (past the reserved two) from
// the file at path.
func readVectorsFor(words []string, path string) (*corpus.Vectors, error) {
	inVocab := make(map[string]bool, len(words))
	for _, w := range words[2:] {
		inVocab[w] = true
	}
	return corpus.ReadVectors(path, func(w string) bool { return inVocab[w] })
}

// setVectors copies the vectors v (read from path) of m's words into m.
func setVectors(m *Model, v *corpus.Vectors, path string) (int, error) {
	if wd := m.Config.WordDim(); v.Dim != wd {
		return 0, fmt.Errorf("cnn: %s holds %d-dimensional vectors but the model's embedding dimension is %d: set it to %d (--dim %d) or leave it to the file (--dim 0)", path, v.Dim, wd, v.Dim, v.Dim)
	}
	vecs := make([][]float32, len(v.Words))
	for i := range vecs {
		vecs[i] = v.Vector(i)
	}
	found, err := m.SetVectors(v.Words, vecs)
	if err != nil {
		return 0, fmt.Errorf("%s: %w", path, err)
	}
	return found, nil
}

// Comparison is the CNN and its linear baseline on one labeled split.
type Comparison struct {
	CNN      Metrics `json:"cnn"`
	Baseline Metrics `json:"baseline"`
	// McNemar compares the two: OnlyA counts texts only the CNN labels
	// right, OnlyB texts only the baseline labels right.
	McNemar McNemar `json:"mcnemar"`
}

// CompareBaseline evaluates m and the baseline it carries (m.Baseline must
// not be nil) on test (the test split; every label must be one of m's)
// with threads goroutines (0: GOMAXPROCS): accuracy, macro-F1 and the rest
// of Metrics for each, and the exact McNemar test between them. Texts are
// encoded as the model was trained (Model.Encoder; the baseline sees the
// tokenizer's words cut to the same length).
func CompareBaseline(m *Model, test *corpus.Dataset, threads int) (*Comparison, error) {
	if m.Baseline == nil {
		return nil, fmt.Errorf("cnn: the model carries no linear baseline: train it with the baseline on")
	}
	enc, err := m.Encoder()
	if err != nil {
		return nil, err
	}
	data, err := EncodeDataset(enc, test, m.Labels, threads)
	if err != nil {
		return nil, err
	}
	cnnM, cnnPred, err := Evaluate(m, data, threads)
	if err != nil {
		return nil, err
	}
	docs := baselineDocs(enc.Tok, test.Texts(), enc.MaxTokens, threads)
	probs := m.Baseline.Probabilities(docs)
	pred := make([]int, len(probs))
	conf := make([]float64, len(probs))
	for i, p := range probs {
		for c, v := range p {
			if v > p[pred[i]] {
				pred[i] = c
			}
		}
		conf[i] = p[pred[i]]
	}
	return &Comparison{CNN: cnnM, Baseline: ComputeMetrics(m.Labels, data.Labels, pred, conf, DefaultBins),
		McNemar: McNemarExact(data.Labels, cnnPred, pred)}, nil
}

package corpus

import (
	"runtime"
	"sync"
)

// Encoder turns raw text into tokens and vocabulary ids: the tokenizer and
// vocabulary of one model, together.
type Encoder struct {
	Tok   *Tokenizer
	Vocab *Vocab
	// MaxTokens, when positive, cuts every encoded text to its first
	// MaxTokens tokens (the length a model was trained on).
	MaxTokens int
}

// NewEncoder rebuilds the encoder a model was trained with from its stored
// tokenizer configuration and its words by id (words[0] PAD, words[1] UNK).
func NewEncoder(cfg TokenizerConfig, words []string) (*Encoder, error) {
	tok, err := NewTokenizer(cfg)
	if err != nil {
		return nil, err
	}
	return &Encoder{Tok: tok, Vocab: NewVocab(words, nil)}, nil
}

// TrainEncoder builds the encoder for a training split: the tokenizer of
// cfg, a subword vocabulary trained on texts when cfg.Subword is set, and a
// word vocabulary of texts with cfg.MinCount and cfg.MaxVocab.
//
// With subwords a word needs at least SubwordMinCount (2) training
// occurrences, or cfg.MinCount if higher, to keep a vector of its own: the
// rarer words are split into pieces in the training texts exactly as
// unknown words are at test time, so the pieces' vectors are trained.
func TrainEncoder(cfg TokenizerConfig, texts []string) (*Encoder, error) {
	tok, err := NewTokenizer(cfg)
	if err != nil {
		return nil, err
	}
	minCount := max(cfg.MinCount, 1)
	if cfg.Subword {
		minCount = max(minCount, SubwordMinCount)
		if !tok.HasSubword() {
			if err := tok.TrainSubword(texts, cfg.SubwordSize); err != nil {
				return nil, err
			}
		}
	}
	return &Encoder{Tok: tok, Vocab: BuildVocab(tok, texts, minCount, cfg.MaxVocab)}, nil
}

// SubwordMinCount is the fewest training occurrences a word needs to keep
// its own vector when subwords are on (TrainEncoder).
const SubwordMinCount = 2

// Encode tokenizes text (splitting unknown words into known subword pieces
// when the tokenizer has them) and maps the tokens to ids.
func (e *Encoder) Encode(text string) ([]Token, []int32) {
	toks := e.Tok.TokenizeFor(e.Vocab, text)
	if e.MaxTokens > 0 && len(toks) > e.MaxTokens {
		toks = toks[:e.MaxTokens]
	}
	return toks, e.Vocab.Encode(toks)
}

// EncodeAll encodes every text with threads goroutines (0 means GOMAXPROCS).
// The result does not depend on threads.
func (e *Encoder) EncodeAll(texts []string, threads int) [][]int32 {
	out := make([][]int32, len(texts))
	if threads <= 0 {
		threads = runtime.GOMAXPROCS(0)
	}
	threads = max(1, min(threads, len(texts)))
	var wg sync.WaitGroup
	for w := 0; w < threads; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			for i := w; i < len(texts); i += threads {
				_, out[i] = e.Encode(texts[i])
			}
		}(w)
	}
	wg.Wait()
	return out
}

package corpus

import (
	"runtime"
	"strings"
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
// when the tokenizer has them), cut to MaxTokens when positive, and maps the
// tokens to ids. It reads text only up to the last token kept.
func (e *Encoder) Encode(text string) ([]Token, []int32) {
	toks := e.Tok.TokenizeForN(e.Vocab, text, e.limit())
	return toks, e.Vocab.Encode(toks)
}

// limit is the token limit of TokenizeN: MaxTokens, or −1 for none.
func (e *Encoder) limit() int {
	if e.MaxTokens > 0 {
		return e.MaxTokens
	}
	return -1
}

// AppendIDs appends the ids that Encode gives text to dst and returns the
// extended slice. With the built-in rule it makes no tokens: each word is
// looked up where it lies in text (an upper-case ASCII word lower-cased in a
// buffer on the stack), and text is read only up to the last id kept, so
// for most texts nothing is allocated but dst's growth. With a user
// tokenizer file it is Encode.
func (e *Encoder) AppendIDs(dst []int32, text string) []int32 {
	t, v := e.Tok, e.Vocab
	if t.user != nil {
		_, ids := e.Encode(text)
		return append(dst, ids...)
	}
	limit := len(dst) + e.MaxTokens
	if e.MaxTokens <= 0 {
		limit = -1
	}
	for i := 0; limit < 0 || len(dst) < limit; {
		p, next := nextPiece(text, i)
		if next < 0 {
			break
		}
		i = next
		src := text[p.start:p.end]
		var id int32
		word := src // the token's text, made only where needed below
		switch p.kind {
		case pieceUpper:
			if t.cfg.Lower {
				id, word = v.lowerID(src), ""
			} else {
				id = v.ID(src)
			}
		case pieceMixed, pieceRune:
			if word = t.normalize(src); word == "" {
				continue
			}
			id = v.ID(word)
		default:
			id = v.ID(src)
		}
		if id == UNK && t.wp != nil {
			if word == "" {
				word = strings.ToLower(src)
			}
			if n0 := len(dst); t.appendPieceIDs(v, word, &dst) {
				if limit >= 0 && len(dst) > limit {
					dst = dst[:max(n0, limit)]
				}
				continue
			}
		}
		dst = append(dst, id)
	}
	return dst
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

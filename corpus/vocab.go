package corpus

// Reserved vocabulary ids. PAD fills windows past the end of a short text and
// its embedding is fixed at zero; UNK stands for every word not in the vocabulary.
const (
	PAD int32 = 0
	UNK int32 = 1
)

// Names of the reserved entries as they appear in Vocab.Words.
const (
	PADWord = "<pad>"
	UNKWord = "<unk>"
)

// Token is one token of a text with its byte offsets into the original text,
// so that views can paint heat on the real sentence: text[Start:End] is the
// source span (the token's Text may differ from it after normalization).
type Token struct {
	Text       string
	Start, End int
}

// Vocab maps words to dense ids. Words[0] is PADWord and Words[1] is UNKWord.
type Vocab struct {
	Words  []string // by id
	Counts []int    // training-split count of each word (0 for the reserved ones)
	index  map[string]int32
}

// NewVocab builds a vocabulary from words listed by id. words[0] and words[1]
// must be PADWord and UNKWord; counts may be nil.
func NewVocab(words []string, counts []int) *Vocab {
	if len(words) < 2 || words[0] != PADWord || words[1] != UNKWord {
		panic("corpus: NewVocab: words must start with PADWord, UNKWord")
	}
	if counts == nil {
		counts = make([]int, len(words))
	}
	v := &Vocab{Words: words, Counts: counts, index: make(map[string]int32, len(words))}
	for i, w := range words {
		v.index[w] = int32(i)
	}
	return v
}

// Len is the number of entries, reserved ones included.
func (v *Vocab) Len() int { return len(v.Words) }

// ID returns the id of word, or UNK.
func (v *Vocab) ID(word string) int32 {
	if id, ok := v.index[word]; ok {
		return id
	}
	return UNK
}

// lowerID is ID of word with its ASCII letters lower-cased, without
// allocating for words of up to 64 bytes (Go does not copy the key of a map
// lookup made with string(bytes)).
func (v *Vocab) lowerID(word string) int32 {
	var buf [64]byte
	b := buf[:0]
	if len(word) > len(buf) {
		b = make([]byte, 0, len(word))
	}
	for i := 0; i < len(word); i++ {
		c := word[i]
		if 'A' <= c && c <= 'Z' {
			c += 'a' - 'A'
		}
		b = append(b, c)
	}
	if id, ok := v.index[string(b)]; ok {
		return id
	}
	return UNK
}

// Encode maps tokens to ids.
func (v *Vocab) Encode(tokens []Token) []int32 {
	ids := make([]int32, len(tokens))
	for i, t := range tokens {
		ids[i] = v.ID(t.Text)
	}
	return ids
}

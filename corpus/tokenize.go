package corpus

import (
	"bytes"
	"fmt"
	"os"
	"runtime"
	"sort"
	"strings"
	"sync"
	"unicode"
	"unicode/utf8"
	"unsafe"

	"github.com/sugarme/tokenizer"
	"github.com/sugarme/tokenizer/model"
	"github.com/sugarme/tokenizer/model/bpe"
	"github.com/sugarme/tokenizer/model/wordpiece"
	"github.com/sugarme/tokenizer/normalizer"
	"github.com/sugarme/tokenizer/pretrained"
	"golang.org/x/text/unicode/norm"

	"telltale/internal/inputfile"
)

// TokenizerConfig describes a tokenizer completely; it round-trips through
// encoding/json so a model file can store it and rebuild the same
// tokenizer without other files.
type TokenizerConfig struct {
	// Lower lower-cases every token after Unicode clean-up.
	Lower bool `json:"lower"`
	// KeepForm turns off the NFKC normalization (compatibility forms such
	// as "ﬁ" → "fi", full-width letters, "①" → "1"). Off by default.
	KeepForm bool `json:"keep_form,omitempty"`
	// MinCount and MaxVocab are the word-vocabulary limits callers pass to
	// BuildVocab; kept here so the model file records them.
	MinCount int `json:"min_count,omitempty"`
	MaxVocab int `json:"max_vocab,omitempty"`
	// Subword asks for a WordPiece vocabulary trained on the training
	// split (TrainSubword) to split out-of-vocabulary words (TokenizeFor).
	// TrainEncoder then keeps out of the word list the words seen fewer
	// than SubwordMinCount times, so that they are split in training too
	// and the pieces' vectors learn.
	Subword bool `json:"subword,omitempty"`
	// SubwordSize is the WordPiece vocabulary size (0 = DefaultSubwordSize).
	SubwordSize int `json:"subword_size,omitempty"`
	// SubwordPieces is the trained WordPiece vocabulary (continuation
	// pieces start with "##"), filled by TrainSubword.
	SubwordPieces []string `json:"subword_pieces,omitempty"`
	// File names a tokenizer file in the library's JSON format (as read by
	// github.com/sugarme/tokenizer/pretrained.FromFile); NewTokenizer reads it
	// into FileJSON, which is what is used and stored.
	File     string `json:",omitempty"`
	FileJSON []byte `json:",omitempty"`
}

// Tokenizer splits text into tokens with byte offsets into the original
// text. Built-in rule: the text is split at Unicode white space (removed)
// and around every punctuation or symbol character (each kept as its own
// token; emoji are symbols), on the original text, exactly as the
// splitting of github.com/sugarme/tokenizer/normalizer does it (tested);
// then each token is normalized: NFKC (unless KeepForm), removal of
// control and format characters (zero-width spaces, soft hyphens) and
// U+FFFD, optional lower-casing. A token that normalizes to nothing is
// dropped. Invalid UTF-8 bytes never form tokens.
//
// Because splitting happens before normalization, text[Start:End] is
// always the token's exact source span, even when NFKC changes its length.
//
// A Tokenizer is safe for concurrent use.
type Tokenizer struct {
	cfg  TokenizerConfig
	norm normalizer.Normalizer
	wp   *wordpiece.WordPiece
	user *tokenizer.Tokenizer
	mu   sync.Mutex // guards user (the library's Tokenizer is not documented as concurrency-safe)
}

// NewTokenizer builds a tokenizer from cfg. If cfg.File is set and
// cfg.FileJSON is empty, the file is read. A user tokenizer file replaces
// the built-in rule: its own normalizer, pre-tokenizer and model decide the
// tokens (Token.Text is the library's token string) and its offsets are
// checked against the text.
func NewTokenizer(cfg TokenizerConfig) (*Tokenizer, error) {
	t := &Tokenizer{cfg: cfg}
	var ns []normalizer.Normalizer
	if !cfg.KeepForm {
		ns = append(ns, normalizer.NewNFKC())
	}
	t.norm = normalizer.NewSequence(ns)
	if cfg.File != "" && len(cfg.FileJSON) == 0 {
		b, err := inputfile.ReadFile(cfg.File)
		if err != nil {
			return nil, kindError(ErrFormat, "corpus: %s: cannot read tokenizer file: %v", cfg.File, err)
		}
		if len(b) == 0 { // an empty file would silently mean the built-in rule
			return nil, kindError(ErrFormat, "corpus: %s: the tokenizer file is empty: give a tokenizer file in the library's JSON format", cfg.File)
		}
		t.cfg.FileJSON = b
	}
	if len(t.cfg.FileJSON) > 0 {
		name := cfg.File
		if name == "" {
			name = "tokenizer file"
		}
		u, err := loadUserTokenizer(t.cfg.FileJSON)
		if err != nil {
			return nil, kindError(ErrFormat, "corpus: %s: not a tokenizer file in the library's JSON format: %v", name, err)
		}
		t.user = u
	}
	if len(cfg.SubwordPieces) > 0 {
		t.setPieces(cfg.SubwordPieces)
	}
	return t, nil
}

func loadUserTokenizer(b []byte) (tk *tokenizer.Tokenizer, err error) {
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("the library failed on it (%v)", r)
		}
	}()
	return pretrained.FromReader(bytes.NewReader(b))
}

// Config returns the configuration, including trained subword pieces and
// the contents of a user tokenizer file, for storing in a model file.
func (t *Tokenizer) Config() TokenizerConfig {
	c := t.cfg
	c.SubwordPieces = append([]string(nil), c.SubwordPieces...)
	c.FileJSON = append([]byte(nil), c.FileJSON...)
	if len(c.FileJSON) == 0 {
		c.FileJSON = nil
	}
	return c
}

// wpUnk is the WordPiece unknown token; it is never a vocabulary entry.
const wpUnk = "[UNK]"

func (t *Tokenizer) setPieces(pieces []string) {
	v := make(model.Vocab, len(pieces)+1)
	for i, p := range pieces {
		v[p] = i
	}
	v[wpUnk] = len(pieces)
	wp := wordpiece.NewWordPieceBuilder().Vocab(&v).UnkToken(wpUnk).ContinuingSubwordPrefix("##").MaxInputCharsPerWord(100).Build()
	t.wp = &wp
	t.cfg.SubwordPieces = pieces
}

// DefaultSubwordSize is the WordPiece vocabulary size TrainSubword takes
// when neither its argument nor the config gives one.
const DefaultSubwordSize = 2000

// HasSubword reports whether a subword vocabulary is present.
func (t *Tokenizer) HasSubword() bool { return t.wp != nil }

// TrainSubword trains a subword vocabulary of about size pieces (0 = the
// config's SubwordSize, else DefaultSubwordSize) on the words of texts (the training
// split) with the library's WordPiece trainer, and keeps it in the
// tokenizer and its Config. It must not run concurrently with other
// methods. Segmentation as in WordPiece (Schuster & Nakajima 2012,
// "Japanese and Korean voice search").
func (t *Tokenizer) TrainSubword(texts []string, size int) (err error) {
	if size <= 0 {
		size = t.cfg.SubwordSize
	}
	if size <= 0 {
		size = DefaultSubwordSize
	}
	counts := map[string]int{}
	for _, s := range texts {
		for _, tk := range t.Tokenize(s) {
			counts[tk.Text]++
		}
	}
	if len(counts) == 0 {
		return kindError(ErrEmpty, "corpus: subword training: no words in the training texts")
	}
	defer func() {
		if r := recover(); r != nil {
			err = kindError(ErrFormat, "corpus: subword training failed in the tokenizer library: %v", r)
		}
	}()
	// The library's WordPiece trainer mangles its "##" prefix (v0.3.0), so
	// the merges are learned with its plain BPE trainer (Sennrich et al.
	// 2016, "Neural Machine Translation of Rare Words with Subword Units")
	// and every learned piece is allowed both word-initially and, with
	// "##", as a continuation; words are then split greedily
	// longest-match-first by the library's WordPiece model.
	tr := bpe.NewBpeTrainer(0, size)
	tr.ShowProgress = false
	m := quietly(func() tokenizer.Model { m, _ := tr.Train(counts); return m })
	voc := m.GetVocab()
	base := make([]string, 0, len(voc))
	for p := range voc {
		base = append(base, p)
	}
	sort.Slice(base, func(i, j int) bool { return voc[base[i]] < voc[base[j]] })
	pieces := append([]string(nil), base...)
	for _, p := range base {
		pieces = append(pieces, "##"+p)
	}
	t.cfg.Subword = true
	t.cfg.SubwordSize = size
	t.setPieces(pieces)
	return nil
}

// quietMu serializes quietly: the library's trainer prints progress to
// standard output unconditionally, which would corrupt a command's output
// (e.g. JSON), so os.Stdout points to the null device while it runs. Other
// goroutines writing to os.Stdout meanwhile would lose their output.
var quietMu sync.Mutex

func quietly[T any](f func() T) T {
	quietMu.Lock()
	defer quietMu.Unlock()
	null, err := os.OpenFile(os.DevNull, os.O_WRONLY, 0)
	if err != nil {
		return f()
	}
	saved := os.Stdout
	os.Stdout = null
	defer func() {
		os.Stdout = saved
		null.Close()
	}()
	return f()
}

func isPunctOrSymbol(r rune) bool { return unicode.IsPunct(r) || unicode.IsSymbol(r) }

func dropChar(r rune) bool {
	return unicode.Is(unicode.Cc, r) || unicode.Is(unicode.Cf, r) || r == utf8.RuneError
}

// byteClass classifies the bytes for the splitting loop: ASCII bytes as
// unicode.IsSpace and isPunctOrSymbol do, every other byte as clsOther
// (part of a multi-byte rune, or invalid).
var byteClass = func() (c [256]uint8) {
	for b := range 256 {
		r := rune(b)
		switch {
		case b >= utf8.RuneSelf:
			c[b] = clsOther
		case unicode.IsSpace(r):
			c[b] = clsSpace
		case isPunctOrSymbol(r):
			c[b] = clsPunct
		case r < 0x20 || r == 0x7f:
			c[b] = clsControl
		case 'A' <= r && r <= 'Z':
			c[b] = clsUpper
		}
	}
	return c
}()

const (
	clsWord    = iota // lower-case letters, digits
	clsSpace          // white space: separates, removed
	clsPunct          // punctuation or symbol: a token of its own
	clsControl        // control character: inside a word, removed by normalization
	clsUpper          // upper-case letter
	clsOther          // a byte ≥ 0x80: decoded as UTF-8
)

// Tokenize splits text into tokens (see Tokenizer). It never fails; with
// a user tokenizer file whose library call fails or returns offsets that
// do not fit the text, the built-in rule is used for that text.
func (t *Tokenizer) Tokenize(text string) []Token {
	return t.TokenizeN(text, -1)
}

// TokenizeN is Tokenize cut to the first n tokens (n < 0: all of them). It
// gives exactly the first n tokens of Tokenize, and with the built-in rule
// it stops reading text after the n-th, so a long text cut to a model's
// length costs what its first n tokens cost.
func (t *Tokenizer) TokenizeN(text string, n int) []Token {
	if t.user != nil {
		if toks, ok := t.userTokenize(text); ok {
			if n >= 0 && len(toks) > n {
				toks = toks[:n:n]
			}
			return toks
		}
	}
	return t.splitN(text, n)
}

// split is the built-in rule over the whole text.
func (t *Tokenizer) split(text string) []Token { return t.splitN(text, -1) }

// splitN is the built-in rule up to n tokens (n < 0: all): the pieces of
// nextPiece, each normalized as its kind needs (only words holding
// non-ASCII runes or control characters, and non-ASCII punctuation, go
// through the full normalization). It gives the same tokens and offsets as
// splitReference (tested on whole corpora). Lower-cased plain words are
// substrings of one lower-cased copy of the text up to the last token, so
// the tokens cost one allocation besides the slice.
func (t *Tokenizer) splitN(text string, n int) []Token {
	if text == "" || n == 0 {
		return nil
	}
	size := len(text)/4 + 1 // tokens are rarely shorter than 3 bytes with their separator
	if n > 0 {
		size = min(size, n)
	}
	out := make([]Token, 0, size)
	needLower := false
	for i := 0; n < 0 || len(out) < n; {
		p, next := nextPiece(text, i)
		if next < 0 {
			break
		}
		i = next
		src := text[p.start:p.end]
		s := src
		switch p.kind {
		case pieceUpper:
			if t.cfg.Lower {
				s, needLower = "", true // filled below from the lower-cased copy
			}
		case pieceMixed, pieceRune:
			if s = t.normalize(src); s == "" {
				continue
			}
		}
		out = append(out, Token{Text: s, Start: p.start, End: p.end})
	}
	if len(out) == 0 {
		return nil // as splitReference
	}
	if needLower {
		// Only pieceUpper tokens have an empty Text here: every other
		// token is non-empty.
		lowered := lowerASCII(text[:out[len(out)-1].End])
		for k := range out {
			if out[k].Text == "" {
				out[k].Text = lowered[out[k].Start:out[k].End]
			}
		}
	}
	return out
}

// A piece is one token's source span as the splitting rule finds it,
// before normalization; kind says what normalization it needs.
type piece struct {
	start, end int
	kind       uint8
}

// The kinds of piece. pieceMixed|pieceUpper is pieceMixed, which the
// word loop of nextPiece relies on.
const (
	pieceWord  = 0 // ASCII lower-case letters and digits: the token is the span
	pieceUpper = 1 // ASCII letters and digits with an upper-case letter: lower-cased when Lower
	pieceMixed = 3 // a word holding non-ASCII runes or control characters: normalized
	piecePunct = 4 // one ASCII punctuation or symbol byte: the token is the byte
	pieceRune  = 5 // one non-ASCII punctuation or symbol rune: normalized
)

// nextPiece returns the first piece of text at or after byte i and the
// byte where the search for the next one starts; next is −1 when there is
// none. The rule: Unicode white space and invalid UTF-8 bytes separate and
// are dropped, every punctuation or symbol character is a piece of its own,
// and the runs of other characters between them are words.
func nextPiece(text string, i int) (p piece, next int) {
	// Skip separators; return a punctuation piece at once.
skip:
	for i < len(text) {
		switch byteClass[text[i]] {
		case clsSpace:
			i++
			continue
		case clsPunct:
			return piece{i, i + 1, piecePunct}, i + 1
		case clsOther:
		default:
			break skip
		}
		r, size := utf8.DecodeRuneInString(text[i:])
		switch {
		case r == utf8.RuneError && size == 1, unicode.IsSpace(r):
			i += size
		case isPunctOrSymbol(r):
			return piece{i, i + size, pieceRune}, i + size
		default:
			break skip
		}
	}
	if i >= len(text) {
		return piece{}, -1
	}
	start := i
	kind := uint8(pieceWord)
	for i < len(text) {
		switch byteClass[text[i]] {
		case clsWord:
			i++
			continue
		case clsUpper:
			kind |= pieceUpper // pieceWord becomes pieceUpper; pieceMixed stays
			i++
			continue
		case clsControl:
			kind = pieceMixed
			i++
			continue
		case clsSpace, clsPunct:
			return piece{start, i, kind}, i
		}
		r, size := utf8.DecodeRuneInString(text[i:])
		if (r == utf8.RuneError && size == 1) || unicode.IsSpace(r) || isPunctOrSymbol(r) {
			return piece{start, i, kind}, i
		}
		kind = pieceMixed
		i += size
	}
	return piece{start, i, kind}, i
}

// lowerASCII returns s with the ASCII letters A-Z lower-cased (one
// allocation; the other bytes are unchanged).
func lowerASCII(s string) string {
	b := []byte(s)
	for i, c := range b {
		if 'A' <= c && c <= 'Z' {
			b[i] = c + ('a' - 'A')
		}
	}
	// b is not used again: the string may share its storage, as
	// strings.Builder's String does.
	return unsafe.String(unsafe.SliceData(b), len(b))
}

// normalize applies the token normalization to one source span: NFKC
// (unless KeepForm), removal of control and format characters and U+FFFD,
// lower-casing if configured. NFKC is computed with golang.org/x/text
// (the normalization tables the library's own NFKC is built on): the
// library's NormalizedString.NFKC panics on some inputs (e.g. "Ŀǰ", "ǲΰ",
// an index past the end of its alignment table in TransformRange) and
// returns non-normalized text with stray U+FFFD on others (e.g. "´" →
// " \u0301\ufffd", "ǵĲ" → "g\u0301ijj"); on all other inputs both agree
// (tested).
func (t *Tokenizer) normalize(src string) string {
	clean := true
	ascii := true
	for i := 0; i < len(src); i++ {
		if src[i] >= utf8.RuneSelf {
			ascii = false
			break
		}
		if src[i] < 0x20 || src[i] == 0x7f {
			clean = false
		}
	}
	if ascii && clean {
		if t.cfg.Lower {
			return strings.ToLower(src)
		}
		return src
	}
	s := src
	if !t.cfg.KeepForm && !ascii {
		s = norm.NFKC.String(s)
	}
	keep := true
	for _, r := range s {
		if dropChar(r) {
			keep = false
			break
		}
	}
	if !keep {
		var b strings.Builder
		b.Grow(len(s))
		for _, r := range s {
			if !dropChar(r) {
				b.WriteRune(r)
			}
		}
		s = b.String()
	}
	if t.cfg.Lower {
		s = strings.ToLower(s)
	}
	return s
}

var punctPattern = normalizer.NewFnPattern(isPunctOrSymbol)

// splitReference is the built-in rule written with the library's
// splitting (NormalizedString.Split around punctuation and symbols, per
// white-space separated word). It is the reference that split is tested
// against; it is about 30 times slower.
func (t *Tokenizer) splitReference(text string) []Token {
	var out []Token
	// Invalid UTF-8 bytes separate runs that are tokenized on their own.
	for start := 0; start < len(text); {
		end := start
		for end < len(text) {
			r, size := utf8.DecodeRuneInString(text[end:])
			if r == utf8.RuneError && size == 1 {
				break
			}
			end += size
		}
		if end > start {
			out = t.referenceValid(text[start:end], start, out)
		}
		start = end + 1
	}
	return out
}

func (t *Tokenizer) referenceValid(s string, base int, out []Token) []Token {
	for i := 0; i < len(s); {
		r, size := utf8.DecodeRuneInString(s[i:])
		if unicode.IsSpace(r) {
			i += size
			continue
		}
		j := i
		for j < len(s) {
			r, size := utf8.DecodeRuneInString(s[j:])
			if unicode.IsSpace(r) {
				break
			}
			j += size
		}
		w := s[i:j]
		n := normalizer.NewNormalizedFrom(w)
		for _, piece := range n.Split(punctPattern, normalizer.IsolatedBehavior) {
			off := piece.OffsetsOriginal()
			if text := t.normalize(w[off[0]:off[1]]); text != "" {
				out = append(out, Token{Text: text, Start: base + i + off[0], End: base + i + off[1]})
			}
		}
		i = j
	}
	return out
}

// libraryNormalize is the normalization done with the library's
// normalizers (NFKC unless KeepForm, Filter, Lowercase), as the tokenizer
// did before normalize; ok is false when the library panics. Kept to test
// that normalize agrees with it.
func (t *Tokenizer) libraryNormalize(src string) (s string, ok bool) {
	defer func() {
		if r := recover(); r != nil {
			s, ok = "", false
		}
	}()
	ns := normalizer.NewNormalizedFrom(src)
	if res, err := t.norm.Normalize(ns); err == nil {
		ns = res
	}
	ns = ns.Filter(func(r rune) bool { return !dropChar(r) })
	if t.cfg.Lower {
		ns = ns.Lowercase()
	}
	return ns.GetNormalized(), true
}

func (t *Tokenizer) userTokenize(text string) (toks []Token, ok bool) {
	if !utf8.ValidString(text) {
		return nil, false
	}
	t.mu.Lock()
	defer t.mu.Unlock()
	defer func() {
		if r := recover(); r != nil {
			toks, ok = nil, false
		}
	}()
	enc, err := t.user.EncodeSingle(text, false)
	if err != nil {
		return nil, false
	}
	for i, s := range enc.Tokens {
		if i >= len(enc.Offsets) || len(enc.Offsets[i]) != 2 {
			return nil, false
		}
		a, b := enc.Offsets[i][0], enc.Offsets[i][1]
		if a < 0 || b < a || b > len(text) || !utf8.ValidString(text[a:b]) ||
			(a < len(text) && !utf8.RuneStart(text[a])) || (b < len(text) && !utf8.RuneStart(text[b])) {
			return nil, false
		}
		toks = append(toks, Token{Text: s, Start: a, End: b})
	}
	return toks, true
}

// TokenizeFor tokenizes text and, when a subword vocabulary is present,
// replaces each word that v maps to UNK by its WordPiece pieces if all of
// them are in v. When the normalized word has as many runes as its source
// span (e.g. after lower-casing), piece i of runes [a,b) gets the span of
// source runes [a,b); otherwise (NFKC changed the length) every piece
// carries the whole word's span.
func (t *Tokenizer) TokenizeFor(v *Vocab, text string) []Token {
	return t.TokenizeForN(v, text, -1)
}

// TokenizeForN is TokenizeFor cut to its first n tokens (n < 0: all); like
// TokenizeN it stops reading text once it has them.
func (t *Tokenizer) TokenizeForN(v *Vocab, text string, n int) []Token {
	// Every word gives at least one token, so the first n words hold the
	// first n tokens.
	toks := t.TokenizeN(text, n)
	if t.wp == nil {
		return toks
	}
	out := t.expandPieces(v, text, toks)
	if n >= 0 && len(out) > n {
		out = out[:n:n]
	}
	return out
}

// expandPieces replaces each token of toks that v maps to UNK by its
// WordPiece pieces when all of them are in v (see TokenizeFor).
func (t *Tokenizer) expandPieces(v *Vocab, text string, toks []Token) []Token {
	out := toks[:0:0]
	for _, tk := range toks {
		if v.ID(tk.Text) != UNK {
			out = append(out, tk)
			continue
		}
		pieces := t.pieces(tk.Text)
		okAll := len(pieces) > 0
		for _, p := range pieces {
			if v.ID(p.Value) == UNK {
				okAll = false
				break
			}
		}
		if !okAll {
			out = append(out, tk)
			continue
		}
		src := text[tk.Start:tk.End]
		same := utf8.RuneCountInString(src) == utf8.RuneCountInString(tk.Text)
		var byteOf []int // rune index → byte offset in the source span
		if same {
			for i := range src {
				byteOf = append(byteOf, i)
			}
			byteOf = append(byteOf, len(src))
		}
		for _, p := range pieces {
			pt := Token{Text: p.Value, Start: tk.Start, End: tk.End}
			if same && p.Offsets[1] < len(byteOf) {
				pt.Start, pt.End = tk.Start+byteOf[p.Offsets[0]], tk.Start+byteOf[p.Offsets[1]]
			}
			out = append(out, pt)
		}
	}
	return out
}

// appendPieceIDs appends to *dst the ids of word's WordPiece pieces and
// reports true when word has pieces and v knows all of them (the tokens
// expandPieces puts in word's place); otherwise it leaves *dst alone.
func (t *Tokenizer) appendPieceIDs(v *Vocab, word string, dst *[]int32) bool {
	pieces := t.pieces(word)
	if len(pieces) == 0 {
		return false
	}
	n0 := len(*dst)
	for _, p := range pieces {
		id := v.ID(p.Value)
		if id == UNK {
			*dst = (*dst)[:n0]
			return false
		}
		*dst = append(*dst, id)
	}
	return true
}

// pieces returns the WordPiece split of word, or nil when it has no split.
func (t *Tokenizer) pieces(word string) (out []tokenizer.Token) {
	defer func() {
		if recover() != nil {
			out = nil
		}
	}()
	ps, err := t.wp.Tokenize(word)
	if err != nil {
		return nil
	}
	for _, p := range ps {
		if p.Value == wpUnk {
			return nil
		}
	}
	return ps
}

// BuildVocab builds the word vocabulary from texts (the training split):
// every token text seen at least minCount times (minCount < 1 means 1),
// most frequent first, ties broken by word (byte order), at most maxSize
// entries in all including PAD and UNK (maxSize <= 0: no limit). When tok
// has a subword vocabulary, all its pieces not already words are appended
// after the words (not counted against maxSize); a piece's count is its
// number of occurrences in the splits of training words that are not in the
// word list, the only places TokenizeFor uses it during training.
func BuildVocab(tok *Tokenizer, texts []string, minCount, maxSize int) *Vocab {
	if minCount < 1 {
		minCount = 1
	}
	counts := countWords(tok, texts)
	type wc struct {
		w string
		c int
	}
	var list []wc
	for w, c := range counts {
		if c >= minCount && w != PADWord && w != UNKWord {
			list = append(list, wc{w, c})
		}
	}
	sort.Slice(list, func(i, j int) bool {
		if list[i].c != list[j].c {
			return list[i].c > list[j].c
		}
		return list[i].w < list[j].w
	})
	if maxSize > 0 && len(list) > maxSize-2 {
		list = list[:max(maxSize-2, 0)]
	}
	words := []string{PADWord, UNKWord}
	cs := []int{0, 0}
	in := map[string]bool{}
	for _, e := range list {
		words = append(words, e.w)
		cs = append(cs, e.c)
		in[e.w] = true
	}
	if tok.wp != nil {
		// Pieces of every training word are added; their counts are the
		// occurrences in words left out of the word list (the ones that
		// TokenizeFor splits, so these counts are what training sees).
		pc := map[string]int{}
		for _, p := range tok.cfg.SubwordPieces {
			pc[p] = 0
		}
		for w, c := range counts {
			for _, p := range tok.pieces(w) {
				if in[w] {
					pc[p.Value] += 0
				} else {
					pc[p.Value] += c
				}
			}
		}
		var plist []wc
		for p, c := range pc {
			if !in[p] && p != PADWord && p != UNKWord {
				plist = append(plist, wc{p, c})
			}
		}
		sort.Slice(plist, func(i, j int) bool {
			if plist[i].c != plist[j].c {
				return plist[i].c > plist[j].c
			}
			return plist[i].w < plist[j].w
		})
		for _, e := range plist {
			words = append(words, e.w)
			cs = append(cs, e.c)
		}
	}
	return NewVocab(words, cs)
}

// countWords counts the token texts of texts (what Tokenize gives) on
// GOMAXPROCS goroutines, each over a contiguous share of the texts; the
// counts do not depend on the split.
func countWords(tok *Tokenizer, texts []string) map[string]int {
	workers := max(1, min(runtime.GOMAXPROCS(0), len(texts)/64))
	parts := make([]wordCounter, workers)
	var wg sync.WaitGroup
	for w := range parts {
		lo, hi := w*len(texts)/workers, (w+1)*len(texts)/workers
		wg.Go(func() {
			c := &parts[w]
			c.index = map[string]int32{}
			for _, s := range texts[lo:hi] {
				tok.countText(s, c)
			}
		})
	}
	wg.Wait()
	counts := make(map[string]int, len(parts[0].words))
	for _, c := range parts {
		for i, w := range c.words {
			counts[w] += c.n[i]
		}
	}
	return counts
}

// wordCounter counts words; a word already counted costs one map lookup
// and no allocation.
type wordCounter struct {
	index map[string]int32 // word → its index in words and n
	words []string
	n     []int
}

// add counts word, which may live in memory that is reused afterwards
// (it is copied when new).
func (c *wordCounter) add(word []byte) {
	if i, ok := c.index[string(word)]; ok {
		c.n[i]++
		return
	}
	w := string(word)
	c.index[w] = int32(len(c.words))
	c.words = append(c.words, w)
	c.n = append(c.n, 1)
}

// addString is add for a string; a new word is copied, so that the
// counter does not keep the text it was cut from.
func (c *wordCounter) addString(word string) {
	if i, ok := c.index[word]; ok {
		c.n[i]++
		return
	}
	w := strings.Clone(word)
	c.index[w] = int32(len(c.words))
	c.words = append(c.words, w)
	c.n = append(c.n, 1)
}

// countText counts the tokens of text into c as Tokenize gives them,
// without making the tokens with the built-in rule.
func (t *Tokenizer) countText(text string, c *wordCounter) {
	if t.user != nil {
		for _, tk := range t.Tokenize(text) {
			c.addString(tk.Text)
		}
		return
	}
	var buf [64]byte
	for i := 0; ; {
		p, next := nextPiece(text, i)
		if next < 0 {
			return
		}
		i = next
		src := text[p.start:p.end]
		switch p.kind {
		case pieceUpper:
			if t.cfg.Lower {
				b := buf[:0]
				for k := 0; k < len(src); k++ {
					ch := src[k]
					if 'A' <= ch && ch <= 'Z' {
						ch += 'a' - 'A'
					}
					b = append(b, ch)
				}
				c.add(b)
				continue
			}
		case pieceMixed, pieceRune:
			if src = t.normalize(src); src == "" {
				continue
			}
		}
		c.addString(src)
	}
}

package corpus

import (
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"telltale/internal/testref"
)

// The fast paths of the tokenizer (TokenizeN, TokenizeForN, Encode's cut,
// AppendIDs) are checked against the reference path they replace: the
// whole text tokenized by split (itself checked against the library's
// splitting in TestSplitMatchesReference), expanded into pieces, then cut
// and looked up token by token.

// referenceIDs is the reference path: every token of text, pieces
// expanded, cut to limit (≤ 0: none), then looked up one by one.
func referenceIDs(tok *Tokenizer, v *Vocab, text string, limit int) []int32 {
	toks := tok.TokenizeFor(v, text)
	if limit > 0 && len(toks) > limit {
		toks = toks[:limit]
	}
	return v.Encode(toks)
}

// sameTokens compares token lists, nil and empty alike.
func sameTokens(a, b []Token) bool {
	return len(a) == len(b) && (len(a) == 0 || reflect.DeepEqual(a, b))
}

// encodeTexts are the fixed texts, the demo corpus and, when present, the
// SpamAssassin corpus (long mails: most of their tokens lie past a cut of
// 400).
func encodeTexts(t *testing.T) []string {
	texts := append([]string(nil), offsetCases...)
	texts = append(texts, "ABC def, GHI!", "a\x01b\x7fc", "Ŀǰ Ǳΰ", "MiXeD CaSe WORDS and words",
		"A"+string(make([]byte, 70))+"B", "LONGWORDWITHMORETHANSIXTYFOURBYTESINUPPERCASELETTERSANDDIGITS0123456789XYZ")
	texts = append(texts, loadTexts(t, demoPaths(t)...)...)
	if testing.Short() {
		t.Log("SKIPPING the SpamAssassin texts in -short mode")
		return texts
	}
	if root := spamAssassinRoot(t); root != "" {
		texts = append(texts, loadTexts(t, root)...)
	}
	return texts
}

func TestTokenizeNIsPrefix(t *testing.T) {
	testref.SequentialSkipInRace(t, "TokenizeN against Tokenize")
	texts := encodeTexts(t)
	for _, cfg := range []TokenizerConfig{{Lower: true}, {}, {KeepForm: true, Lower: true}} {
		tok, _ := NewTokenizer(cfg)
		for i, s := range texts {
			all := tok.Tokenize(s)
			for _, n := range []int{0, 1, 2, 7, 400, len(all), len(all) + 3} {
				want := all[:min(n, len(all))]
				if got := tok.TokenizeN(s, n); !sameTokens(got, want) {
					t.Fatalf("%+v text %d, n=%d: %d tokens %v, want the first %d of Tokenize", cfg, i, n, len(got), got, len(want))
				}
			}
		}
	}
}

// demoEncoder returns an encoder whose vocabulary is the demo corpus's
// words seen twice or more, so that texts hold known and unknown words.
func demoEncoder(t *testing.T, cfg TokenizerConfig) (*Encoder, []string) {
	t.Helper()
	texts := loadTexts(t, demoPaths(t)...)
	enc, err := TrainEncoder(cfg, texts)
	if err != nil {
		t.Fatal(err)
	}
	return enc, texts
}

func TestAppendIDsMatchesReference(t *testing.T) {
	// TrainEncoder's goroutines (countWords) stay in the race pass with
	// TestCountWordsMatchesTokenize, TestAppendIDsAllocations and
	// TestTrainEncoderSplitsRareWords.
	testref.SequentialSkipInRace(t, "AppendIDs and Encode against Vocab.Encode")
	texts := encodeTexts(t)
	cases := []struct {
		name string
		cfg  TokenizerConfig
		n    int // texts compared (the library's WordPiece is slow on whole mails)
	}{
		{"lower", TokenizerConfig{Lower: true, MinCount: 2}, len(texts)},
		{"cased", TokenizerConfig{MinCount: 2}, len(texts)},
		{"subword", TokenizerConfig{Lower: true, Subword: true, SubwordSize: 300}, min(len(texts), 1500)},
	}
	for _, c := range cases {
		enc, _ := demoEncoder(t, c.cfg)
		if c.cfg.Subword && !enc.Tok.HasSubword() {
			t.Fatal("no subword vocabulary trained")
		}
		unknown, pieces := 0, 0
		for i, s := range texts[:c.n] {
			all := enc.Tok.TokenizeFor(enc.Vocab, s)
			for _, id := range enc.Vocab.Encode(all) {
				if id == UNK {
					unknown++
				}
			}
			pieces += len(all) - len(enc.Tok.Tokenize(s))
			for _, limit := range []int{0, 1, 5, 400} {
				enc.MaxTokens = limit
				wantToks := cut(all, limit)
				want := enc.Vocab.Encode(wantToks)
				prefix := []int32{7, 8}
				got := enc.AppendIDs(prefix, s)
				if !reflect.DeepEqual(got[:2], prefix) || !reflect.DeepEqual(append([]int32{}, got[2:]...), append([]int32{}, want...)) {
					t.Fatalf("%s, MaxTokens %d, text %d: AppendIDs %v, reference %v", c.name, limit, i, got[2:], want)
				}
				toks, ids := enc.Encode(s)
				if !reflect.DeepEqual(append([]int32{}, ids...), append([]int32{}, want...)) || !sameTokens(toks, wantToks) {
					t.Fatalf("%s, MaxTokens %d, text %d: Encode %v, reference %v", c.name, limit, i, ids, want)
				}
			}
		}
		// The comparison must have met unknown words (and, with subwords,
		// split words), or it proves little.
		if unknown == 0 || (c.cfg.Subword && pieces == 0) {
			t.Errorf("%s: %d unknown ids and %d extra pieces in the texts: the check did not reach those paths", c.name, unknown, pieces)
		}
	}
}

func cut(toks []Token, limit int) []Token {
	if limit > 0 && len(toks) > limit {
		return toks[:limit]
	}
	return toks
}

func TestAppendIDsUserTokenizer(t *testing.T) {
	p := filepath.Join(t.TempDir(), "tok.json")
	if err := os.WriteFile(p, []byte(userTokenizerJSON), 0o644); err != nil {
		t.Fatal(err)
	}
	enc, err := NewEncoder(TokenizerConfig{File: p}, []string{PADWord, UNKWord, "hello", "world"})
	if err != nil {
		t.Fatal(err)
	}
	enc.MaxTokens = 2
	for _, s := range []string{"Hello world !", "world", "", "x\xffy hello"} {
		if got, want := enc.AppendIDs(nil, s), referenceIDs(enc.Tok, enc.Vocab, s, 2); !reflect.DeepEqual(append([]int32{}, got...), append([]int32{}, want...)) {
			t.Errorf("%q: AppendIDs %v, reference %v", s, got, want)
		}
	}
}

// TestAppendIDsAllocations checks the claim of AppendIDs's doc: a text of
// plain and upper-case words allocates nothing when dst has room.
func TestAppendIDsAllocations(t *testing.T) {
	enc, _ := demoEncoder(t, TokenizerConfig{Lower: true})
	enc.MaxTokens = 400
	text := "Your FERRY booking was moved to 14:30, sorry! The Crossing is FULL; refund in 5 days."
	dst := make([]int32, 0, 64)
	if n := testing.AllocsPerRun(100, func() { dst = enc.AppendIDs(dst[:0], text) }); n != 0 {
		t.Errorf("AppendIDs allocated %.1f times per text", n)
	}
}

// FuzzAppendIDs checks AppendIDs and TokenizeN against the reference path
// on any input, with and without lower-casing, under several cuts.
func FuzzAppendIDs(f *testing.F) {
	for _, s := range offsetCases {
		f.Add(s, true, uint8(3))
	}
	f.Add("ABC def, GHI! Hello hello HELLO", false, uint8(0))
	f.Fuzz(func(t *testing.T, s string, lower bool, limit uint8) {
		tok, _ := NewTokenizer(TokenizerConfig{Lower: lower})
		v := NewVocab([]string{PADWord, UNKWord, "hello", "Hello", "abc", ",", "!", "😀", "fine", "def"}, nil)
		enc := &Encoder{Tok: tok, Vocab: v, MaxTokens: int(limit % 8)}
		want := referenceIDs(tok, v, s, enc.MaxTokens)
		if got := enc.AppendIDs(nil, s); !reflect.DeepEqual(append([]int32{}, got...), append([]int32{}, want...)) {
			t.Fatalf("%+q (lower %v, cut %d): AppendIDs %v, reference %v", s, lower, enc.MaxTokens, got, want)
		}
		n := int(limit % 8)
		if got, want := tok.TokenizeN(s, n), cut(tok.Tokenize(s), n); n > 0 && !sameTokens(got, want) {
			t.Fatalf("%+q: TokenizeN(%d) %v, want %v", s, n, got, want)
		}
	})
}

// TestCountWordsMatchesTokenize checks the parallel word count that
// BuildVocab uses against counting Tokenize's tokens one by one.
func TestCountWordsMatchesTokenize(t *testing.T) {
	texts := encodeTexts(t)
	p := filepath.Join(t.TempDir(), "tok.json")
	if err := os.WriteFile(p, []byte(userTokenizerJSON), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, cfg := range []TokenizerConfig{{Lower: true}, {}, {KeepForm: true}, {File: p}} {
		tok, err := NewTokenizer(cfg)
		if err != nil {
			t.Fatal(err)
		}
		texts := texts
		if cfg.File != "" {
			texts = texts[:200] // the library's tokenizer is slow on whole mails
		}
		for _, n := range []int{len(texts), 1, 0} {
			want := map[string]int{}
			for _, s := range texts[:n] {
				for _, tk := range tok.Tokenize(s) {
					want[tk.Text]++
				}
			}
			if got := countWords(tok, texts[:n]); !reflect.DeepEqual(got, want) {
				t.Errorf("%+v, %d texts: countWords differs from counting Tokenize's tokens (%d words, want %d)", cfg, n, len(got), len(want))
			}
		}
	}
}

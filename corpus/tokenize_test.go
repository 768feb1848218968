package corpus

import (
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"sync"
	"testing"
)

// offsetCases are texts whose tokens must map back onto their exact
// source spans: accents (precomposed and combining), emoji, CRLF, NFKC
// compatibility forms that change length, zero-width characters, invalid
// UTF-8 and NUL bytes.
var offsetCases = []string{
	"Héllo, wörld! 😀 ok",
	"ﬁne\r\nline two… end",
	"Ｆｕｌｌ width ①",
	"a\u0301b c",
	"zero\u200bwidth soft\u00adhyphen",
	"don't stop—ever; 3.5% off $20",
	"👍🏽👨‍👩‍👧 family",
	"",
	"   \t\r\n",
	"x\x00y \xff\xfe bad \xc3",
	"日本語のテキスト、です。",
	"\u00a0nbsp\u00a0split\u3000ideographic",
}

// checkSpans asserts the offset invariant: spans are ordered, non-empty,
// inside the text, valid UTF-8, and each token's Text is the normalization
// of exactly its source span.
func checkSpans(t *testing.T, tok *Tokenizer, s string, toks []Token) {
	t.Helper()
	prev := 0
	for _, tk := range toks {
		if tk.Start < prev || tk.End <= tk.Start || tk.End > len(s) {
			t.Fatalf("%q: bad span %+v after %d", s, tk, prev)
		}
		prev = tk.End
		if tk.Text == "" {
			t.Fatalf("%q: empty token %+v", s, tk)
		}
		if tok.user == nil {
			if got := tok.normalize(s[tk.Start:tk.End]); got != tk.Text {
				t.Fatalf("%q: token %q but its span %q normalizes to %q", s, tk.Text, s[tk.Start:tk.End], got)
			}
		}
	}
}

func TestTokenOffsets(t *testing.T) {
	for _, lower := range []bool{false, true} {
		tok, err := NewTokenizer(TokenizerConfig{Lower: lower})
		if err != nil {
			t.Fatal(err)
		}
		for _, s := range offsetCases {
			checkSpans(t, tok, s, tok.Tokenize(s))
		}
	}
}

func TestTokenize(t *testing.T) {
	type tk = Token
	cases := []struct {
		cfg  TokenizerConfig
		text string
		want []Token
	}{
		{TokenizerConfig{Lower: true}, "Héllo, wörld! 😀",
			[]Token{{"héllo", 0, 6}, {",", 6, 7}, {"wörld", 8, 14}, {"!", 14, 15}, {"😀", 16, 20}}},
		{TokenizerConfig{}, "ﬁne\r\nTwo…",
			[]Token{{"fine", 0, 5}, {"Two", 7, 10}, {"...", 10, 13}}},
		{TokenizerConfig{KeepForm: true}, "ﬁne\r\nTwo…",
			[]Token{{"ﬁne", 0, 5}, {"Two", 7, 10}, {"…", 10, 13}}},
		{TokenizerConfig{Lower: true}, "Ｆｕｌｌ ①\u00a0zero\u200bwidth",
			[]Token{{"full", 0, 12}, {"1", 13, 16}, {"zerowidth", 18, 30}}},
		{TokenizerConfig{}, "not friendly at all!!",
			[]Token{{"not", 0, 3}, {"friendly", 4, 12}, {"at", 13, 15}, {"all", 16, 19}, {"!", 19, 20}, {"!", 20, 21}}},
		{TokenizerConfig{}, "caf\xe9 ok", []Token{{"caf", 0, 3}, {"ok", 5, 7}}},
	}
	for _, c := range cases {
		tok, err := NewTokenizer(c.cfg)
		if err != nil {
			t.Fatal(err)
		}
		got := tok.Tokenize(c.text)
		if !reflect.DeepEqual(got, c.want) {
			t.Errorf("%+v %q:\n got %v\nwant %v", c.cfg, c.text, got, c.want)
		}
	}
}

func TestTokenizeConcurrent(t *testing.T) {
	tok, _ := NewTokenizer(TokenizerConfig{Lower: true})
	want := make([][]Token, len(offsetCases))
	for i, s := range offsetCases {
		want[i] = tok.Tokenize(s)
	}
	var wg sync.WaitGroup
	for g := 0; g < 4; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for r := 0; r < 50; r++ {
				for i, s := range offsetCases {
					if got := tok.Tokenize(s); !reflect.DeepEqual(got, want[i]) {
						t.Errorf("concurrent result differs for %q", s)
						return
					}
				}
			}
		}()
	}
	wg.Wait()
}

func TestBuildVocab(t *testing.T) {
	tok, _ := NewTokenizer(TokenizerConfig{Lower: true})
	texts := []string{"b a c", "A b d", "c e", "<unk> <pad>"}
	// counts: a 2, b 2, c 2, d 1, e 1, "<" 2, ">" 2, unk 1, pad 1.
	v := BuildVocab(tok, texts, 2, 0)
	want := []string{PADWord, UNKWord, "<", ">", "a", "b", "c"}
	if !reflect.DeepEqual(v.Words, want) {
		t.Errorf("words %q, want %q", v.Words, want)
	}
	if !reflect.DeepEqual(v.Counts, []int{0, 0, 2, 2, 2, 2, 2}) {
		t.Errorf("counts %v", v.Counts)
	}
	v = BuildVocab(tok, texts, 1, 5)
	if want := []string{PADWord, UNKWord, "<", ">", "a"}; !reflect.DeepEqual(v.Words, want) {
		t.Errorf("maxSize 5: words %q, want %q", v.Words, want)
	}
	if got := v.Encode(tok.Tokenize("A zebra")); !reflect.DeepEqual(got, []int32{4, UNK}) {
		t.Errorf("encode %v", got)
	}
}

func TestSubword(t *testing.T) {
	tok, _ := NewTokenizer(TokenizerConfig{Lower: true, Subword: true})
	var texts []string
	for range 20 {
		texts = append(texts, "booking bookings booked rebooking refund refunded refunds ferry ferries")
	}
	texts = append(texts, "rare words only once")
	if err := tok.TrainSubword(texts, 60); err != nil {
		t.Fatal(err)
	}
	if !tok.HasSubword() || len(tok.Config().SubwordPieces) == 0 {
		t.Fatal("no pieces trained")
	}
	v := BuildVocab(tok, texts, 2, 0)
	text := "Rebooked refunding"
	toks := tok.TokenizeFor(v, text)
	checkPieces(t, text, toks, v)
	if len(toks) <= 2 {
		t.Errorf("OOV words not split: %v", toks)
	}
	// The config, pieces included, survives JSON and rebuilds the same tokenizer.
	b, err := json.Marshal(tok.Config())
	if err != nil {
		t.Fatal(err)
	}
	var cfg TokenizerConfig
	if err := json.Unmarshal(b, &cfg); err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(cfg, tok.Config()) {
		t.Fatalf("config changed in JSON: %+v", cfg)
	}
	tok2, err := NewTokenizer(cfg)
	if err != nil {
		t.Fatal(err)
	}
	if got := tok2.TokenizeFor(v, text); !reflect.DeepEqual(got, toks) {
		t.Errorf("rebuilt tokenizer: %v, want %v", got, toks)
	}
}

// checkPieces asserts that pieces of one word tile its span in order and
// that every token is in the vocabulary.
func checkPieces(t *testing.T, text string, toks []Token, v *Vocab) {
	t.Helper()
	prev := 0
	for _, tk := range toks {
		if tk.Start < prev || tk.End <= tk.Start || tk.End > len(text) {
			t.Fatalf("bad span %+v", tk)
		}
		prev = tk.End
		if v.ID(tk.Text) == UNK {
			t.Errorf("token %q not in vocabulary", tk.Text)
		}
		src := text[tk.Start:tk.End]
		piece := tk.Text
		if len(piece) > 2 && piece[:2] == "##" {
			piece = piece[2:]
		}
		if tok, _ := NewTokenizer(TokenizerConfig{Lower: true}); tok.normalize(src) != piece {
			t.Errorf("piece %q has span %q", tk.Text, src)
		}
	}
}

// userTokenizerJSON is a minimal tokenizer file in the library's JSON
// format (the format of github.com/sugarme/tokenizer/pretrained.FromFile):
// lower-casing, white-space pre-tokenizer, word-level model.
const userTokenizerJSON = `{
  "version": "1.0",
  "truncation": null,
  "padding": null,
  "added_tokens": [],
  "normalizer": {"type": "Lowercase"},
  "pre_tokenizer": {"type": "Whitespace"},
  "post_processor": null,
  "decoder": null,
  "model": {"type": "WordLevel", "vocab": {"[UNK]": 0, "hello": 1, "world": 2, "!": 3}, "unk_token": "[UNK]"}
}`

func TestUserTokenizerFile(t *testing.T) {
	p := filepath.Join(t.TempDir(), "tok.json")
	if err := os.WriteFile(p, []byte(userTokenizerJSON), 0o644); err != nil {
		t.Fatal(err)
	}
	tok, err := NewTokenizer(TokenizerConfig{File: p})
	if err != nil {
		t.Fatal(err)
	}
	text := "Hello  World!"
	got := tok.Tokenize(text)
	want := []Token{{"hello", 0, 5}, {"world", 7, 12}, {"!", 12, 13}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("got %v, want %v", got, want)
	}
	// Self-contained: the config carries the file contents, the file may go.
	cfg := tok.Config()
	os.Remove(p)
	b, _ := json.Marshal(cfg)
	var back TokenizerConfig
	json.Unmarshal(b, &back)
	tok2, err := NewTokenizer(back)
	if err != nil {
		t.Fatal(err)
	}
	if got := tok2.Tokenize(text); !reflect.DeepEqual(got, want) {
		t.Errorf("from stored config: %v", got)
	}
	// A damaged file is an error, not a panic.
	if _, err := NewTokenizer(TokenizerConfig{FileJSON: []byte(`{"model": 5`)}); err == nil {
		t.Error("damaged tokenizer file accepted")
	}
}

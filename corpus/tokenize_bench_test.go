package corpus

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
)

var (
	benchOnce  sync.Once
	benchTexts []string
	benchBytes int64
)

// benchCorpus returns the SpamAssassin texts (or, when the corpus is
// absent, the demo corpus) for the tokenizer benchmarks.
func benchCorpus(b *testing.B) []string {
	benchOnce.Do(func() {
		root := filepath.Join("..", "testdata", "spamassassin")
		if _, err := os.Stat(root); err != nil {
			root = filepath.Join("..", "testdata", "demo", "train.csv")
		}
		d, _, err := Load(root, Options{ReplaceInvalidUTF8: true})
		if err != nil {
			return
		}
		for _, e := range d.Examples {
			benchTexts = append(benchTexts, e.Text)
			benchBytes += int64(len(e.Text))
		}
	})
	if len(benchTexts) == 0 {
		b.Skip("SKIPPING: no corpus for the tokenizer benchmark")
	}
	return benchTexts
}

// BenchmarkTokenize tokenizes the whole SpamAssassin corpus (6046 e-mails,
// about 30 MB; the demo corpus when it is absent) once per iteration.
func BenchmarkTokenize(b *testing.B) {
	texts := benchCorpus(b)
	tok, _ := NewTokenizer(TokenizerConfig{Lower: true})
	b.SetBytes(benchBytes)
	b.ReportAllocs()
	for b.Loop() {
		for _, s := range texts {
			tok.Tokenize(s)
		}
	}
}

// BenchmarkTokenizeShort tokenizes a text of about 200 tokens.
func BenchmarkTokenizeShort(b *testing.B) {
	text := strings.Repeat("Your ferry booking #4411 was moved to 14:30, sorry! Café ﬁne. ", 14)
	tok, _ := NewTokenizer(TokenizerConfig{Lower: true})
	b.SetBytes(int64(len(text)))
	b.ReportAllocs()
	for b.Loop() {
		tok.Tokenize(text)
	}
}

// BenchmarkAppendIDs encodes the corpus of BenchmarkTokenize straight to
// ids, whole and cut to 400 tokens (the default recipe's length); the
// throughput is of the whole texts' bytes.
func BenchmarkAppendIDs(b *testing.B) {
	texts := benchCorpus(b)
	tok, _ := NewTokenizer(TokenizerConfig{Lower: true})
	enc := &Encoder{Tok: tok, Vocab: BuildVocab(tok, texts[:len(texts)/2], 2, 0)}
	for _, limit := range []int{0, 400} {
		b.Run(fmt.Sprintf("max=%d", limit), func(b *testing.B) {
			enc.MaxTokens = limit
			var ids []int32
			b.SetBytes(benchBytes)
			b.ReportAllocs()
			for b.Loop() {
				for _, s := range texts {
					ids = enc.AppendIDs(ids[:0], s)
				}
			}
		})
	}
}

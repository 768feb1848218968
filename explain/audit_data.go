package explain

import (
	"fmt"
	"runtime"
	"strings"
	"sync"

	"telltale/cnn"
	"telltale/corpus"
)

// AuditData is a labeled split as the audit reads it. IDs and Gold are
// required; Texts and Tokens are optional and make the report quote real
// text (snippets) and find boilerplate lines. When given, Texts[i] is the
// original text and Tokens[i] its tokens with byte offsets into Texts[i],
// one per id of IDs[i] (a truncated text keeps its first tokens).
type AuditData struct {
	Texts  []string
	Tokens [][]corpus.Token
	IDs    [][]int32
	Gold   []int
}

// Len is the number of texts.
func (d AuditData) Len() int { return len(d.IDs) }

// check validates d against m; what names the split in messages.
func (d AuditData) check(m *cnn.Model, what string) error {
	cfg := m.Config
	if len(d.Gold) != len(d.IDs) {
		return fmt.Errorf("explain: %s split: %d gold labels for %d texts", what, len(d.Gold), len(d.IDs))
	}
	if d.Texts != nil && len(d.Texts) != len(d.IDs) {
		return fmt.Errorf("explain: %s split: %d texts for %d id lists", what, len(d.Texts), len(d.IDs))
	}
	if d.Tokens != nil && (len(d.Tokens) != len(d.IDs) || d.Texts == nil) {
		return fmt.Errorf("explain: %s split: tokens need texts, one token list per text (%d for %d)", what, len(d.Tokens), len(d.IDs))
	}
	for i, text := range d.IDs {
		if d.Gold[i] < 0 || d.Gold[i] >= cfg.Classes {
			return fmt.Errorf("explain: %s split text %d: gold class %d outside 0…%d", what, i, d.Gold[i], cfg.Classes-1)
		}
		if d.Tokens != nil && len(d.Tokens[i]) != len(text) {
			return fmt.Errorf("explain: %s split text %d: %d tokens for %d ids", what, i, len(d.Tokens[i]), len(text))
		}
		for j, id := range text {
			if id < 0 || int(id) >= cfg.VocabSize {
				return fmt.Errorf("explain: %s split text %d token %d: id %d outside the vocabulary of %d", what, i, j, id, cfg.VocabSize)
			}
		}
	}
	return nil
}

// NewAuditData tokenizes the examples of d with m's tokenizer and
// vocabulary, keeps at most maxLen tokens per text (maxLen ≤ 0 keeps them
// whole) and maps labels to m's classes. Workers goroutines tokenize (≤ 0:
// GOMAXPROCS). A label m does not know is an error naming the example.
// The model must carry its vocabulary (m.Vocab).
func NewAuditData(m *cnn.Model, d *corpus.Dataset, maxLen, workers int) (AuditData, error) {
	if len(m.Vocab) != m.Config.VocabSize {
		return AuditData{}, fmt.Errorf("explain: the model holds %d vocabulary words for %d embedding rows: it cannot tokenize text", len(m.Vocab), m.Config.VocabSize)
	}
	tok, err := corpus.NewTokenizer(m.Tokenizer)
	if err != nil {
		return AuditData{}, err
	}
	gold, err := d.LabelIndex(m.Labels)
	if err != nil {
		return AuditData{}, err
	}
	v := corpus.NewVocab(m.Vocab, nil)
	n := len(d.Examples)
	out := AuditData{Texts: make([]string, n), Tokens: make([][]corpus.Token, n), IDs: make([][]int32, n), Gold: gold}
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	var wg sync.WaitGroup
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := w; i < n; i += workers {
				text := d.Examples[i].Text
				toks := tok.TokenizeFor(v, text)
				if maxLen > 0 && len(toks) > maxLen {
					toks = toks[:maxLen:maxLen]
				}
				out.Texts[i], out.Tokens[i], out.IDs[i] = text, toks, v.Encode(toks)
			}
		}()
	}
	wg.Wait()
	return out, nil
}

// snippet quotes the tokens lo … hi−1 of text i with up to ctx bytes of
// context on each side, on one line, the window itself in [brackets]. Without
// texts it joins the token words.
func (d AuditData) snippet(m *cnn.Model, i, lo, hi, ctx int) string {
	ids := d.IDs[i]
	hi = min(hi, len(ids))
	if lo >= hi {
		return ""
	}
	if d.Tokens == nil {
		var parts []string
		for j := max(0, lo-4); j < min(len(ids), hi+4); j++ {
			w := wordOf(m, ids[j])
			if j == lo {
				w = "[" + w
			}
			if j == hi-1 {
				w += "]"
			}
			parts = append(parts, w)
		}
		return strings.Join(parts, " ")
	}
	text, toks := d.Texts[i], d.Tokens[i]
	a, b := toks[lo].Start, toks[hi-1].End
	l, r := max(0, a-ctx), min(len(text), b+ctx)
	for l > 0 && l < a && !isRuneStart(text[l]) {
		l--
	}
	for r < len(text) && r > b && !isRuneStart(text[r]) {
		r++
	}
	s := text[l:a] + "[" + text[a:b] + "]" + text[b:r]
	if l > 0 {
		s = "…" + s
	}
	if r < len(text) {
		s += "…"
	}
	return oneLine(s)
}

// textSnippet quotes the start of text i (or the tokens around position at).
func (d AuditData) textSnippet(m *cnn.Model, i, at, ctx int) string {
	if at < 0 || at >= len(d.IDs[i]) {
		at = 0
	}
	if len(d.IDs[i]) == 0 {
		return ""
	}
	return d.snippet(m, i, at, at+1, ctx)
}

func isRuneStart(b byte) bool { return b&0xC0 != 0x80 }

func oneLine(s string) string {
	var b strings.Builder
	space := false
	for _, r := range s {
		if r == '\n' || r == '\r' || r == '\t' || r == ' ' {
			if !space {
				b.WriteByte(' ')
			}
			space = true
			continue
		}
		space = false
		b.WriteRune(r)
	}
	return strings.TrimSpace(b.String())
}

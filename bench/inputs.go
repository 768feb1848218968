package main

import (
	"bufio"
	"flag"
	"fmt"
	"io"

	"telltale/cnn"
	"telltale/corpus"
)

// cmdExplainInput writes texts of exactly -tokens tokens, as the model's
// tokenizer reads them, one per line, for timing `telltale explain`:
//
//	bench explain-input -model M -data FILE [-tokens 200] [-n 100] -out FILE
//
// Each text is the start of a text of -data (a labeled file), cut after its
// -tokens-th token and put on one line.
func cmdExplainInput(args []string) error {
	fs := flag.NewFlagSet("explain-input", flag.ExitOnError)
	modelPath := fs.String("model", "", "model file (its tokenizer counts the tokens)")
	data := fs.String("data", "", "labeled file the texts are taken from")
	tokens := fs.Int("tokens", 200, "tokens per text")
	n := fs.Int("n", 100, "texts")
	out := fs.String("out", "", "output file")
	fs.Parse(args)
	if *modelPath == "" || *data == "" || *out == "" || *tokens < 1 || *n < 1 {
		return fmt.Errorf("explain-input: give -model, -data, -out, and -tokens and -n of 1 or more")
	}
	m, err := cnn.Load(*modelPath)
	if err != nil {
		return err
	}
	enc, err := m.Encoder()
	if err != nil {
		return err
	}
	ds, _, err := corpus.Load(*data, corpus.Options{ReplaceInvalidUTF8: true})
	if err != nil {
		return err
	}
	texts, err := cutTexts(enc.Tok, enc.Vocab, ds.Texts(), *tokens, *n)
	if err != nil {
		return fmt.Errorf("explain-input: %s: %w", *data, err)
	}
	return writeAtomic(*out, func(w io.Writer) error {
		bw := bufio.NewWriter(w)
		for _, t := range texts {
			bw.WriteString(t)
			bw.WriteByte('\n')
		}
		return bw.Flush()
	})
}

// cutTexts returns the first n texts that hold at least k tokens, each cut
// after its k-th token and flattened to one line; each result is checked
// to tokenize to exactly k tokens again.
func cutTexts(tok *corpus.Tokenizer, v *corpus.Vocab, texts []string, k, n int) ([]string, error) {
	var out []string
	for _, t := range texts {
		toks := tok.TokenizeFor(v, t)
		if len(toks) < k {
			continue
		}
		cut := flatten(t[:toks[k-1].End])
		if len(tok.TokenizeFor(v, cut)) != k {
			continue // a word split differently once cut (never seen; kept safe)
		}
		if out = append(out, cut); len(out) == n {
			return out, nil
		}
	}
	return nil, fmt.Errorf("only %d texts hold %d tokens, %d wanted", len(out), k, n)
}

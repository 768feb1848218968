package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
)

// wideTinyModel trains a small model with word weights alone (train
// --wide-bigrams=false) on
// part of the demo corpus and returns the path of its file.
func wideTinyModel(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	model := filepath.Join(dir, "wide.tt")
	if code, _, stderr := tt(t, "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--wide-bigrams=false", "--quiet"); code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	return model
}

// TestMaskWords: mask --words on a model with word weights writes the copy
// cnn.Model.MaskedWordsCopy writes, checked by the identity of the
// word-weight path (README "Word weights beside the filters"): on every
// text of the demo's test file, each logit of the copy is the original's
// less the listed words' part, Σ_t (Wide[x_t][c] − Wide[UNK][c])/N over
// their tokens t, N the text's non-PAD tokens (float32 logits: within
// 1e-5, common practice, no source); no filter is masked; and the
// comparison it prints scores the copy as its own forward pass does on
// those texts.
func TestMaskWords(t *testing.T) {
	model := wideTinyModel(t)
	out := filepath.Join(t.TempDir(), "masked.tt")
	words := []string{"kioskmail", "tkref"}
	code, stdout, stderr := tt(t, "mask", "--model", model, "--words", strings.Join(words, ","), "--out", out,
		"--test", "testdata/demo/test.csv", "--json")
	if code != 0 {
		t.Fatalf("mask --words: exit %d: %s", code, stderr)
	}
	if !strings.Contains(stderr, "words 'kioskmail', 'tkref' read as the unknown word by the word weights") {
		t.Errorf("mask --words does not say what it did: %s", stderr)
	}
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	masked, err := cnn.Load(out)
	if err != nil {
		t.Fatal(err)
	}
	ids := make([]int32, len(words))
	for i, w := range words {
		if ids[i] = int32(slices.Index(m.Vocab, w)); ids[i] < 2 {
			t.Fatalf("%q is not in the model's vocabulary: the case tests nothing", w)
		}
	}
	for g := range m.Config.NumFilters() {
		if masked.IsMasked(g) {
			t.Errorf("filter %d masked by --words alone", g)
		}
	}
	ds, _, err := corpus.Load("testdata/demo/test.csv", corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	enc, err := m.Encoder()
	if err != nil {
		t.Fatal(err)
	}
	data, err := cnn.EncodeDataset(enc, ds, m.Labels, 1)
	if err != nil {
		t.Fatal(err)
	}
	right, touched := 0, 0
	for i, x := range data.IDs {
		want := wordsRemoved(m, x, ids)
		got := masked.Forward(x).Logits
		for c := range got {
			if !testref.Close(float64(got[c]), want[c], 1e-5, 0) {
				t.Fatalf("text %d, logit %d: masked %v, the original less the words' part %v", i, c, got[c], want[c])
			}
		}
		if slices.ContainsFunc(x, func(id int32) bool { return slices.Contains(ids, id) }) {
			touched++
		}
		if argmax(got) == data.Labels[i] {
			right++
		}
	}
	if touched < 50 {
		t.Fatalf("only %d test texts hold the words: the check checked little", touched)
	}
	var rows []struct {
		Model   string `json:"model"`
		Metrics struct {
			Accuracy float64 `json:"accuracy"`
		} `json:"metrics"`
	}
	if err := json.Unmarshal([]byte(stdout), &rows); err != nil {
		t.Fatalf("mask --json: %v\n%s", err, stdout)
	}
	if len(rows) != 2 || rows[0].Model != model || rows[1].Model != out {
		t.Fatalf("mask --json compares %+v, want %s and %s", rows, model, out)
	}
	if want := float64(right) / float64(data.Len()); rows[1].Metrics.Accuracy != want {
		t.Errorf("the masked model's accuracy: %v printed, %v by its forward pass", rows[1].Metrics.Accuracy, want)
	}
}

// wordsRemoved is m's logits on x less the word part of the words ids:
// Σ_t (Wide[x_t][c] − Wide[UNK][c])/N over the tokens t of those words.
func wordsRemoved(m *cnn.Model, x []int32, ids []int32) []float64 {
	z := m.Forward(x).Logits
	n := 0
	for _, id := range x {
		if id != corpus.PAD {
			n++
		}
	}
	out := make([]float64, len(z))
	unk := m.WideRow(corpus.UNK)
	for c := range z {
		out[c] = float64(z[c])
		for _, id := range x {
			if slices.Contains(ids, id) {
				out[c] -= (float64(m.WideRow(id)[c]) - float64(unk[c])) / float64(n)
			}
		}
	}
	return out
}

// TestMaskRefusals: mask refuses, before writing anything, a command line
// with neither --filters nor --words, --words on a model without word
// weights, a word the model's vocabulary lacks, the padding or unknown
// word, an empty item and a filter index given twice; each message names the fix.
func TestMaskRefusals(t *testing.T) {
	wide, plain := wideTinyModel(t), tinyModel(t)
	dir := t.TempDir()
	out := filepath.Join(dir, "masked.tt")
	for _, c := range []struct {
		name string
		args []string
		want []string
	}{
		{"neither", []string{"--model", wide}, []string{"--filters, --words or --words-file is required"}},
		{"no word weights", []string{"--model", plain, "--words", "kioskmail"}, []string{plain + " has no word weights", "would change nothing", "--filters"}},
		{"unknown word", []string{"--model", wide, "--words", "kioskmail,zqxjv"}, []string{"vocabulary does not contain \"zqxjv\"", "telltale export --model " + wide, "vocab.txt"}},
		{"a word in capitals", []string{"--model", wide, "--words", "KioskMail"}, []string{"does not contain \"KioskMail\": the model lower-cases its texts, so give \"kioskmail\""}},
		{"unknown-word token", []string{"--model", wide, "--words", corpus.UNKWord}, []string{"is the unknown word itself"}},
		{"padding", []string{"--model", wide, "--words", corpus.PADWord}, []string{"is the padding itself"}},
		{"empty item", []string{"--model", wide, "--words", "kioskmail,,tkref"}, []string{"--words", "item 2 of 3 is empty"}},
		{"repeated filter", []string{"--model", plain, "--filters", "1,0,1"}, []string{`--filters "1,0,1": filter 1 is given twice: give each index once`}},
	} {
		t.Run(c.name, func(t *testing.T) {
			code, _, stderr := tt(t, append(append([]string{"mask"}, c.args...), "--out", out)...)
			noCrash(t, c.name, stderr)
			if code != 2 {
				t.Errorf("exit %d, want 2: %s", code, stderr)
			}
			for _, w := range c.want {
				if !strings.Contains(stderr, w) {
					t.Errorf("message lacks %q: %s", w, stderr)
				}
			}
			if _, err := os.Stat(out); err == nil {
				t.Errorf("%s written despite the error", out)
			}
		})
	}
}

// TestMaskWordsFile: --words-file gives the words to mask one a line, read
// as --mask-tokens files are (byte order mark, blank lines, # comments,
// Windows line ends), so a word holding a comma can be masked: its row of
// word weights in the copy becomes the unknown word's (README "Word
// weights beside the filters": a masked word's part is then exactly 0),
// and every other row is kept. The words of a file give the copy that
// --words gives for the same words.
func TestMaskWordsFile(t *testing.T) {
	model := wideTinyModel(t)
	dir := t.TempDir()
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	// A model whose vocabulary holds a word with a comma: "tkref" renamed.
	k := slices.Index(m.Vocab, "tkref")
	if k < 2 {
		t.Fatal(`"tkref" is not in the model's vocabulary: the case tests nothing`)
	}
	m.Vocab[k] = "tk,ref"
	commaModel := filepath.Join(dir, "comma.tt")
	if err := m.Save(commaModel); err != nil {
		t.Fatal(err)
	}
	list := filepath.Join(dir, "words.txt")
	if err := os.WriteFile(list, []byte("\xef\xbb\xbf# the cues\r\nkioskmail\r\n\r\n  tk,ref \r\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "masked.tt")
	code, _, stderr := tt(t, "mask", "--model", commaModel, "--words-file", list, "--out", out)
	if code != 0 {
		t.Fatalf("mask --words-file: exit %d: %s", code, stderr)
	}
	if !strings.Contains(stderr, "words 'kioskmail', 'tk,ref' read as the unknown word by the word weights") {
		t.Errorf("mask --words-file does not say what it did: %s", stderr)
	}
	masked, err := cnn.Load(out)
	if err != nil {
		t.Fatal(err)
	}
	c := m.Config.Classes
	row := func(x *cnn.Model, id int) []float32 { return x.Wide[id*c : id*c+c] }
	kiosk := slices.Index(m.Vocab, "kioskmail")
	for id := range m.Vocab {
		want := row(m, id)
		if id == k || id == kiosk {
			want = row(m, int(corpus.UNK))
		}
		if !slices.Equal(row(masked, id), want) {
			t.Errorf("word %d (%q): word weights %v, want %v", id, m.Vocab[id], row(masked, id), want)
		}
	}
	if slices.Equal(row(m, k), row(m, int(corpus.UNK))) {
		t.Fatal(`"tk,ref" already had the unknown word's weights: the check cannot fail`)
	}

	// The same words by --words (without the comma word) and by a file.
	byFlag, byFile := filepath.Join(dir, "flag.tt"), filepath.Join(dir, "file.tt")
	plain := filepath.Join(dir, "plain.txt")
	if err := os.WriteFile(plain, []byte("kioskmail\ntkref\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, args := range [][]string{{"--words", "kioskmail,tkref", "--out", byFlag}, {"--words-file", plain, "--out", byFile}} {
		if code, _, stderr := tt(t, append([]string{"mask", "--model", model, "--quiet"}, args...)...); code != 0 {
			t.Fatalf("mask %q: exit %d: %s", args, code, stderr)
		}
	}
	a, errA := cnn.Load(byFlag)
	b, errB := cnn.Load(byFile)
	if errA != nil || errB != nil {
		t.Fatal(errA, errB)
	}
	if !slices.Equal(a.Wide, b.Wide) {
		t.Errorf("--words-file and --words mask different word weights")
	}
}

// TestMaskWordsFileRefusals: a --words-file that is missing, holds no
// word, names a word the vocabulary lacks (by its line) or is UTF-16 is
// refused before anything is written, the message naming the fix.
func TestMaskWordsFileRefusals(t *testing.T) {
	wide := wideTinyModel(t)
	dir := t.TempDir()
	out := filepath.Join(dir, "masked.tt")
	write := func(name, content string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	none := filepath.Join(dir, "none.txt")
	empty := write("empty.txt", "# nothing here\n\n")
	unknown := write("unknown.txt", "# cues\nkioskmail\nzqxjv\n")
	utf16 := write("utf16.txt", "\xff\xfek\x00")
	for _, c := range []struct {
		name string
		file string
		code int
		want []string
	}{
		{"missing", none, 2, []string{"--words-file " + none + ": no such file: check the path"}},
		{"no word", empty, 2, []string{"--words-file " + empty + " holds no word", "one word a line"}},
		{"unknown word", unknown, 2, []string{"--words-file " + unknown + " line 3", `does not contain "zqxjv"`, "vocab.txt"}},
		{"UTF-16", utf16, 1, []string{"utf16.txt line 1", "save it as UTF-8"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			code, _, stderr := tt(t, "mask", "--model", wide, "--words-file", c.file, "--out", out)
			noCrash(t, c.name, stderr)
			if code != c.code {
				t.Errorf("exit %d, want %d: %s", code, c.code, stderr)
			}
			for _, w := range c.want {
				if !strings.Contains(stderr, w) {
					t.Errorf("message lacks %q: %s", w, stderr)
				}
			}
			if _, err := os.Stat(out); err == nil {
				t.Errorf("%s written despite the error", out)
			}
		})
	}
}

// TestMaskShowsTheBaseline: the masked copy keeps the linear baseline of
// the original's file (masking changes the CNN alone), and mask with
// --test shows both models beside it as compare does: in --json every row
// has baseline and figures.baseline, the baseline's figures those eval
// gives the original on the same texts (the reference); in text, a block
// "model N beside its linear baseline" for each.
func TestMaskShowsTheBaseline(t *testing.T) {
	model := tinyModel(t)
	dir := t.TempDir()
	out := filepath.Join(dir, "masked.tt")
	test := filepath.Join("testdata", "demo", "test.csv")
	code, stdout, stderr := tt(t, "mask", "--model", model, "--filters", "0,1", "--out", out, "--test", test, "--json", "--quiet")
	if code != 0 {
		t.Fatalf("mask --json: exit %d: %s", code, stderr)
	}
	masked, err := cnn.Load(out)
	if err != nil || masked.Baseline == nil {
		t.Fatalf("the masked copy carries no baseline (%v)", err)
	}
	type figures struct {
		Baseline *struct {
			Accuracy struct{ Estimate float64 } `json:"accuracy"`
		} `json:"baseline"`
	}
	var rows []struct {
		Model    string          `json:"model"`
		Figures  figures         `json:"figures"`
		Baseline json.RawMessage `json:"baseline"`
	}
	if err := json.Unmarshal([]byte(stdout), &rows); err != nil {
		t.Fatalf("mask --json: %v\n%s", err, stdout)
	}
	code, evalOut, stderr := tt(t, "eval", "--model", model, "--test", test, "--json")
	if code != 0 {
		t.Fatalf("eval: exit %d: %s", code, stderr)
	}
	var ev struct {
		Figures  figures         `json:"figures"`
		Baseline json.RawMessage `json:"baseline"`
	}
	if err := json.Unmarshal([]byte(evalOut), &ev); err != nil || ev.Figures.Baseline == nil {
		t.Fatalf("eval --json: %v, baseline figures %v", err, ev.Figures.Baseline)
	}
	if len(rows) != 2 {
		t.Fatalf("%d rows", len(rows))
	}
	for _, r := range rows {
		if r.Figures.Baseline == nil || len(r.Baseline) == 0 {
			t.Errorf("%s: no baseline in the row: %s", r.Model, stdout)
			continue
		}
		if r.Figures.Baseline.Accuracy != ev.Figures.Baseline.Accuracy || compact(t, r.Baseline) != compact(t, ev.Baseline) {
			t.Errorf("%s: baseline %s, eval gives %s", r.Model, r.Baseline, ev.Baseline)
		}
	}
	code, text, stderr := tt(t, "mask", "--model", model, "--filters", "0,1", "--out", out, "--test", test, "--quiet")
	if code != 0 {
		t.Fatalf("mask: exit %d: %s", code, stderr)
	}
	for _, w := range []string{"model 1 beside its linear baseline, ", "model 2 beside its linear baseline, ", "linear baseline"} {
		if !strings.Contains(text, w) {
			t.Errorf("mask's text lacks %q:\n%s", w, text)
		}
	}
}

// compact is the JSON raw without its white space.
func compact(t *testing.T, raw []byte) string {
	t.Helper()
	var b bytes.Buffer
	if err := json.Compact(&b, raw); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

package torchmodel

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"
	"unicode/utf8"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
	"telltale/torchmodel/npy"
)

// charMaxChars cuts words short in the character models of these tests, so
// that many words of the mails are longer than the layer reads.
const charMaxChars = 6

// trainCharModel trains a small model with a character layer (and the wide
// path) on the SpamAssassin training mails, with two filters masked.
func trainCharModel(t *testing.T, ms *mails) (*cnn.Model, *corpus.Encoder) {
	t.Helper()
	train := &corpus.Dataset{Labels: []string{"ham", "spam"}}
	for i, s := range ms.train {
		train.Examples = append(train.Examples, corpus.Example{Text: s, Label: ms.trainLab[i]})
	}
	r := cnn.DefaultRecipe()
	r.Model.Dim, r.Model.Filters, r.Train.Epochs, r.Train.MaxLen, r.Train.Threads = 12, 6, 2, 150, 1
	r.Model.Wide = true
	r.Model.Chars = &cnn.CharConfig{Filters: 5, Width: 3, Dim: 4, MaxChars: charMaxChars}
	tr, err := cnn.TrainText(context.Background(), train, nil, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	m := tr.Model
	m.Masked = make([]bool, m.Config.NumFilters())
	m.Masked[1], m.Masked[8] = true, true
	return m, tr.Encoder
}

// unknownTexts returns two texts made of the evaluation mails' words that
// are outside m's vocabulary: the first 25 plain ASCII ones, and the first
// 25 of any script. It fails the test unless every word of both is
// unknown and some are longer than charMaxChars.
func unknownTexts(t *testing.T, enc *corpus.Encoder, eval []string) []string {
	t.Helper()
	var ascii, any []string
	seen := map[string]bool{}
	long := 0
	for _, text := range eval {
		toks, ids := enc.Encode(text)
		for i, id := range ids {
			w := toks[i].Text
			if id != corpus.UNK || seen[w] {
				continue
			}
			seen[w] = true
			if utf8.RuneCountInString(w) > charMaxChars {
				long++
			}
			if len(any) < 25 {
				any = append(any, w)
			}
			if len(ascii) < 25 && isPlainASCII(w) {
				ascii = append(ascii, w)
			}
		}
	}
	out := []string{strings.Join(ascii, " "), strings.Join(any, " ")}
	for _, text := range out {
		if _, ids := enc.Encode(text); len(ids) == 0 || slices.ContainsFunc(ids, func(id int32) bool { return id != corpus.UNK }) {
			t.Fatalf("%q: ids %v, want only unknown words", text, ids)
		}
	}
	if long == 0 {
		t.Fatalf("no unknown word longer than %d characters", charMaxChars)
	}
	return out
}

// A model trained by telltale with a character layer (train --chars; the
// layer of Kim, Jernite, Sontag & Rush 2016), the wide path and two
// filters masked is exported and loaded by the README's PyTorch module
// (testdata/telltale_cnn.py, its CharCNN branch, run by
// testdata/export_check.py with Debian's python3-torch). On the 130
// SpamAssassin evaluation texts, an empty text, and two texts made only of
// the mails' words outside the vocabulary (ASCII, and any script), with
// words cut at 6 characters, the module's logits equal telltale's to 1e-5
// (absolute or relative, the tolerance of the other export checks): ids
// alone against the model's own logits (unknown words read as the unknown
// token), ids with the tokens' characters against the logits telltale's
// predict and eval give (cnn.Model.WithUnseen), and the ASCII texts
// through the module's encode(chars=True).
func TestCharExportMatchesTorch(t *testing.T) {
	testref.RequirePython(t, "torch")
	ms := spamMails(t)
	m, enc := trainCharModel(t, ms)
	long := 0
	for _, w := range m.Vocab {
		if utf8.RuneCountInString(w) > charMaxChars {
			long++
		}
	}
	if long == 0 {
		t.Fatalf("no vocabulary word longer than %d characters: the check would not test the cut", charMaxChars)
	}
	texts := append(append([]string{""}, unknownTexts(t, enc, ms.eval)...), ms.eval...)
	worst := checkExportWithTorch(t, m, enc, texts)
	t.Logf("%d vocabulary words longer than %d characters; largest |logit difference| %.2g", long, charMaxChars, worst)
}

// A model with a character layer goes through Export and Import unchanged:
// the same configuration, bit-identical character layer, table and wide
// table, and bit-identical logits on the SpamAssassin evaluation texts
// read with their unseen words (cnn.Model.WithUnseen). Identity, common
// practice, no source.
func TestCharExportImportRoundTrip(t *testing.T) {
	ms := spamMails(t)
	m, enc := trainCharModel(t, ms)
	dir := t.TempDir()
	if err := Export(m, dir); err != nil {
		t.Fatal(err)
	}
	o := Options{StateDict: filepath.Join(dir, WeightsFile), Vocab: filepath.Join(dir, VocabFile),
		PadID: -1, UnkID: -1, Labels: m.Labels, Tokenizer: m.Tokenizer}
	res, err := Import(context.Background(), o)
	if err != nil {
		t.Fatal(err)
	}
	back := res.Model
	back.Masked = m.Masked // export zeroes a masked filter's output weights instead
	if res.Layout.Chars != CharsPrefix || !strings.Contains(res.Layout.String(), "characters "+CharsPrefix) {
		t.Errorf("layout %s, want the character layer %s", res.Layout, CharsPrefix)
	}
	if !reflect.DeepEqual(back.Config.Chars, m.Config.Chars) || back.Config.Dim != m.Config.Dim {
		t.Fatalf("configuration %+v (dim %d), want %+v (dim %d)", back.Config.Chars, back.Config.Dim, m.Config.Chars, m.Config.Dim)
	}
	if !slices.Equal(back.Char.Emb, m.Char.Emb) || !slices.Equal(back.Char.W, m.Char.W) || !slices.Equal(back.Char.B, m.Char.B) {
		t.Error("the character layer differs after the round trip")
	}
	if !slices.Equal(back.Emb, m.Emb) || !slices.Equal(back.Wide, m.Wide) || !slices.Equal(back.Vocab, m.Vocab) {
		t.Error("the table (with its character columns), the wide table or the vocabulary differ after the round trip")
	}
	mu, encU, err := m.WithUnseen(enc, ms.eval)
	if err != nil {
		t.Fatal(err)
	}
	bu, encB, err := back.WithUnseen(enc, ms.eval) // the same vocabulary; enc also cuts texts at the training length
	if err != nil {
		t.Fatal(err)
	}
	for i, text := range ms.eval {
		_, x := encU.Encode(text)
		_, y := encB.Encode(text)
		if got, want := bu.Forward(y).Logits, mu.Forward(x).Logits; !slices.Equal(got, want) {
			t.Fatalf("text %d: logits %v after the round trip, %v before", i, got, want)
		}
	}

	// The words' character ids must be the vocabulary's: another vocabulary
	// of the same size is refused, naming the key and the word.
	words := slices.Clone(m.Vocab)
	words[2], words[3] = words[3], words[2]
	o.Vocab = writeFile(t, dir, "swapped.txt", []byte(strings.Join(words, "\n")+"\n"))
	if _, err := Import(context.Background(), o); !errors.Is(err, ErrVocab) || !strings.Contains(err.Error(), charsWordChars) || !strings.Contains(err.Error(), words[2]) {
		t.Errorf("a vocabulary in another order: %v, want ErrVocab naming %s and %q", err, charsWordChars, words[2])
	}
}

// The character layer's keys are found by name and must come together:
// a state_dict with its alphabet but without its filters is refused naming
// the key; int64 buffers saved as floats are refused naming their type.
func TestCharImportRefusals(t *testing.T) {
	ms := spamMails(t)
	m, _ := trainCharModel(t, ms)
	dir := t.TempDir()
	vocab := writeFile(t, dir, VocabFile, []byte(strings.Join(m.Vocab, "\n")+"\n"))
	arrays := StateDict(m)
	o := Options{Vocab: vocab, PadID: -1, UnkID: -1, Labels: m.Labels}
	noConv := slices.DeleteFunc(slices.Clone(arrays), func(a npy.Array) bool { return a.Name == charsConv })
	o.StateDict = writeNPZ(t, dir, "noconv.npz", noConv)
	if _, err := Import(context.Background(), o); !errors.Is(err, ErrLayout) || !strings.Contains(err.Error(), charsConv) {
		t.Errorf("without %s: %v, want ErrLayout naming it", charsConv, err)
	}
	floats := slices.Clone(arrays)
	for i, a := range floats {
		if a.Name == charsAlphabet {
			a.Data = make([]float32, len(a.Ints))
			a.Ints = nil
			floats[i] = a
		}
	}
	o.StateDict = writeNPZ(t, dir, "floats.npz", floats)
	if _, err := Import(context.Background(), o); !errors.Is(err, ErrLayout) || !strings.Contains(err.Error(), charsAlphabet) || !strings.Contains(err.Error(), "int64") {
		t.Errorf("an alphabet of floats: %v, want ErrLayout naming %s and int64", err, charsAlphabet)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 3 {
		t.Errorf("%d files in the folder, want the 3 the test wrote", len(entries))
	}
}

package torchmodel

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
	"telltale/torchmodel/npy"
	"telltale/torchmodel/statedict"
)

// kimArrays is a small Conv1d sentence CNN's state_dict with random values
// (v words of dimension d, widths 2 and 3, 3 filters each, c outputs) and a
// zero padding row 0.
func kimArrays(v, d, c int) []npy.Array {
	rng := rand.New(rand.NewPCG(3, 4))
	r := func(n int) []float32 {
		x := make([]float32, n)
		for i := range x {
			x[i] = float32(rng.NormFloat64())
		}
		return x
	}
	emb := r(v * d)
	clear(emb[:d])
	return []npy.Array{
		{Name: "embedding.weight", Shape: []int{v, d}, Data: emb},
		{Name: "convs.0.weight", Shape: []int{3, d, 2}, Data: r(3 * d * 2)},
		{Name: "convs.0.bias", Shape: []int{3}, Data: r(3)},
		{Name: "convs.1.weight", Shape: []int{3, d, 3}, Data: r(3 * d * 3)},
		{Name: "convs.1.bias", Shape: []int{3}, Data: r(3)},
		{Name: "fc.weight", Shape: []int{c, 6}, Data: r(c * 6)},
		{Name: "fc.bias", Shape: []int{c}, Data: r(c)},
	}
}

func writeFile(t *testing.T, dir, name string, b []byte) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, b, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func writeNPZ(t *testing.T, dir, name string, arrays []npy.Array) string {
	t.Helper()
	var b bytes.Buffer
	if err := npy.WriteNPZ(&b, arrays); err != nil {
		t.Fatal(err)
	}
	return writeFile(t, dir, name, b.Bytes())
}

var fiveWords = "<pad>\n<unk>\nthe\ncat\nsat\n"

// Bad input of every kind named in the package documentation gives an
// error that wraps the right sentinel and names the file and the key, line
// or token at fault.
func TestImportRefusals(t *testing.T) {
	dir := t.TempDir()
	good := kimArrays(5, 4, 2)
	vocab := writeFile(t, dir, "vocab.txt", []byte(fiveWords))
	with := func(name string, edit func([]npy.Array) []npy.Array) string {
		a := edit(slices.Clone(good))
		return writeNPZ(t, dir, name, a)
	}
	base := Options{StateDict: writeNPZ(t, dir, "good.npz", good), Vocab: vocab, PadID: -1, UnkID: -1, Labels: []string{"no", "yes"}}
	if _, err := Import(context.Background(), base); err != nil {
		t.Fatalf("the good model: %v", err)
	}
	cases := []struct {
		name string
		edit func(*Options)
		want error
		says []string
	}{
		{"vocabulary size", func(o *Options) { o.Vocab = writeFile(t, dir, "four.txt", []byte("<pad>\n<unk>\nthe\ncat\n")) },
			ErrVocab, []string{"four.txt", "4 tokens", "embedding.weight", "5 rows"}},
		{"duplicate token", func(o *Options) { o.Vocab = writeFile(t, dir, "dup.txt", []byte("<pad>\n<unk>\nthe\ncat\nthe\n")) },
			ErrVocab, []string{"dup.txt line 5", `"the"`, "line 3"}},
		{"duplicate token in JSON", func(o *Options) {
			o.Vocab = writeFile(t, dir, "dup.json", []byte("{\"<pad>\": 0, \"<unk>\": 1,\n \"the\": 2,\n \"cat\": 3,\n \"the\": 4}"))
		}, ErrVocab, []string{"dup.json line 4", `"the"`, "line 2"}},
		{"duplicate id in JSON", func(o *Options) {
			o.Vocab = writeFile(t, dir, "dupid.json", []byte(`{"<pad>": 0, "<unk>": 1, "the": 2, "cat": 2, "sat": 4}`))
		}, ErrVocab, []string{"dupid.json", "id 2", `"the"`, `"cat"`}},
		{"gap in JSON ids", func(o *Options) {
			o.Vocab = writeFile(t, dir, "gap.json", []byte(`{"<pad>": 0, "<unk>": 1, "the": 2, "cat": 3, "sat": 5}`))
		}, ErrVocab, []string{"gap.json", "no token has id 4"}},
		{"labels", func(o *Options) { o.Labels = []string{"a", "b", "c"} }, ErrVocab, []string{"3 labels", "fc.weight", "good.npz", "2 outputs"}},
		{"repeated label", func(o *Options) { o.Labels = []string{"a", "a"} }, ErrVocab, []string{`"a"`, "twice"}},
		{"no padding token", func(o *Options) { o.Vocab = writeFile(t, dir, "nopad.txt", []byte("a\n<unk>\nthe\ncat\nsat\n")) },
			ErrVocab, []string{"nopad.txt", "no padding token", "--pad-id"}},
		{"padding id out of range", func(o *Options) { o.PadID = 9 }, ErrVocab, []string{"vocab.txt", "id 9"}},
		{"reserved name elsewhere", func(o *Options) { o.PadID, o.UnkID = 2, 3 }, ErrVocab, []string{"vocab.txt", `"<pad>"`, "--pad-id"}},
		{"non-zero padding row", func(o *Options) {
			o.StateDict = with("padrow.npz", func(a []npy.Array) []npy.Array {
				e := slices.Clone(a[0].Data)
				e[1] = 0.5
				a[0].Data = e
				return a
			})
		}, ErrPadRow, []string{"padrow.npz", "embedding.weight", "--zero-pad", "3 tokens"}},
		{"conv dimension", func(o *Options) {
			o.StateDict = with("convdim.npz", func(a []npy.Array) []npy.Array {
				a[3] = npy.Array{Name: "convs.1.weight", Shape: []int{3, 5, 2}, Data: make([]float32, 30)}
				return a
			})
		}, ErrLayout, []string{"convdim.npz", "convs.1.weight", "[3 5 2]"}},
		{"bias shape", func(o *Options) {
			o.StateDict = with("bias.npz", func(a []npy.Array) []npy.Array {
				a[2] = npy.Array{Name: "convs.0.bias", Shape: []int{4}, Data: make([]float32, 4)}
				return a
			})
		}, ErrLayout, []string{"bias.npz", "convs.0.bias", "[4]"}},
		{"output width", func(o *Options) {
			o.StateDict = with("outw.npz", func(a []npy.Array) []npy.Array {
				a[5] = npy.Array{Name: "fc.weight", Shape: []int{2, 7}, Data: make([]float32, 14)}
				return a
			})
		}, ErrLayout, []string{"outw.npz", "fc.weight", "[2 7]", "6"}},
		{"a 5-D weight", func(o *Options) {
			o.StateDict = with("rank5.npz", func(a []npy.Array) []npy.Array {
				return append(a, npy.Array{Name: "extra.weight", Shape: []int{1, 1, 1, 1, 1}, Data: []float32{1}})
			})
		}, ErrLayout, []string{"rank5.npz", "extra.weight", "5-D"}},
		{"partial layout", func(o *Options) { o.Layout = Layout{Output: "fc.weight"} }, ErrLayout, []string{"only some parts"}},
		{"layout key missing", func(o *Options) {
			o.Layout = Layout{Embeddings: []string{"emb.weight"}, Convs: []string{"convs.0.weight", "convs.1.weight"}, Output: "fc.weight"}
		}, ErrLayout, []string{"good.npz", "no key emb.weight"}},
		{"unused key", func(o *Options) {
			o.Layout = Layout{Embeddings: []string{"embedding.weight"}, Convs: []string{"convs.0.weight"}, Output: "fc.weight"}
		}, ErrLayout, []string{"good.npz", "convs.1.weight", "not part of the layout"}},
		{"not a state_dict", func(o *Options) { o.StateDict = writeFile(t, dir, "notes.pt", []byte("just some notes\n")) },
			statedict.ErrNotTorch, []string{"notes.pt"}},
		{"truncated", func(o *Options) {
			b, _ := os.ReadFile(base.StateDict)
			o.StateDict = writeFile(t, dir, "cut.npz", b[:len(b)-100])
		}, npy.ErrFormat, []string{"cut.npz"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			o := base
			c.edit(&o)
			_, err := Import(context.Background(), o)
			if !errors.Is(err, c.want) {
				t.Fatalf("%v, want %v", err, c.want)
			}
			for _, s := range c.says {
				if !strings.Contains(err.Error(), s) {
					t.Errorf("%v\ndoes not say %q", err, s)
				}
			}
		})
	}
}

// State_dicts of other architectures saved by PyTorch (Debian's
// python3-torch, testdata/other_models.py) are refused naming the key and
// shape that do not fit.
func TestImportRefusesOtherModels(t *testing.T) {
	testref.RequirePython(t, "torch")
	dir := t.TempDir()
	if b, err := exec.Command(testref.Python, "testdata/other_models.py", dir).CombinedOutput(); err != nil {
		t.Fatalf("other_models.py: %v\n%s", err, b)
	}
	var words []string
	for i := range 20 {
		words = append(words, fmt.Sprint("w", i))
	}
	words[0], words[1] = "<pad>", "<unk>"
	vocab := writeFile(t, dir, "vocab.txt", []byte(strings.Join(words, "\n")))
	for name, says := range map[string][]string{
		"lstm":       {"lstm.weight_ih_l0", "[32 4]", "recurrent"},
		"batchnorm":  {"bn.weight", "[6]", "1-D"},
		"two_linear": {"fc.weight", "[2 5]", "second linear layer", "hidden.weight"},
		"attention":  {"attention.in_proj_weight", "[12 4]", "attention"},
		"uneven":     {"convs.1.weight", "[4 4 3]", "4 filters", "convs.0.weight has 3"},
	} {
		_, err := Import(context.Background(), Options{StateDict: filepath.Join(dir, name+".pt"), Vocab: vocab, PadID: -1, UnkID: -1, Labels: []string{"a", "b"}})
		if !errors.Is(err, ErrLayout) || !strings.Contains(err.Error(), name+".pt") {
			t.Errorf("%s: %v, want ErrLayout naming the file", name, err)
			continue
		}
		for _, s := range says {
			if !strings.Contains(err.Error(), s) {
				t.Errorf("%s: %v\ndoes not say %q", name, err, s)
			}
		}
	}
}

// An export read back by Import gives the same model: the same vocabulary,
// labels and logits, masked filters included (their output weights are
// zero in the export, which gives the same logits as the mask).
func TestExportImportRoundTrip(t *testing.T) {
	cfg := cnn.Config{VocabSize: 6, Dim: 4, Widths: []int{2, 3}, Filters: 3, Classes: 3}
	m, err := cnn.New(cfg, []string{"<pad>", "<unk>", "a", "b", "c", "d"}, []string{"x", "y", "z"}, 5)
	if err != nil {
		t.Fatal(err)
	}
	m.Tokenizer = corpus.TokenizerConfig{Lower: true}
	m.Masked = []bool{false, true, false, false, false, true}
	dir := t.TempDir()
	if err := Export(m, dir); err != nil {
		t.Fatal(err)
	}
	labels, err := ReadLabels(filepath.Join(dir, LabelsFile))
	if err != nil {
		t.Fatal(err)
	}
	res, err := Import(context.Background(), Options{StateDict: filepath.Join(dir, WeightsFile), Vocab: filepath.Join(dir, VocabFile),
		PadID: -1, UnkID: -1, Labels: labels, Tokenizer: m.Tokenizer})
	if err != nil {
		t.Fatal(err)
	}
	back := res.Model
	if !slices.Equal(back.Vocab, m.Vocab) || !slices.Equal(back.Labels, m.Labels) || !slices.Equal(back.Emb, m.Emb) {
		t.Fatalf("vocabulary, labels or embedding changed: %v %v", back.Vocab, back.Labels)
	}
	for _, ids := range [][]int32{{2}, {2, 3, 4, 5, 1, 2}, {5, 5, 5, 4}} {
		got, want := back.Forward(ids).Logits, m.Forward(ids).Logits
		if !slices.Equal(got, want) {
			t.Errorf("ids %v: logits %v after the round trip, %v before", ids, got, want)
		}
	}
}

// A word with a line break cannot be one line of vocab.txt: Export refuses
// before writing anything.
func TestExportRefusesLineBreaks(t *testing.T) {
	cfg := cnn.Config{VocabSize: 3, Dim: 2, Widths: []int{1}, Filters: 1, Classes: 2}
	m, _ := cnn.New(cfg, []string{"<pad>", "<unk>", "a\nb"}, []string{"x", "y"}, 1)
	dir := t.TempDir()
	if err := Export(m, dir); !errors.Is(err, ErrVocab) || !strings.Contains(err.Error(), `"a\nb"`) {
		t.Fatalf("%v, want ErrVocab naming the word", err)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 0 {
		t.Errorf("%d files written", len(entries))
	}
}

// A model with a character layer (train --chars) can be exported; one
// whose layer has no weights cannot, and is refused before anything is
// written.
func TestExportCharModelNeedsItsLayer(t *testing.T) {
	words := []string{"<pad>", "<unk>", "ab", "ba"}
	cc := &cnn.CharConfig{Filters: 2, Width: 2, Dim: 3, MaxChars: 20, Alphabet: cnn.Alphabet(words)}
	cfg := cnn.Config{VocabSize: 4, Dim: 4, Widths: []int{1}, Filters: 1, Classes: 2, Chars: cc}
	m, err := cnn.New(cfg, words, []string{"x", "y"}, 1)
	if err != nil {
		t.Fatal(err)
	}
	if err := CanExport(m); err != nil {
		t.Fatalf("CanExport: %v", err)
	}
	m.Char = nil
	dir := t.TempDir()
	if err := Export(m, dir); !errors.Is(err, ErrLayout) || !strings.Contains(err.Error(), "character layer") {
		t.Fatalf("%v, want ErrLayout naming the character layer", err)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 0 {
		t.Errorf("%d files written", len(entries))
	}
}

// FuzzReadVocab reads arbitrary vocabulary files as JSON and as lines: the
// result is an error or tokens that are non-empty and distinct.
func FuzzReadVocab(f *testing.F) {
	f.Add([]byte(`{"<pad>": 0, "<unk>": 1, "the": 2}`))
	f.Add([]byte("{\"a\": 0,\n \"a\": 1}"))
	f.Add([]byte("<pad>\r\n<unk>\r\nthe\r\n"))
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, data []byte) {
		for _, name := range []string{"v.json", "v.txt"} {
			p := filepath.Join(dir, name)
			if err := os.WriteFile(p, data, 0o644); err != nil {
				t.Fatal(err)
			}
			words, err := ReadVocab(p)
			if err != nil {
				if !errors.Is(err, ErrVocab) {
					t.Fatalf("%s: %v does not wrap ErrVocab", name, err)
				}
				continue
			}
			seen := map[string]bool{}
			for _, w := range words {
				if w == "" || seen[w] {
					t.Fatalf("%s: empty or repeated token %q in %q", name, w, words)
				}
				seen[w] = true
			}
		}
	})
}

// TestExportContextStopped: an export whose context is done by the time
// its files are written (an interrupt) leaves the earlier export in place
// and no temporary folder beside it.
func TestExportContextStopped(t *testing.T) {
	cfg := cnn.Config{VocabSize: 4, Dim: 2, Widths: []int{2}, Filters: 2, Classes: 2}
	m, err := cnn.New(cfg, []string{"<pad>", "<unk>", "a", "b"}, []string{"x", "y"}, 5)
	if err != nil {
		t.Fatal(err)
	}
	parent := t.TempDir()
	dir := filepath.Join(parent, "exp")
	if err := Export(m, dir); err != nil {
		t.Fatal(err)
	}
	before, _ := os.ReadFile(filepath.Join(dir, LabelsFile))
	m.Labels = []string{"p", "q"}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if err := ExportContext(ctx, m, dir); !errors.Is(err, context.Canceled) {
		t.Fatalf("a stopped export: %v, want context.Canceled", err)
	}
	if after, _ := os.ReadFile(filepath.Join(dir, LabelsFile)); string(after) != string(before) {
		t.Errorf("the earlier export's labels became %q", after)
	}
	if ents, _ := os.ReadDir(parent); len(ents) != 1 {
		t.Errorf("%d entries beside the export, want the folder alone", len(ents))
	}
}

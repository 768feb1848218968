package torchmodel

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
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

// wideModel is a small model with the wide path on and a random table
// (PAD row zero), masked filters included.
func wideModel(t *testing.T) *cnn.Model {
	t.Helper()
	cfg := cnn.Config{VocabSize: 6, Dim: 4, Widths: []int{2, 3}, Filters: 3, Classes: 3, Wide: true}
	m, err := cnn.New(cfg, []string{"<pad>", "<unk>", "a", "b", "c", "d"}, []string{"x", "y", "z"}, 5)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(5, 6))
	for i := cfg.Classes; i < len(m.Wide); i++ {
		m.Wide[i] = float32(rng.NormFloat64())
	}
	m.Tokenizer = corpus.TokenizerConfig{Lower: true}
	m.Masked = []bool{false, true, false, false, false, true}
	return m
}

// The wide table is exported as "wide.weight" [words, classes], laid out
// as the model holds it, and read back by Import as the wide path: the
// same table and bit-identical logits (texts with PAD inside and an empty
// one included).
func TestWideExportImportRoundTrip(t *testing.T) {
	m := wideModel(t)
	arrays := StateDict(m)
	last := arrays[len(arrays)-1]
	if last.Name != WideKey || !slices.Equal(last.Shape, []int{6, 3}) || !slices.Equal(last.Data, m.Wide) {
		t.Fatalf("the state_dict ends with %s %v, want %s [6 3] holding the table", last.Name, last.Shape, WideKey)
	}
	dir := t.TempDir()
	if err := Export(m, dir); err != nil {
		t.Fatal(err)
	}
	res, err := Import(context.Background(), Options{StateDict: filepath.Join(dir, WeightsFile), Vocab: filepath.Join(dir, VocabFile),
		PadID: -1, UnkID: -1, Labels: m.Labels, Tokenizer: m.Tokenizer})
	if err != nil {
		t.Fatal(err)
	}
	back := res.Model
	if !back.Config.Wide || !slices.Equal(back.Wide, m.Wide) || res.Layout.Wide != WideKey || !strings.Contains(res.Layout.String(), "wide "+WideKey) {
		t.Fatalf("imported wide %v, table equal %v, layout %s", back.Config.Wide, slices.Equal(back.Wide, m.Wide), res.Layout)
	}
	for _, ids := range [][]int32{{2}, {2, 3, 4, 5, 1, 2}, {5, 0, 5, 4}, {}} {
		got, want := back.Forward(ids).Logits, m.Forward(ids).Logits
		if !slices.Equal(got, want) {
			t.Errorf("ids %v: logits %v after the round trip, %v before", ids, got, want)
		}
	}
}

// An imported wide table moves its rows with the vocabulary when the
// padding and unknown tokens are reordered to ids 0 and 1; with one
// sigmoid unit its column becomes class 1's (class 0's weights zero), so
// the logits stay 0 and the unit's value plus the mean.
func TestWideImportReorderAndSigmoid(t *testing.T) {
	dir := t.TempDir()
	// Tokens: the, [PAD], cat, [UNK], sat: padding at 1, unknown at 3.
	vocab := writeFile(t, dir, "vocab.txt", []byte("the\n[PAD]\ncat\n[UNK]\nsat\n"))
	arrays := kimArrays(5, 4, 1)
	emb := slices.Clone(arrays[0].Data)
	copy(emb[4:8], emb[:4]) // the padding row (id 1) is zero
	clear(emb[:4])
	for i := range 4 {
		emb[i] = float32(i + 1) // "the" at id 0
	}
	arrays[0].Data = emb
	wide := []float32{10, 0, 30, 40, 50}
	arrays = append(arrays, npy.Array{Name: WideKey, Shape: []int{5, 1}, Data: wide})
	res, err := Import(context.Background(), Options{StateDict: writeNPZ(t, dir, "sig.npz", arrays), Vocab: vocab,
		PadID: -1, UnkID: -1, Labels: []string{"no", "yes"}, Tokenizer: corpus.TokenizerConfig{Lower: true}})
	if err != nil {
		t.Fatal(err)
	}
	m := res.Model
	// New order: [PAD] (old 1), [UNK] (old 3), the (0), cat (2), sat (4).
	if want := []float32{0, 0, 0, 40, 0, 10, 0, 30, 0, 50}; !slices.Equal(m.Wide, want) {
		t.Errorf("wide table %v, want %v", m.Wide, want)
	}
	plain := m.Clone()
	plain.Config.Wide, plain.Wide = false, nil
	ids := []int32{2, 3, 0, 4}
	got, base := m.Forward(ids).Logits, plain.Forward(ids).Logits
	if got[0] != 0 || !testref.Close(float64(got[1]-base[1]), 30, 1e-5, 1e-5) {
		t.Errorf("logits %v, without the wide path %v: want 0 and the unit's value plus 30", got, base)
	}
}

// A wide table of the wrong shape, with a bias, or with a non-zero padding
// row is refused naming the key; ZeroPad zeroes that row with a warning.
func TestWideImportRefusals(t *testing.T) {
	dir := t.TempDir()
	vocab := writeFile(t, dir, "vocab.txt", []byte(fiveWords))
	good := kimArrays(5, 4, 2)
	base := Options{Vocab: vocab, PadID: -1, UnkID: -1, Labels: []string{"no", "yes"}}
	with := func(name string, extra ...npy.Array) Options {
		o := base
		o.StateDict = writeNPZ(t, dir, name, append(slices.Clone(good), extra...))
		return o
	}
	table := func(rows, cols int, pad float32) npy.Array {
		d := make([]float32, rows*cols)
		for i := range d {
			d[i] = float32(i)
		}
		clear(d[:cols])
		d[0] = pad
		return npy.Array{Name: WideKey, Shape: []int{rows, cols}, Data: d}
	}
	for _, c := range []struct {
		name string
		o    Options
		want error
		says []string
	}{
		{"rows", with("rows.npz", table(4, 2, 0)), ErrLayout, []string{"rows.npz", WideKey, "[4 2]", "[5, 2]"}},
		{"columns", with("cols.npz", table(5, 3, 0)), ErrLayout, []string{"cols.npz", WideKey, "[5 3]", "[5, 2]"}},
		{"bias", with("bias.npz", table(5, 2, 0), npy.Array{Name: "wide.bias", Shape: []int{2}, Data: []float32{1, 2}}),
			ErrLayout, []string{"bias.npz", "wide"}},
		{"padding row", with("pad.npz", table(5, 2, 0.5)), ErrPadRow, []string{"pad.npz", WideKey, "padding_idx", "--zero-pad"}},
	} {
		_, err := Import(context.Background(), c.o)
		if !errors.Is(err, c.want) {
			t.Errorf("%s: %v, want %v", c.name, err, c.want)
			continue
		}
		for _, s := range c.says {
			if !strings.Contains(err.Error(), s) {
				t.Errorf("%s: %v\ndoes not say %q", c.name, err, s)
			}
		}
	}
	o := with("pad2.npz", table(5, 2, 0.5))
	o.ZeroPad = true
	res, err := Import(context.Background(), o)
	if err != nil {
		t.Fatal(err)
	}
	if res.Model.Wide[0] != 0 || len(res.Warnings) != 1 || !strings.Contains(res.Warnings[0], WideKey) {
		t.Errorf("with ZeroPad: padding row %v, warnings %q", res.Model.Wide[:2], res.Warnings)
	}
}

// The wide path's table is found by shape when its key is not wide.weight:
// models trained by telltale with --wide are exported, loaded by the
// README's module and saved by torch.save with the table under
// "bag.weight" (testdata/wide_rename.py, Debian's python3-torch). Import
// takes that key as the wide table, and the logits on SpamAssassin texts
// equal PyTorch's to 1e-5 (absolute or relative, as the other import
// checks). With an embedding of dimension 2 beside 2 labels, both tables
// fit and the error names both keys and the fix; the same model under
// wide.weight still imports.
func TestWideFoundByShape(t *testing.T) {
	testref.RequirePython(t, "torch")
	ms := spamMails(t)
	train := &corpus.Dataset{Labels: []string{"ham", "spam"}}
	for i, s := range ms.train {
		train.Examples = append(train.Examples, corpus.Example{Text: s, Label: ms.trainLab[i]})
	}
	var models []*cnn.Model
	var folders []string
	var enc *corpus.Encoder
	for _, dim := range []int{12, 2} {
		r := cnn.DefaultRecipe()
		r.Model.Dim, r.Model.Filters, r.Train.Epochs, r.Train.MaxLen, r.Train.Threads = dim, 6, 2, 150, 1
		r.Model.Wide = true
		tr, err := cnn.TrainText(context.Background(), train, nil, r, nil)
		if err != nil {
			t.Fatal(err)
		}
		dir := t.TempDir()
		if err := Export(tr.Model, dir); err != nil {
			t.Fatal(err)
		}
		models, folders, enc = append(models, tr.Model), append(folders, dir), tr.Encoder
	}
	ids := [][]int32{{}}
	for _, text := range ms.eval {
		_, x := enc.Encode(text)
		ids = append(ids, x)
	}
	var out struct {
		Logits [][][]float64 `json:"logits"`
		Torch  string        `json:"torch"`
	}
	runPython(t, "testdata/wide_rename.py", t.TempDir(), map[string]any{"folders": folders, "key": "bag.weight", "ids": ids}, &out)
	t.Logf("saved by torch %s", out.Torch)
	m := models[0]
	o := Options{StateDict: filepath.Join(folders[0], "renamed.pt"), Vocab: filepath.Join(folders[0], VocabFile),
		PadID: -1, UnkID: -1, Labels: m.Labels, Tokenizer: m.Tokenizer}
	res, err := Import(context.Background(), o)
	if err != nil {
		t.Fatal(err)
	}
	if res.Layout.Wide != "bag.weight" || !slices.Equal(res.Model.Wide, m.Wide) || len(res.Layout.Embeddings) != 1 {
		t.Fatalf("layout %s; wide table equal to the exported one: %v", res.Layout, slices.Equal(res.Model.Wide, m.Wide))
	}
	worst := 0.0
	for i, x := range ids {
		got := res.Model.Forward(x).Logits
		for k, ref := range out.Logits[0][i] {
			worst = max(worst, math.Abs(float64(got[k])-ref))
			if !testref.Close(float64(got[k]), ref, 1e-5, 1e-5) {
				t.Fatalf("text %d: logits %v, torch %v", i, got, out.Logits[0][i])
			}
		}
	}
	t.Logf("largest |logit difference| %.2g", worst)

	o.StateDict, o.Vocab = filepath.Join(folders[1], "renamed.pt"), filepath.Join(folders[1], VocabFile)
	_, err = Import(context.Background(), o)
	if !errors.Is(err, ErrLayout) {
		t.Fatalf("two tables of shape [vocabulary, 2]: %v, want ErrLayout", err)
	}
	for _, s := range []string{"embedding.weight", "bag.weight", "rename", WideKey} {
		if !strings.Contains(err.Error(), s) {
			t.Errorf("%v\ndoes not say %q", err, s)
		}
	}
	o.StateDict = filepath.Join(folders[1], WeightsFile)
	if res, err := Import(context.Background(), o); err != nil || res.Layout.Wide != WideKey {
		t.Errorf("the same model under %s: %v (layout %v)", WideKey, err, res)
	}
}

// Detection by shape takes a table as the wide one only when the other
// tables still make the embedding the convolutions read (common practice,
// no source: the layouts of Kim 2014's one- and two-channel models).
func TestWideByShapeCases(t *testing.T) {
	table := func(name string, rows, cols int) npy.Array {
		return npy.Array{Name: name, Shape: []int{rows, cols}, Data: make([]float32, rows*cols)}
	}
	second := func(arrays []npy.Array, extra ...npy.Array) *statedict.StateDict {
		sd := &statedict.StateDict{Tensors: map[string]*statedict.Tensor{}}
		for _, a := range slices.Concat(arrays[:1], extra, arrays[1:]) {
			sd.Keys = append(sd.Keys, a.Name)
			sd.Tensors[a.Name] = &statedict.Tensor{Shape: a.Shape, Dtype: statedict.Float32, Data: a.Data}
		}
		return sd
	}
	withChars := func(arrays []npy.Array) []npy.Array {
		arrays[0] = table("embedding.weight", 5, 2)
		return append(arrays, npy.Array{Name: charsConv, Shape: []int{2, 3, 3}, Data: make([]float32, 18)})
	}
	// A two-channel model: convolutions over 2·2 components.
	two := kimArrays(5, 4, 2)
	two[0] = table("static.weight", 5, 2)
	for _, c := range []struct {
		name       string
		sd         *statedict.StateDict
		wide       string
		embeddings int
		err        []string
	}{
		{"one table of the labels' width", second(kimArrays(5, 2, 2)), "", 1, nil},
		{"a table beside it", second(kimArrays(5, 4, 2), table("bag.weight", 5, 2)), "bag.weight", 1, nil},
		{"two channels of the labels' width", second(two, table("embedding.weight", 5, 2)), "", 2, nil},
		{"two channels and a table", second(two, table("embedding.weight", 5, 2), table("bag.weight", 5, 2)), "", 0,
			[]string{"static.weight", "embedding.weight", "bag.weight", WideKey}},
		// With a character layer of 2 filters, the convolutions read 2 + 2 components.
		{"a table beside a character layer", second(withChars(kimArrays(5, 4, 3)), table("bag.weight", 5, 3)), "bag.weight", 1, nil},
		// Not the wide table; the shapes of the two tables are refused later.
		{"a table of other rows", second(kimArrays(5, 4, 2), table("bag.weight", 6, 2)), "", 2, nil},
	} {
		l, err := DetectLayout(c.sd, "x.pt")
		if c.err != nil {
			if !errors.Is(err, ErrLayout) {
				t.Errorf("%s: %v, want ErrLayout", c.name, err)
			}
			for _, s := range c.err {
				if err != nil && !strings.Contains(err.Error(), s) {
					t.Errorf("%s: %v\ndoes not say %q", c.name, err, s)
				}
			}
			continue
		}
		if err != nil {
			t.Errorf("%s: %v", c.name, err)
			continue
		}
		if l.Wide != c.wide || len(l.Embeddings) != c.embeddings {
			t.Errorf("%s: layout %s, want wide %q and %d tables", c.name, l, c.wide, c.embeddings)
		}
	}
}

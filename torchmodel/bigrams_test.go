package torchmodel

import (
	"context"
	"errors"
	"math/rand/v2"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/torchmodel/npy"
)

// The bigram weights of the wide path are exported after the wide table as
// WideBigramKey [pairs, classes] and BigramKeysKey (int64 a·2³²+b, as
// cnn.BigramKey), and read back by Import: the same keys and table and
// bit-identical logits (texts with found pairs, PAD inside, and an empty
// one).
func TestBigramExportImportRoundTrip(t *testing.T) {
	m := wideModel(t)
	if err := m.SetBigrams(cnn.CollectBigrams([][]int32{{2, 3, 4, 5, 2}, {5, 5}})); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(7, 8))
	for i := range m.WideBigram {
		m.WideBigram[i] = float32(rng.NormFloat64())
	}
	arrays := StateDict(m)
	tab, keys := arrays[len(arrays)-2], arrays[len(arrays)-1]
	if tab.Name != WideBigramKey || !slices.Equal(tab.Shape, []int{5, 3}) || !slices.Equal(tab.Data, m.WideBigram) ||
		keys.Name != BigramKeysKey || !slices.Equal(keys.Shape, []int{5}) || keys.Ints[0] != 2<<32|3 {
		t.Fatalf("the state_dict ends with %s %v and %s %v %v", tab.Name, tab.Shape, keys.Name, keys.Shape, keys.Ints)
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
	if !back.Config.WideBigrams || !slices.Equal(back.Bigrams, m.Bigrams) || !slices.Equal(back.WideBigram, m.WideBigram) ||
		!strings.Contains(res.Layout.String(), "bigrams "+WideBigramKey) {
		t.Fatalf("imported bigrams %v (%d keys), layout %s", back.Config.WideBigrams, len(back.Bigrams), res.Layout)
	}
	for _, ids := range [][]int32{{2, 3, 4}, {2, 3, 4, 5, 1, 2}, {5, 0, 5, 5}, {}} {
		if got, want := back.Forward(ids).Logits, m.Forward(ids).Logits; !slices.Equal(got, want) {
			t.Errorf("ids %v: logits %v after the round trip, %v before", ids, got, want)
		}
	}
}

// Imported bigram keys move with the vocabulary when the padding and
// unknown tokens are reordered to ids 0 and 1, and are sorted again with
// their rows; a key holding the padding or unknown token, keys without
// their table or of another count, and bigram weights without the wide
// table are refused naming the key.
func TestBigramImportReorderAndRefusals(t *testing.T) {
	dir := t.TempDir()
	// Tokens: the, [PAD], cat, [UNK], sat: padding at 1, unknown at 3.
	vocab := writeFile(t, dir, "vocab.txt", []byte("the\n[PAD]\ncat\n[UNK]\nsat\n"))
	arrays := kimArrays(5, 4, 2)
	emb := slices.Clone(arrays[0].Data)
	copy(emb[4:8], emb[:4]) // the padding row (id 1) is zero
	clear(emb[:4])
	for i := range 4 {
		emb[i] = float32(i + 1) // "the" at id 0
	}
	arrays[0].Data = emb
	wide := npy.Array{Name: WideKey, Shape: []int{5, 2}, Data: []float32{1, 2, 0, 0, 3, 4, 5, 6, 7, 8}}
	// Pairs (the, cat), (cat, sat), (sat, the) in the file's ids.
	pairs := npy.Array{Name: BigramKeysKey, Shape: []int{3}, Ints: []int64{0<<32 | 2, 2<<32 | 4, 4<<32 | 0}}
	table := npy.Array{Name: WideBigramKey, Shape: []int{3, 2}, Data: []float32{10, 11, 20, 21, 30, 31}}
	base := Options{Vocab: vocab, PadID: -1, UnkID: -1, Labels: []string{"no", "yes"}, Tokenizer: corpus.TokenizerConfig{Lower: true}}
	with := func(name string, extra ...npy.Array) Options {
		o := base
		o.StateDict = writeNPZ(t, dir, name, append(slices.Clone(arrays), extra...))
		return o
	}
	res, err := Import(context.Background(), with("ok.npz", wide, table, pairs))
	if err != nil {
		t.Fatal(err)
	}
	m := res.Model
	// New ids: [PAD] 0, [UNK] 1, the 2, cat 3, sat 4: (2,3), (3,4), (4,2).
	want := []uint64{cnn.BigramKey(2, 3), cnn.BigramKey(3, 4), cnn.BigramKey(4, 2)}
	if !slices.Equal(m.Bigrams, want) {
		t.Fatalf("imported keys %x, want %x", m.Bigrams, want)
	}
	for i, p := range [][2]int32{{2, 3}, {3, 4}, {4, 2}} {
		if row := m.BigramRow(p[0], p[1]); !slices.Equal(row, table.Data[2*i:2*i+2]) {
			t.Errorf("pair %v: row %v, want the file's row %d %v", p, row, i, table.Data[2*i:2*i+2])
		}
	}
	padKey := pairs
	padKey.Ints = []int64{0<<32 | 1, 2<<32 | 4, 4<<32 | 0}
	short := table
	short.Shape, short.Data = []int{2, 2}, table.Data[:4]
	for _, c := range []struct {
		name string
		o    Options
		says []string
	}{
		{"padding in a key", with("pad.npz", wide, table, padKey), []string{"pad.npz", BigramKeysKey, "padding"}},
		{"no keys", with("nokeys.npz", wide, table), []string{"nokeys.npz", BigramKeysKey, "int64"}},
		{"count", with("count.npz", wide, short, pairs), []string{"count.npz", WideBigramKey, "[3, 2]"}},
		{"no wide table", with("nowide.npz", table, pairs), []string{"nowide.npz", WideKey}},
	} {
		_, err := Import(context.Background(), c.o)
		if !errors.Is(err, ErrLayout) {
			t.Errorf("%s: %v, want ErrLayout", c.name, err)
			continue
		}
		for _, s := range c.says {
			if !strings.Contains(err.Error(), s) {
				t.Errorf("%s: %v\ndoes not say %q", c.name, err, s)
			}
		}
	}
}

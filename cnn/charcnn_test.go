package cnn

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
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
		checked, skipped, charChecked := 0, 0, 0
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
				p0 := pr.p[i]
				pr.p[i] = float32(float64(p0) + h)
				up := pr.p[i]
				pu, patU := ref64(m, texts, labels, drop)
				pr.p[i] = float32(float64(p0) - h)
				dn := pr.p[i]
				pd, patD := ref64(m, texts, labels, drop)
				pr.p[i] = p0
				if !slices.Equal(patU, patD) {
					skipped++
					continue
				}
				num := (pu - pd) / (float64(up) - float64(dn))
				a := float64(pr.g[i])
				if math.Abs(a-num) > 1e-4*math.Max(math.Abs(a), math.Abs(num))+1e-6 {
					t.Errorf("seed %d %s[%d]: analytic %g, finite difference %g", seed, pr.name, i, a, num)
				}
				checked++
				if strings.HasPrefix(pr.name, "Char") && a != 0 {
					charChecked++
				}
			}
		}
		if skipped > checked/10 {
			t.Errorf("seed %d: %d coordinates skipped at kinks, %d checked: too many to trust the check", seed, skipped, checked)
		}
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

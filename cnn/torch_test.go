package cnn

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// requirePython skips (or, with CI=true, fails) when Debian's Python lacks a
// module.
func requirePython(t *testing.T, module string) {
	t.Helper()
	if err := exec.Command("/usr/bin/python3", "-c", "import "+module).Run(); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("/usr/bin/python3 cannot import %s (%v): install Debian's python3-%s", module, err, module)
		}
		t.Skipf("SKIPPED: /usr/bin/python3 cannot import %s (%v); install Debian's python3-%s to run this check", module, err, module)
	}
}

type torchIn struct {
	Vocab   int         `json:"vocab"`
	Dim     int         `json:"dim"`
	Filters int         `json:"filters"`
	Classes int         `json:"classes"`
	Widths  []int       `json:"widths"`
	Emb     []float32   `json:"emb"`
	ConvW   [][]float32 `json:"conv_w"`
	ConvB   [][]float32 `json:"conv_b"`
	OutW    []float32   `json:"out_w"`
	OutB    []float32   `json:"out_b"`
	Texts   [][]int32   `json:"texts"`
	Labels  []int       `json:"labels"`
	Drop    []float32   `json:"drop"`
	Masked  []bool      `json:"masked"`
	// The wide path with bigram weights (cases with Config.WideBigrams).
	Wide       []float32 `json:"wide,omitempty"`
	WideBigram []float32 `json:"wide_bigram,omitempty"`
	BigramKeys []uint64  `json:"bigram_keys,omitempty"`
}

type torchOut struct {
	Logits []float64   `json:"logits"`
	Loss   float64     `json:"loss"`
	Emb    []float64   `json:"emb"`
	ConvW  [][]float64 `json:"conv_w"`
	ConvB  [][]float64 `json:"conv_b"`
	OutW   []float64   `json:"out_w"`
	OutB   []float64   `json:"out_b"`
	Torch  string      `json:"torch"`
	Wide   []float64   `json:"wide"`
	Bigram []float64   `json:"wide_bigram"`
}

// Logits, loss and every gradient of a batch agree with PyTorch (Debian's
// python3-torch, float64, script cnn/testdata/torch_check.py) within 1e-4
// relative with an absolute floor of 1e-6, on texts of different lengths in
// one padded batch, including texts shorter than the widest filter, with
// dropout scales and a masked filter. Seeds 4 and 5 add the wide path with
// bigram weights (Config.WideBigrams), which the script computes as the
// prototype internal/recipesearch/pooling.py's wide2 variant does (a mean
// over the words and the pairs found), with PAD and UNK inside texts and
// an empty text (the unknown word's row); their tables' gradients agree
// too.
func TestTorchCrossCheck(t *testing.T) {
	requirePython(t, "torch")
	type tcase struct {
		m      *Model
		texts  [][]int32
		labels []int
		drop   []float32
	}
	var cases []tcase
	var ins []torchIn
	for seed := uint64(1); seed <= 5; seed++ {
		m := randModel(seed, 25, 10, []int{2, 3, 5}, 4, 3)
		m.Masked = make([]bool, m.Config.NumFilters())
		m.Masked[int(seed)] = true
		rng := rand.New(rand.NewPCG(seed, 5))
		texts := randTexts(rng, 9, 14, 25)
		texts[0], texts[1], texts[2] = []int32{7}, []int32{}, []int32{4, 9, 4}
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
		in := torchIn{Vocab: 25, Dim: 10, Filters: 4, Classes: 3, Widths: m.Config.Widths, Emb: m.Emb,
			OutW: m.OutW, OutB: m.OutB, Texts: texts, Labels: labels, Drop: drop, Masked: m.Masked}
		if seed >= 4 {
			withBigrams(t, m, texts[3:], seed, 1) // texts[2]'s pairs may lie outside the set
			in.Wide, in.WideBigram, in.BigramKeys = m.Wide, m.WideBigram, m.Bigrams
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
	cmd := exec.Command("/usr/bin/python3", "testdata/torch_check.py", dir)
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("torch_check.py: %v\n%s", err, out)
	}
	var refs []torchOut
	raw, err := os.ReadFile(filepath.Join(dir, "out.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(raw, &refs); err != nil || len(refs) != len(cases) {
		t.Fatalf("out.json: %v (%d cases)", err, len(refs))
	}
	for ci, c := range cases {
		seed, m, texts, labels, drop, ref := ci+1, c.m, c.texts, c.labels, c.drop, refs[ci]
		loss, tr := analytic(m, texts, labels, drop, 2)
		cmp := func(what string, got []float32, want []float64) {
			t.Helper()
			if len(got) != len(want) {
				t.Fatalf("seed %d %s: %d values, torch %d", seed, what, len(got), len(want))
			}
			for i := range want {
				if math.Abs(float64(got[i])-want[i]) > 1e-4*math.Abs(want[i])+1e-6 {
					t.Errorf("seed %d %s[%d]: %g, torch %g", seed, what, i, got[i], want[i])
				}
			}
		}
		if math.Abs(loss-ref.Loss) > 1e-4*math.Abs(ref.Loss) {
			t.Errorf("seed %d: loss %g, torch %g", seed, loss, ref.Loss)
		}
		nf := m.Config.NumFilters()
		logits := make([]float32, len(texts)*3)
		h := make([]float32, nf)
		for i := range texts {
			m.pool(tr.pre[i*nf:(i+1)*nf], h)
			for g := range h {
				if drop != nil {
					h[g] *= drop[i*nf+g]
				}
			}
			m.Head(h, logits[i*3:(i+1)*3])
			m.addWide(texts[i], logits[i*3:(i+1)*3])
		}
		cmp("logits", logits, ref.Logits)
		cmp("grad Emb", tr.gEmb, ref.Emb)
		for b := range m.Convs {
			cmp("grad W", tr.th[0].w[tr.wOff[b]:tr.wOff[b]+len(m.Convs[b].W)], ref.ConvW[b])
			cmp("grad B", tr.th[0].b[b*4:(b+1)*4], ref.ConvB[b])
		}
		cmp("grad OutW", tr.th[0].ow, ref.OutW)
		cmp("grad OutB", tr.th[0].ob, ref.OutB)
		if m.Config.WideBigrams {
			if len(m.Bigrams) < 5 {
				t.Fatalf("seed %d: %d bigrams: too few to check their table", seed, len(m.Bigrams))
			}
			cmp("grad Wide", tr.gWide, ref.Wide)
			cmp("grad WideBigram", tr.gBig, ref.Bigram)
		}
		if ci == 0 {
			t.Logf("compared with torch %s", ref.Torch)
		}
	}
}

package cnn

import (
	"bytes"
	"context"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"

	"telltale/corpus"
	"telltale/internal/testref"
	"telltale/linear"
)

// The exact McNemar p-value against SciPy's exact binomial test (Debian's
// python3-scipy, scipy.stats.binomtest(k, n, 0.5), two-sided), live: for
// p = 1/2 the two-sided binomial test is the exact McNemar test.
func TestMcNemarAgainstSciPy(t *testing.T) {
	testref.SequentialSkipInRace(t, "McNemarExact against SciPy")
	testref.RequirePython(t, "scipy")
	pairs := [][2]int{{0, 0}, {0, 1}, {1, 0}, {3, 3}, {2, 9}, {9, 2}, {10, 25}, {40, 41}, {0, 12}, {150, 190}, {5, 60}}
	js, _ := json.Marshal(pairs)
	script := `
import json, sys
from scipy.stats import binomtest
out = []
for a, b in json.load(sys.stdin):
    out.append(1.0 if a + b == 0 else binomtest(min(a, b), a + b, 0.5).pvalue)
print(json.dumps(out))
`
	cmd := exec.Command(testref.Python, "-c", script)
	cmd.Stdin = bytes.NewReader(js)
	raw, err := cmd.Output()
	if err != nil {
		t.Fatalf("scipy: %v", err)
	}
	var want []float64
	if err := json.Unmarshal(raw, &want); err != nil {
		t.Fatal(err)
	}
	for i, p := range pairs {
		// Predictions with p[0] texts only A gets right, p[1] only B, and
		// 7 both get right and 4 both get wrong.
		var gold, a, b []int
		add := func(n, g, pa, pb int) {
			for range n {
				gold, a, b = append(gold, g), append(a, pa), append(b, pb)
			}
		}
		add(p[0], 1, 1, 0)
		add(p[1], 0, 2, 0)
		add(7, 2, 2, 2)
		add(4, 1, 0, 2)
		got := McNemarExact(gold, a, b)
		if got.OnlyA != p[0] || got.OnlyB != p[1] {
			t.Fatalf("pair %v: counted %d and %d", p, got.OnlyA, got.OnlyB)
		}
		if !testref.Close(got.P, want[i], 1e-12, 1e-9) {
			t.Errorf("only A %d, only B %d: p = %.12g, SciPy %.12g", p[0], p[1], got.P, want[i])
		}
	}
}

// tinyBaseline fits a linear baseline for m's labels on a few texts.
func tinyBaseline(t testing.TB, labels []string) *linear.Model {
	docs := [][]string{{"ferry", "late"}, {"ferry", "kind"}, {"boat", "late"}, {"crew", "kind"}, {"late"}, {"kind", "crew"}}
	y := make([]int, len(docs))
	for i := range y {
		y[i] = i % len(labels)
	}
	b, err := linear.Fit(context.Background(), linear.Split{Docs: docs, Labels: y}, linear.Split{}, labels, linear.Config{}, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// A model carrying a baseline saves and loads with it (format version 2);
// the baseline gives the same probabilities after the round trip.
func TestSaveLoadWithBaseline(t *testing.T) {
	m, _ := savedModel(t)
	m.Baseline = tinyBaseline(t, m.Labels)
	path := filepath.Join(t.TempDir(), "m.tt")
	if err := m.Save(path); err != nil {
		t.Fatal(err)
	}
	got, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	got.Info.Version = "" // recorded by Save (TestSaveLoad checks it)
	if !reflect.DeepEqual(got, m) {
		t.Fatal("loaded model differs from the saved one")
	}
	docs := [][]string{{"late", "ferry"}, {"unseen"}}
	if a, b := m.Baseline.Probabilities(docs), got.Baseline.Probabilities(docs); !reflect.DeepEqual(a, b) {
		t.Errorf("baseline probabilities %v after loading, %v before", b, a)
	}
	// Damage inside the baseline section is caught by the checksum; a
	// truncated one is named as such.
	data, _ := os.ReadFile(path)
	for _, n := range []int{len(data) - 5, len(data) - 13} {
		if _, err := decode(data[:n], true); err == nil || !strings.Contains(err.Error(), "incomplete") {
			t.Errorf("cut to %d of %d bytes: error %v", n, len(data), err)
		}
	}
	bad := bytes.Clone(data)
	bad[len(bad)-12] ^= 1
	if _, err := decode(bad, true); err == nil || !strings.Contains(err.Error(), "corrupt") {
		t.Errorf("baseline byte flipped: error %v", err)
	}
}

// encodeV1 writes m in format version 1 (no baseline section), as files
// written before the baseline existed.
func encodeV1(t *testing.T, m *Model) []byte {
	m.Baseline = nil
	var buf bytes.Buffer
	if err := m.encode(&buf); err != nil {
		t.Fatal(err)
	}
	b := buf.Bytes()
	// Version 2 with no baseline ends with a zero uint64 before the
	// checksum; version 1 has neither.
	if n := binary.LittleEndian.Uint64(b[len(b)-12:]); n != 0 {
		t.Fatalf("baseline count %d, want 0", n)
	}
	v1 := append(bytes.Clone(b[:len(b)-12]), 0, 0, 0, 0)
	binary.LittleEndian.PutUint32(v1[8:], 1)
	return reseal(v1)
}

func TestLoadVersion1(t *testing.T) {
	m, _ := savedModel(t)
	got, err := decode(encodeV1(t, m), true)
	if err != nil {
		t.Fatalf("a version 1 file: %v", err)
	}
	got.Info.Version = "" // recorded by encode
	if got.Baseline != nil || !reflect.DeepEqual(got, m) {
		t.Error("a version 1 file loads differently from the model written")
	}
}

// With balanced class weights the batch gradient is Σ_c w_c·(n_c/n) times
// the mean gradient over the class-c texts alone (an identity of the
// weighted mean), checked per parameter; the weighted loss likewise.
func TestClassWeightsGradient(t *testing.T) {
	m := randModel(4, 12, 4, []int{2, 3}, 3, 3)
	rng := rand.New(rand.NewPCG(4, 5))
	texts := randTexts(rng, 9, 8, 12)
	labels := []int{0, 1, 2, 0, 0, 1, 0, 0, 2}
	w := []float32{0.5, 2, 1.25}
	tr := newTrainer(m, TrainConfig{Threads: 2})
	tr.classW = w
	tr.texts, tr.labels = texts, labels
	loss := tr.forwardBackward()
	tr.close()
	got := gradParams(m, tr)
	want := make([][]float64, len(got))
	for i := range want {
		want[i] = make([]float64, len(got[i].g))
	}
	var wantLoss float64
	for c := range 3 {
		var sub [][]int32
		var subL []int
		for i, y := range labels {
			if y == c {
				sub, subL = append(sub, texts[i]), append(subL, y)
			}
		}
		l, trc := analytic(m, sub, subL, nil, 1)
		k := float64(w[c]) * float64(len(sub)) / float64(len(texts))
		wantLoss += k * l
		for i, p := range gradParams(m, trc) {
			for j, g := range p.g {
				want[i][j] += k * float64(g)
			}
		}
	}
	if !testref.Close(loss, wantLoss, 1e-6, 1e-5) {
		t.Errorf("weighted loss %g, want %g", loss, wantLoss)
	}
	for i, p := range got {
		for j, g := range p.g {
			if !testref.Close(float64(g), want[i][j], 1e-6, 1e-4) {
				t.Errorf("%s[%d]: weighted gradient %g, want %g", p.name, j, g, want[i][j])
			}
		}
	}
}

// Word dropout and token dropout train the UNK vector (without them, a
// vocabulary of every training word leaves it at its random start) and
// never change the training data.
func TestWordDropoutTrainsUNK(t *testing.T) {
	for _, wd := range [][2]float64{{0, 0}, {0.25, 0}, {0, 0.25}} {
		a, q := wd[0], wd[1]
		m := randModel(1, 30, 8, []int{2, 3}, 4, 2)
		unk0 := slices.Clone(m.Row(corpus.UNK))
		train := toyData(1, 300, 30)
		before := make([][]int32, len(train.IDs))
		for i, ids := range train.IDs {
			before[i] = slices.Clone(ids)
		}
		if _, err := Train(context.Background(), m, train, Data{}, TrainConfig{Epochs: 2, Batch: 10, Seed: 3, WordDropout: a, TokenDropout: q}, nil); err != nil {
			t.Fatal(err)
		}
		changed := !slices.Equal(unk0, m.Row(corpus.UNK))
		if changed != (a > 0 || q > 0) {
			t.Errorf("word dropout %g, token dropout %g: UNK vector changed %v", a, q, changed)
		}
		for i := range before {
			if !slices.Equal(before[i], train.IDs[i]) {
				t.Fatalf("word dropout %g, token dropout %g changed training text %d", a, q, i)
			}
		}
	}
	if _, err := (TrainConfig{WordDropout: -1}).WithDefaults(); err == nil {
		t.Error("negative word dropout accepted")
	}
	if _, err := (TrainConfig{TokenDropout: 1}).WithDefaults(); err == nil {
		t.Error("token dropout 1 accepted")
	}
	if _, err := (TrainConfig{ClassWeight: "even"}).WithDefaults(); err == nil {
		t.Error("unknown class weight accepted")
	}
}

// ferryTexts is a handful of labeled lines for pipeline tests (their
// content plays no part in any check of the model's quality).
func ferryTexts(n int) *corpus.Dataset {
	words := [][]string{{"ferry", "late", "again", "refund"}, {"lovely", "crew", "thanks", "kind"}}
	labels := []string{"complaint", "praise"}
	d := &corpus.Dataset{Labels: labels}
	rng := rand.New(rand.NewPCG(1, 2))
	for i := range n {
		c := i % 2
		var b strings.Builder
		for range 6 {
			b.WriteString(words[c][rng.IntN(4)] + " ")
		}
		b.WriteString(fmt.Sprintf("w%d", rng.IntN(50)))
		d.Examples = append(d.Examples, corpus.Example{Text: b.String(), Label: labels[c]})
	}
	return d
}

// The embedding dimension comes from the vectors file when the recipe's Dim
// is 0 or DimFromVectors is set; otherwise a mismatch is an error naming
// the fix. TrainText fits the baseline when asked and CompareBaseline
// compares the two.
func TestTrainTextVectorsDimAndBaseline(t *testing.T) {
	path := filepath.Join(t.TempDir(), "vec.txt")
	if err := os.WriteFile(path, []byte("ferry 1 2 3 4 5 6\nkind 6 5 4 3 2 1\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	train, dev := ferryTexts(60), ferryTexts(20)
	base := linear.Config{Cs: []float64{1, 10}}
	for _, tc := range []struct {
		dim      int
		fromFile bool
		wantDim  int
		wantErr  string
	}{{0, false, 6, ""}, {16, true, 6, ""}, {16, false, 0, "--dim 6"}} {
		r := Recipe{Tokenizer: corpus.TokenizerConfig{Lower: true}, Model: Config{Dim: tc.dim, Widths: []int{2}, Filters: 3},
			Train: TrainConfig{Epochs: 2, Seed: 1, Threads: 1}, VectorsPath: path, DimFromVectors: tc.fromFile, Baseline: &base}
		var phases []string
		tr, err := TrainText(context.Background(), train, dev, r, func(p Progress) { phases = append(phases, p.Phase) })
		if tc.wantErr != "" {
			if err == nil || !strings.Contains(err.Error(), tc.wantErr) {
				t.Errorf("dim %d: error %v, want one naming %q", tc.dim, err, tc.wantErr)
			}
			continue
		}
		if err != nil {
			t.Fatal(err)
		}
		if tr.Model.Config.Dim != tc.wantDim || tr.VectorsFound != 2 {
			t.Errorf("dim %d from file %v: model dim %d, %d vectors found", tc.dim, tc.fromFile, tr.Model.Config.Dim, tr.VectorsFound)
		}
		if tr.Model.Baseline == nil || !slices.Contains(phases, PhaseBaseline) || len(tr.Model.Baseline.Dev) != 2 {
			t.Fatalf("no baseline fitted with the recipe asking for one (phases %v)", phases)
		}
		cmp, err := CompareBaseline(tr.Model, dev, 1)
		if err != nil {
			t.Fatal(err)
		}
		mt, _, _ := Evaluate(tr.Model, mustEncode(t, tr.Model, dev), 1)
		if cmp.CNN.Accuracy != mt.Accuracy || cmp.Baseline.N != 20 || math.IsNaN(cmp.McNemar.P) {
			t.Errorf("comparison %+v disagrees with Evaluate (accuracy %g)", cmp, mt.Accuracy)
		}
	}
}

func mustEncode(t *testing.T, m *Model, ds *corpus.Dataset) Data {
	t.Helper()
	enc, err := m.Encoder()
	if err != nil {
		t.Fatal(err)
	}
	d, err := EncodeDataset(enc, ds, m.Labels, 1)
	if err != nil {
		t.Fatal(err)
	}
	return d
}

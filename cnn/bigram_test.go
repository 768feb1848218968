package cnn

import (
	"bytes"
	"context"
	"encoding/binary"
	"hash/crc32"
	"math"
	"math/rand/v2"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"
)

// withBigrams turns the wide path of m on (withWide) and gives it the
// bigram set of texts with a table of random values in ±scale.
func withBigrams(t testing.TB, m *Model, texts [][]int32, seed uint64, scale float64) *Model {
	t.Helper()
	m = withWide(m, seed, scale)
	if err := m.SetBigrams(CollectBigrams(texts)); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(seed, 17))
	for i := range m.WideBigram {
		m.WideBigram[i] = float32((2*rng.Float64() - 1) * scale)
	}
	return m
}

// CollectBigrams on a worked example: the pairs of adjacent ids, neither
// PAD (0) nor UNK (1), sorted by first then second id, each once.
func TestCollectBigramsWorkedExample(t *testing.T) {
	texts := [][]int32{{5, 2, 5, 2, 1, 3}, {0, 4, 4, 0}, {7}, {3, 2, 0}}
	// Pairs: (5,2) (2,5) (5,2) [2,1 no] [1,3 no]; [0,4 no] (4,4) [4,0 no]; (3,2) [2,0 no].
	want := []uint64{2<<32 | 5, 3<<32 | 2, 4<<32 | 4, 5<<32 | 2}
	if got := CollectBigrams(texts); !slices.Equal(got, want) {
		t.Errorf("CollectBigrams = %v, want %v", got, want)
	}
	for _, k := range want {
		if a, b := BigramIDs(k); BigramKey(a, b) != k {
			t.Errorf("BigramIDs(%#x) = %d, %d: not BigramKey's inverse", k, a, b)
		}
	}
}

// Forward's wide term with bigram weights is the mean over the words and
// the pairs found in the set, written out from its definition (wide64,
// which scans the keys rather than using the index); the fast path
// reproduces Forward; BigramRow finds exactly the set's pairs.
func TestWideBigramForwardMatchesDefinition(t *testing.T) {
	for seed := uint64(1); seed <= 3; seed++ {
		rng := rand.New(rand.NewPCG(seed, 5))
		texts := randTexts(rng, 30, 40, 40)
		m := withBigrams(t, randModel(seed, 40, 6, []int{2, 3}, 4, 3), texts[:15], seed, 2)
		texts = append(texts, []int32{0, 0, 0}, []int32{0, 9, 0}, []int32{1, 1})
		plain := m.Clone()
		plain.Config.Wide, plain.Config.WideBigrams, plain.Wide, plain.Bigrams, plain.WideBigram = false, false, nil, nil, nil
		outs := make([]Output, len(texts))
		m.NewPredictor().Run(texts, outs)
		for i, ids := range texts {
			want := m.Forward(ids)
			compareOutput(t, m, ids, outs[i], want)
			base := plain.Forward(ids)
			for c := range want.Logits {
				got := float64(want.Logits[c]) - float64(base.Logits[c])
				if w := wide64(m, ids, c); !close32(float32(got), float32(w), 1e-5, 1e-6) {
					t.Fatalf("seed %d text %v class %d: wide term %g, definition %g", seed, ids, c, got, w)
				}
			}
		}
		// Texts at and past the longest whose pairs the wide term looks up
		// once: float32 sums of hundreds of terms, held to the bound of
		// recursive summation (Higham 2002, "Accuracy and Stability of
		// Numerical Algorithms", section 4.2), (k+1)·2⁻²⁴ times the sum of
		// the k terms' magnitudes, one more for the scaling.
		var long []int32
		for len(long) < widePairsOnStack+9 {
			long = append(long, texts[len(long)%15]...)
		}
		for _, ids := range [][]int32{long[:widePairsOnStack], long} {
			z := make([]float32, m.Config.Classes)
			m.AddWide(ids, z)
			for c := range z {
				k, mag := 0, 0.0
				for t, id := range ids {
					if id != 0 {
						k++
						mag += math.Abs(float64(m.Wide[int(id)*m.Config.Classes+c]))
					}
					if t+1 < len(ids) {
						if r, in := slices.BinarySearch(m.Bigrams, BigramKey(id, ids[t+1])); in {
							k++
							mag += math.Abs(float64(m.WideBigram[r*m.Config.Classes+c]))
						}
					}
				}
				w := wide64(m, ids, c)
				if bound := float64(k+2) * 0x1p-24 * mag / float64(k); math.Abs(float64(z[c])-w) > bound {
					t.Fatalf("seed %d text of %d ids class %d: wide term %g, definition %g, beyond the bound %g", seed, len(ids), c, z[c], w, bound)
				}
			}
		}
		for a := int32(0); a < 40; a++ {
			for b := int32(0); b < 40; b++ {
				_, in := slices.BinarySearch(m.Bigrams, BigramKey(a, b))
				if row := m.BigramRow(a, b); (row != nil) != in {
					t.Fatalf("seed %d: BigramRow(%d, %d) found %v, in the set %v", seed, a, b, row != nil, in)
				}
			}
		}
	}
}

// Training with bigram weights learns the toy task, trains the bigram
// table, keeps it through Clone, and is deterministic for a seed; a step
// allocates nothing once its buffers have grown.
func TestWideBigramTrains(t *testing.T) {
	run := func() *Model {
		m := withWide(randModel(1, 30, 8, []int{2, 3}, 4, 2), 1, 0)
		m.Config.Dropout = 0.3
		train, dev := toyData(1, 300, 30), toyData(2, 100, 30)
		if err := m.SetBigrams(CollectBigrams(train.IDs)); err != nil {
			t.Fatal(err)
		}
		if _, err := Train(context.Background(), m, train, dev, TrainConfig{Epochs: 12, Batch: 10, Seed: 3, Threads: 2,
			Patience: 6, WideLR: 10, TokenDropout: 0.25}, nil); err != nil {
			t.Fatal(err)
		}
		mt, _, err := Evaluate(m, dev, 1)
		if err != nil {
			t.Fatal(err)
		}
		if mt.Accuracy < 0.95 {
			t.Errorf("wide bigrams: dev accuracy %.3f, want ≥ 0.95 on a task one word decides", mt.Accuracy)
		}
		return m
	}
	a, b := run(), run()
	if len(a.Bigrams) == 0 || !slices.ContainsFunc(a.WideBigram, func(v float32) bool { return v != 0 }) {
		t.Errorf("%d bigrams, their table untrained", len(a.Bigrams))
	}
	if !slices.Equal(a.WideBigram, b.WideBigram) || !slices.Equal(a.Wide, b.Wide) {
		t.Error("two runs with the same seed differ")
	}
	if c := a.Clone(); !slices.Equal(c.WideBigram, a.WideBigram) || &c.WideBigram[0] == &a.WideBigram[0] {
		t.Error("Clone does not deep-copy the bigram table")
	}

	d := toyData(9, 100, 40)
	m := withWide(randModel(6, 40, 8, []int{2, 3}, 4, 3), 6, 0)
	if err := m.SetBigrams(CollectBigrams(d.IDs)); err != nil {
		t.Fatal(err)
	}
	tc, err := TrainConfig{Seed: 1, Threads: 2, TokenDropout: 0.25, WideLR: 10}.WithDefaults()
	if err != nil {
		t.Fatal(err)
	}
	tr := newTrainer(m, tc)
	defer tr.close()
	tr.prepare(d)
	batches := makeBatches(rand.New(rand.NewPCG(1, 1)), d.IDs, 10, make([]int, d.Len()), nil)
	for _, b := range batches {
		tr.step(d, b)
	}
	i := 0
	if n := testing.AllocsPerRun(20, func() { tr.step(d, batches[i%len(batches)]); i++ }); n != 0 {
		t.Errorf("%v allocations per training step with bigram weights, want 0", n)
	}
}

// Bigram weights need the wide path; a table of the wrong shape is
// refused by training; merging refuses the model.
func TestWideBigramRefusals(t *testing.T) {
	m := randModel(2, 20, 4, []int{2}, 2, 2)
	if err := m.SetBigrams(nil); err == nil {
		t.Error("SetBigrams accepted a model without the wide path")
	}
	cfg := m.Config
	cfg.WideBigrams = true
	if err := cfg.Validate(); err == nil || !strings.Contains(err.Error(), "wide") {
		t.Errorf("Validate: error %v for bigram weights without the wide path", err)
	}
	w := withWide(m, 2, 1)
	for _, keys := range [][]uint64{{BigramKey(3, 4), BigramKey(2, 5)}, {BigramKey(1, 4)}, {BigramKey(3, 20)}, {BigramKey(3, 4), BigramKey(3, 4)}} {
		if err := w.Clone().SetBigrams(keys); err == nil {
			t.Errorf("SetBigrams accepted %v (unsorted, UNK, outside the vocabulary or repeated)", keys)
		}
	}
	b := withBigrams(t, w, [][]int32{{2, 3, 4}}, 2, 1)
	b.WideBigram = b.WideBigram[1:]
	if _, err := Train(context.Background(), b, toyData(1, 20, 20), Data{}, TrainConfig{Epochs: 1}, nil); err == nil {
		t.Error("Train accepted a bigram table of the wrong shape")
	}
	if _, err := Merge([]*Model{w, w.Clone()}); err == nil {
		t.Error("Merge accepted models with bigram weights")
	}
}

// A model with bigram weights saves as format version 5 and loads back
// equal, keys and table included, every logit bit for bit the same; a
// damaged key section or a header claiming bigram weights in an older
// version is refused naming the damage.
func TestWideBigramSaveLoadRoundTrip(t *testing.T) {
	m0, _ := savedModel(t)
	texts := randTexts(rand.New(rand.NewPCG(4, 4)), 20, 20, m0.Config.VocabSize)
	m := withBigrams(t, m0, texts, 4, 1.5)
	m.Baseline = tinyBaseline(t, m.Labels)
	path := filepath.Join(t.TempDir(), "bigram.tt")
	if err := m.Save(path); err != nil {
		t.Fatal(err)
	}
	got, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := m.encode(&buf); err != nil {
		t.Fatal(err)
	}
	data := buf.Bytes()
	if v := binary.LittleEndian.Uint32(data[8:]); v != 5 {
		t.Errorf("a model with bigram weights is written as version %d, want 5", v)
	}
	got.Info.Version = ""
	if !reflect.DeepEqual(got, m) {
		t.Fatal("the loaded model differs from the saved one")
	}
	for _, ids := range texts {
		a, b := m.Forward(ids).Logits, got.Forward(ids).Logits
		for c := range a {
			if math.Float32bits(a[c]) != math.Float32bits(b[c]) {
				t.Fatalf("text %v: logits %v after loading, %v before", ids, b, a)
			}
		}
	}
	f, err := splitFile(data)
	if err != nil {
		t.Fatal(err)
	}
	keys := slices.Clone(f.bigrams)
	copy(keys[:8], f.bigrams[8:16]) // the first key repeats the second
	for name, c := range map[string]struct {
		data []byte
		want string
	}{
		"repeated key": {rebuildBigramFile(f, 5, keys), "sorted and distinct"},
		"version 4":    {rebuildBigramFile(f, 4, nil), "damaged"},
	} {
		if _, err := decode(c.data, true); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one saying %q", name, err, c.want)
		}
	}
}

// rebuildBigramFile writes a model file of the given version from the
// parts of f with the bigram keys keys (none for a version below 5) and a
// fresh checksum.
func rebuildBigramFile(f fileParts, version uint32, keys []byte) []byte {
	var b []byte
	b = append(b, fileMagic...)
	b = binary.LittleEndian.AppendUint32(b, version)
	b = binary.LittleEndian.AppendUint64(b, uint64(len(f.header)))
	b = append(b, f.header...)
	b = binary.LittleEndian.AppendUint64(b, uint64(len(f.weights)/4))
	b = append(b, f.weights...)
	if version >= 5 {
		b = binary.LittleEndian.AppendUint64(b, uint64(len(keys)/8))
		b = append(b, keys...)
	}
	b = binary.LittleEndian.AppendUint64(b, uint64(len(f.baseline)/8))
	b = append(b, f.baseline...)
	return binary.LittleEndian.AppendUint32(b, crc32.Checksum(b, crcTable))
}

// Bigram dropout is the prototype's (internal/recipesearch/pooling.py,
// variant wide2): a training step finds a text's pairs in the text as it
// was before token dropout and leaves each out by a draw of its own with
// the TokenDropout probability, so about 1 − p of the pairs are kept
// (within four binomial standard deviations over the batches), pairs one
// of whose words became UNK among them, and every kept pair is a pair of
// adjacent ids of the text.
func TestBigramDropoutAsPrototype(t *testing.T) {
	d := toyData(5, 400, 30)
	m := withWide(randModel(5, 30, 6, []int{2}, 2, 2), 5, 0)
	if err := m.SetBigrams(CollectBigrams(d.IDs)); err != nil {
		t.Fatal(err)
	}
	const p = 0.25
	tc, err := TrainConfig{Seed: 2, Threads: 1, TokenDropout: p, Batch: 40}.WithDefaults()
	if err != nil {
		t.Fatal(err)
	}
	tr := newTrainer(m, tc)
	defer tr.close()
	tr.prepare(d)
	total, kept, withUNK := 0, 0, 0
	for b := 0; b+40 <= d.Len(); b += 40 {
		idx := make([]int, 40)
		for i := range idx {
			idx[i] = b + i
		}
		tr.step(d, idx)
		for i, j := range idx {
			orig := d.IDs[j]
			total += len(orig) - 1
			for _, li := range tr.textPairs(i) {
				a, c := BigramIDs(m.Bigrams[tr.bs.rows[li]])
				at := -1
				for s := 0; s+1 < len(orig); s++ {
					if orig[s] == a && orig[s+1] == c {
						at = s
						break
					}
				}
				if at < 0 {
					t.Fatalf("text %v: kept pair (%d, %d) is not in it", orig, a, c)
				}
				kept++
			}
			for s := 0; s+1 < len(orig); s++ {
				if x := tr.texts[i]; x[s] == 1 || x[s+1] == 1 {
					// a word of the pair was dropped: count the pair if kept
					for _, li := range tr.textPairs(i) {
						if m.Bigrams[tr.bs.rows[li]] == BigramKey(orig[s], orig[s+1]) {
							withUNK++
							break
						}
					}
				}
			}
		}
	}
	want, sd := (1-p)*float64(total), math.Sqrt(p*(1-p)*float64(total))
	if math.Abs(float64(kept)-want) > 4*sd || withUNK == 0 {
		t.Errorf("%d of %d pairs kept (want %.0f ± %.0f), %d of them with a word dropped to UNK", kept, total, want, 4*sd, withUNK)
	}
}

// Training on pairs looked up once per text (prepare) trains the same
// weights, bit for bit, as looking every pair up in the model's bigram set
// (Model.BigramIndex, the set's definition) at each step: the same rows in
// the same order, so the same bigram-dropout draws. The texts carry PAD,
// UNK and pairs outside the set (the set is that of half the split), and
// word dropout replaces words by UNK after the pairs are found. A third run
// whose prepared rows are emptied must train otherwise: the steps do read
// the prepared rows.
func TestPreparedPairsTrainAsLookedUp(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 12))
	d := Data{IDs: randTexts(rng, 120, 14, 25), Labels: make([]int, 120)}
	for i := range d.Labels {
		d.Labels[i] = rng.IntN(3)
	}
	base := withWide(randModel(12, 25, 6, []int{2, 3}, 3, 3), 12, 0.1)
	if err := base.SetBigrams(CollectBigrams(d.IDs[:60])); err != nil {
		t.Fatal(err)
	}
	tc, err := TrainConfig{Seed: 4, Threads: 2, TokenDropout: 0.3, WordDropout: 0.5, Batch: 16, WideLR: 10}.WithDefaults()
	if err != nil {
		t.Fatal(err)
	}
	run := func(prepared, emptied bool) (*Model, []float64) {
		m := base.Clone()
		tr := newTrainer(m, tc)
		defer tr.close()
		tr.prepare(d)
		if !prepared {
			tr.prep = pairIndex{}
		}
		if emptied {
			for i := range tr.prep.rows {
				tr.prep.rows[i] = nil
			}
		}
		var losses []float64
		batches := makeBatches(rand.New(rand.NewPCG(2, 2)), d.IDs, 16, make([]int, d.Len()), nil)
		for epoch := 0; epoch < 3; epoch++ {
			for _, b := range batches {
				rows := tr.prep.batch(d.IDs, b, nil)
				if prepared != (len(rows) == len(b)) {
					t.Fatalf("prepared %v: %d prepared texts for a batch of %d", prepared, len(rows), len(b))
				}
				for k, i := range b {
					if !prepared || emptied {
						break
					}
					var want []int32
					for s := 0; s+1 < len(d.IDs[i]); s++ {
						if r := m.BigramIndex(d.IDs[i][s], d.IDs[i][s+1]); r >= 0 {
							want = append(want, int32(r))
						}
					}
					if !slices.Equal(rows[k], want) {
						t.Fatalf("text %v: prepared rows %v, the set has %v", d.IDs[i], rows[k], want)
					}
				}
				losses = append(losses, tr.step(d, b))
			}
		}
		return m, losses
	}
	a, la := run(true, false)
	b, lb := run(false, false)
	if !slices.Equal(la, lb) {
		t.Errorf("losses differ:\n prepared %v\n looked up %v", la, lb)
	}
	if _, le := run(true, true); slices.Equal(le, lb) {
		t.Error("emptying the prepared rows changed no loss: the steps do not read them")
	}
	same := func(name string, x, y []float32) {
		for i := range x {
			if math.Float32bits(x[i]) != math.Float32bits(y[i]) {
				t.Errorf("%s[%d]: %g prepared, %g looked up", name, i, x[i], y[i])
				return
			}
		}
	}
	same("Emb", a.Emb, b.Emb)
	same("Wide", a.Wide, b.Wide)
	same("WideBigram", a.WideBigram, b.WideBigram)
	same("OutW", a.OutW, b.OutW)
	for i := range a.Convs {
		same("Conv.W", a.Convs[i].W, b.Convs[i].W)
	}
	if slices.Equal(a.WideBigram, base.WideBigram) {
		t.Error("the bigram table did not train")
	}
}

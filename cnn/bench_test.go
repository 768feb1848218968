package cnn

import (
	"context"
	"math/rand/v2"
	"testing"
)

// benchCorpus is a fixed synthetic corpus: n texts of exactly 77 tokens drawn
// from a Zipf distribution (s = 1.1) over a vocabulary of vocab words, two
// classes.
func benchCorpus(n, vocab int) Data {
	rng := rand.New(rand.NewPCG(77, 77))
	z := rand.NewZipf(rng, 1.1, 1, uint64(vocab-3))
	d := Data{IDs: make([][]int32, n), Labels: make([]int, n)}
	for i := range d.IDs {
		t := make([]int32, 77)
		for j := range t {
			t[j] = int32(2 + z.Uint64())
		}
		d.IDs[i] = t
		d.Labels[i] = i % 2
	}
	return d
}

// benchModel is the default recipe's model (DefaultRecipe: 128-d
// embeddings, widths 3, 4, 5 with 100 feature maps each, dropout 0.3, word
// and bigram weights beside the filters, its bigrams those of d) over a
// vocabulary of vocab words and two labels.
func benchModel(b *testing.B, d Data, vocab int) *Model {
	return benchModelOf(b, DefaultRecipe().Model, d, vocab)
}

// benchModelOf is benchModel with the model configuration cfg.
func benchModelOf(b *testing.B, cfg Config, d Data, vocab int) *Model {
	cfg.VocabSize, cfg.Classes = vocab, 2
	bigrams := cfg.WideBigrams
	cfg.WideBigrams = false // SetBigrams turns it on with the set
	m, err := New(cfg, nil, []string{"a", "b"}, 1)
	if err != nil {
		b.Fatal(err)
	}
	if bigrams {
		if err := m.SetBigrams(CollectBigrams(d.IDs)); err != nil {
			b.Fatal(err)
		}
	}
	return m
}

// BenchmarkTrainStep is one training step on a batch of 50 texts of 77
// tokens with the default recipe (DefaultRecipe: Adam, and its word dropout
// and class weights when it has them); it reports training examples per
// second.
func BenchmarkTrainStep(b *testing.B) {
	benchTrainStep(b, DefaultRecipe().Model)
}

// BenchmarkTrainStepKim is BenchmarkTrainStep with Kim's model alone (train
// --wide=false: no word or bigram weights), the cost the default recipe's
// weights beside the filters are measured against.
func BenchmarkTrainStepKim(b *testing.B) {
	benchTrainStep(b, kimModel())
}

// kimModel is the default recipe's model without the word and bigram
// weights (train --wide=false).
func kimModel() Config {
	cfg := DefaultRecipe().Model
	cfg.Wide, cfg.WideBigrams = false, false
	return cfg
}

// BenchmarkTrainStepWideSparse is BenchmarkTrainStep with the word and
// bigram weights trained by the row-sparse Adam (TrainConfig.WideSparse):
// the step updates the batch's rows of the two tables, not all of them.
func BenchmarkTrainStepWideSparse(b *testing.B) {
	tc := DefaultRecipe().Train
	tc.WideSparse = true
	benchTrainStepWith(b, DefaultRecipe().Model, tc)
}

func benchTrainStep(b *testing.B, cfg Config) {
	benchTrainStepWith(b, cfg, DefaultRecipe().Train)
}

// benchTrainStepWith is one training step of the model cfg with the
// training settings tc on the benchmark corpus.
func benchTrainStepWith(b *testing.B, cfg Config, tc TrainConfig) {
	tr, d, batches := benchTrainer(b, cfg, tc)
	defer tr.close()
	for _, bt := range batches { // warm up the scratch buffers
		tr.step(d, bt)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		tr.step(d, batches[i%len(batches)])
	}
	b.ReportMetric(float64(50*b.N)/b.Elapsed().Seconds(), "examples/s")
}

// benchTrainer is a trainer of the model cfg with the training settings tc
// on the benchmark corpus, prepared, with its batches of 50; the caller
// closes it.
func benchTrainer(b *testing.B, cfg Config, tc TrainConfig) (*trainer, Data, [][]int) {
	const vocab = 20000
	d := benchCorpus(1000, vocab)
	m := benchModelOf(b, cfg, d, vocab)
	tc, err := tc.WithDefaults()
	if err != nil {
		b.Fatal(err)
	}
	tr := newTrainer(m, tc)
	tr.prepare(d)
	return tr, d, makeBatches(rand.New(rand.NewPCG(1, 1)), d.IDs, 50, make([]int, d.Len()), nil)
}

// BenchmarkTrain is whole epochs through Train (with a dev evaluation each
// epoch) on the benchmark corpus; it reports Train's steady-state throughput.
func BenchmarkTrain(b *testing.B) {
	const vocab = 20000
	d := benchCorpus(1000, vocab)
	dev := benchCorpus(200, vocab)
	b.ReportAllocs()
	var eps float64
	for i := 0; i < b.N; i++ {
		m := benchModel(b, d, vocab)
		tc := DefaultRecipe().Train
		tc.Epochs, tc.Patience = 2, -1
		res, err := Train(context.Background(), m, d, dev, tc, nil)
		if err != nil {
			b.Fatal(err)
		}
		eps += res.ExamplesPerSec
	}
	b.ReportMetric(eps/float64(b.N), "examples/s")
}

// BenchmarkPredict is inference on batches of 100 texts of 77 tokens with
// the default recipe's model (benchModel).
func BenchmarkPredict(b *testing.B) {
	benchPredict(b, DefaultRecipe().Model)
}

// BenchmarkPredictKim is BenchmarkPredict with Kim's model alone (no word
// or bigram weights), the cost of the default's wide term measured
// against it.
func BenchmarkPredictKim(b *testing.B) {
	benchPredict(b, kimModel())
}

func benchPredict(b *testing.B, cfg Config) {
	const vocab = 20000
	d := benchCorpus(1000, vocab)
	m := benchModelOf(b, cfg, d, vocab)
	p := m.NewPredictor()
	probs := make([]float32, 100*2)
	p.Probs(d.IDs[:100], probs)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		lo := (i * 100) % 1000
		p.Probs(d.IDs[lo:lo+100], probs)
	}
	b.ReportMetric(float64(100*b.N)/b.Elapsed().Seconds(), "examples/s")
}

// BenchmarkTrainStepChars is BenchmarkTrainStep with the character layer
// of train --chars (DefaultChar* settings) beside the 128 word-table
// columns, over a vocabulary of random lower-case words of 3 to 10 letters.
func BenchmarkTrainStepChars(b *testing.B) {
	const vocab = 20000
	d := benchCorpus(1000, vocab)
	rng := rand.New(rand.NewPCG(5, 5))
	words := []string{"<pad>", "<unk>"}
	for i := 2; i < vocab; i++ {
		w := make([]byte, 3+rng.IntN(8))
		for j := range w {
			w[j] = byte('a' + rng.IntN(26))
		}
		words = append(words, string(w))
	}
	cfg := DefaultRecipe().Model
	cc := CharConfig{Filters: DefaultCharFilters, Width: DefaultCharWidth, Dim: DefaultCharDim, MaxChars: DefaultMaxChars, Alphabet: Alphabet(words)}
	cfg.VocabSize, cfg.Classes, cfg.Dim, cfg.Chars = vocab, 2, cfg.Dim+cc.Filters, &cc
	m, err := New(cfg, words, []string{"a", "b"}, 1)
	if err != nil {
		b.Fatal(err)
	}
	tc, _ := DefaultRecipe().Train.WithDefaults()
	tr := newTrainer(m, tc)
	defer tr.close()
	tr.prepare(d)
	batches := makeBatches(rand.New(rand.NewPCG(1, 1)), d.IDs, 50, make([]int, d.Len()), nil)
	for _, bt := range batches {
		tr.step(d, bt)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		tr.step(d, batches[i%len(batches)])
	}
	b.ReportMetric(float64(50*b.N)/b.Elapsed().Seconds(), "examples/s")
}

// BenchmarkWideUpdate is the optimizer step alone (trainer.update, every
// weight) after one batch of the benchmark corpus with the default recipe,
// the word and bigram weights updated densely and row-sparse
// (TrainConfig.WideSparse); it reports the values of the two tables the
// step updates.
func BenchmarkWideUpdate(b *testing.B) {
	for _, sparse := range []bool{false, true} {
		name := map[bool]string{false: "dense", true: "sparse"}[sparse]
		b.Run(name, func(b *testing.B) {
			tc := DefaultRecipe().Train
			tc.WideSparse = sparse
			tr, d, batches := benchTrainer(b, DefaultRecipe().Model, tc)
			defer tr.close()
			m, batch := tr.m, batches[0]
			tr.step(d, batch)                                       // fills the batch's rows
			n := len(m.Wide) - m.Config.Classes + len(m.WideBigram) // the PAD row is never trained
			if sparse {
				n = (len(tr.wideRows) + len(tr.bs.rows)) * m.Config.Classes
			}
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				tr.update()
			}
			b.ReportMetric(float64(n), "table-values/step")
		})
	}
}

package explain

import (
	"context"
	"flag"
	"fmt"
	"math/rand/v2"
	"syscall"
	"testing"
	"time"

	"telltale/cnn"
	"telltale/internal/f32"
)

// cpuTime is the process's user plus system CPU time. On a shared machine
// wall-clock rates depend on the load; texts per CPU-second do much less.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	_ = syscall.Getrusage(syscall.RUSAGE_SELF, &ru)
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// benchModel is the default recipe's shape: 128-d, widths 3/4/5 × 100.
func benchModel(vocab int) *cnn.Model {
	rng := rand.New(rand.NewPCG(20, 20))
	return randomModel(rng, cnn.Config{VocabSize: vocab, Dim: 128, Widths: []int{3, 4, 5}, Filters: 100, Classes: 2})
}

func benchTexts(m *cnn.Model, n, length int) [][]int32 {
	rng := rand.New(rand.NewPCG(21, 21))
	ids := make([][]int32, n)
	for i := range ids {
		ids[i] = make([]int32, length)
		for j := range ids[i] {
			// Zipf-like: small ids are common.
			ids[i][j] = int32(2 + int(float64(m.Config.VocabSize-2)*rng.Float64()*rng.Float64()*rng.Float64()))
		}
	}
	return ids
}

// BenchmarkProfile reports texts per second of Profile on texts of 77
// tokens, table build included.
func BenchmarkProfile(b *testing.B) {
	m := benchModel(20000)
	ids := benchTexts(m, 20000, 77)
	b.ReportAllocs()
	b.ResetTimer()
	c0 := cpuTime()
	for b.Loop() {
		if _, err := Profile(context.Background(), m, ids, nil, ProfileOptions{}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(len(ids)*b.N)/b.Elapsed().Seconds(), "texts/s")
	b.ReportMetric(float64(len(ids)*b.N)/(cpuTime()-c0).Seconds(), "texts/cpu-s")
}

// BenchmarkScan is the forward pass alone over a prebuilt table.
func BenchmarkScan(b *testing.B) {
	m := benchModel(20000)
	ids := benchTexts(m, 20000, 77)
	st, _ := NewSlotTable(m, TableOptions{})
	b.ReportAllocs()
	b.ResetTimer()
	c0 := cpuTime()
	for b.Loop() {
		_ = Scan(context.Background(), st, ids, 0, nil, func(int, int, *Pass) {})
	}
	b.ReportMetric(float64(len(ids)*b.N)/b.Elapsed().Seconds(), "texts/s")
	b.ReportMetric(float64(len(ids)*b.N)/(cpuTime()-c0).Seconds(), "texts/cpu-s")
}

// BenchmarkExplain: identified shares plus every single-token occlusion of
// a text, with integrated gradients in closed form ("ig") or without, with
// a prebuilt table ("warm") and with the table built for the text's own
// words ("cold"). The goal is under 2 ms for 200 tokens with IG, 1 ms
// without (cpu-ms/op on one core). "wide" is the same model with the wide
// path on, its table random.
func BenchmarkExplain(b *testing.B) {
	m := benchModel(20000)
	st, _ := NewSlotTable(m, TableOptions{})
	wm := withWide(m.Clone(), 22)
	wst, _ := NewSlotTable(wm, TableOptions{})
	wids := benchTexts(wm, 1, 200)[0]
	b.Run("len=200/warm/ig/wide", func(b *testing.B) {
		b.ReportAllocs()
		c0 := cpuTime()
		for b.Loop() {
			if _, err := Explain(wm, nil, wids, ExplainOptions{Occlusion: true, IG: true, Table: wst}); err != nil {
				b.Fatal(err)
			}
		}
		b.ReportMetric(float64((cpuTime()-c0).Microseconds())/1000/float64(b.N), "cpu-ms/op")
	})
	for _, n := range []int{50, 200} {
		ids := benchTexts(m, 1, n)[0]
		for _, warm := range []bool{true, false} {
			for _, ig := range []bool{false, true} {
				name := fmt.Sprintf("len=%d/cold", n)
				opt := ExplainOptions{Occlusion: true, IG: ig}
				if warm {
					name = fmt.Sprintf("len=%d/warm", n)
					opt.Table = st
				}
				if ig {
					name += "/ig"
				}
				b.Run(name, func(b *testing.B) {
					b.ReportAllocs()
					c0 := cpuTime()
					for b.Loop() {
						if _, err := Explain(m, nil, ids, opt); err != nil {
							b.Fatal(err)
						}
					}
					b.ReportMetric(float64((cpuTime()-c0).Microseconds())/1000/float64(b.N), "cpu-ms/op")
				})
			}
		}
	}
}

func BenchmarkSlotTable(b *testing.B) {
	m := benchModel(5000)
	b.ReportAllocs()
	for b.Loop() {
		_, _ = NewSlotTable(m, TableOptions{})
	}
}

var profileTexts = flag.Int("profile-texts", 100000, "texts streamed by BenchmarkProfile1M (1000000 for the full-size run)")

// BenchmarkProfile1M profiles a streamed synthetic corpus, negative
// n-grams and families included (the corpus can be read again for the
// negative n-gram search), with the default recipe's shape (128-d, widths 3/4/5 × 100, 20,000 words, texts of 20–80
// Zipf-distributed tokens; see zipfSource), table build included. It streams
// -profile-texts texts (100,000 by default; the bench harness passes
// 1000000) and reports texts/s, texts per CPU-second and the wall seconds
// that 1M texts take at that rate.
func BenchmarkProfile1M(b *testing.B) {
	m := benchModel(20000)
	n := *profileTexts
	b.ReportAllocs()
	c0 := cpuTime()
	for b.Loop() {
		opt := ProfileOptions{Reopen: func() (TextSource, error) { return zipfSource(m, n, 22), nil }}
		prof, err := ProfileStream(context.Background(), m, zipfSource(m, n, 22), opt)
		if err != nil {
			b.Fatal(err)
		}
		negs := 0
		for _, f := range prof.Filters {
			negs += len(f.Negatives)
		}
		b.ReportMetric(float64(negs), "negative-ngrams")
	}
	rate := float64(n*b.N) / b.Elapsed().Seconds()
	b.ReportMetric(rate, "texts/s")
	b.ReportMetric(float64(n*b.N)/(cpuTime()-c0).Seconds(), "texts/cpu-s")
	b.ReportMetric(1e6/rate, "s/1M-texts")
}

// BenchmarkKernels compares every kernel set of this build on the profile's
// inner loop (one bank of 100 filters of width 4 over 77 positions) and on
// the table build of 200 words.
func BenchmarkKernels(b *testing.B) {
	rng := rand.New(rand.NewPCG(23, 23))
	const F, w, n, d = 100, 4, 77, 128
	vocab := make([][]float32, 500)
	for i := range vocab {
		vocab[i] = randSlice(rng, w*F)
	}
	rows := make([][]float32, n)
	for i := range rows {
		rows[i] = vocab[rng.IntN(len(vocab))]
	}
	bias := randSlice(rng, F)
	pre, start := make([]float32, F), make([]int32, F)
	emb, wt := randSlice(rng, 200*d), randSlice(rng, 1200*d)
	c := make([]float32, 200*1200)
	for _, ks := range kernelSets() {
		b.Run("poolBank/"+ks.name, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				ks.poolBank(pre, start, bias, rows, w, F, nil)
			}
		})
	}
	b.Run("matMulNT/"+f32.KernelName(), func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			f32.MatMulNT(c, emb, wt, 200, 1200, d)
		}
		b.ReportMetric(2*200*1200*d*float64(b.N)/b.Elapsed().Seconds()/1e9, "GFLOP/s")
	})
}

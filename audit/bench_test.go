package audit

import (
	"context"
	"math/rand/v2"
	"runtime"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
)

// The speed of the whole audit (counterfactuals, confirmation, intervals,
// action). Timings are never asserted; run with
//
//	GOEXPERIMENT=simd go test ./audit -run '^$' -bench . -benchtime 1x
//
// Each benchmark trains its models before the timer starts.

func reportHeap(b *testing.B) {
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	b.ReportMetric(float64(ms.HeapSys)/(1<<20), "MiB-heap")
}

// BenchmarkAuditSpamAssassin: the default recipe on SpamAssassin (subject
// and body, 4,353 training and 1,209 held-out mails cut to 400 tokens).
func BenchmarkAuditSpamAssassin(b *testing.B) {
	root := testref.Corpus(b, "spamassassin", "easy-ham-1")
	d, _, err := corpus.Load(root, corpus.Options{ReplaceInvalidUTF8: true})
	if err != nil {
		b.Fatal(err)
	}
	all := d.MapTexts(corpus.SubjectAndBody).Relabel(map[string]string{"easy-ham-1": "ham", "easy-ham-2": "ham",
		"hard-ham-1": "ham", "spam-1": "spam", "spam-2": "spam"})
	rest, test := all.Split(0.2, 1)
	train, dev := rest.Split(0.1, 1)
	m := trainText(b, train, dev, cnn.DefaultRecipe(), 1)
	tr, ho := data(b, m, train), data(b, m, test)
	b.ResetTimer()
	for range b.N {
		if _, err := Run(context.Background(), m, tr, ho, Options{Seed: 1}, nil); err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	reportHeap(b)
}

// BenchmarkAudit100k: 100,000 texts (80,000 training, 20,000 held-out),
// drawn with replacement from the demo corpus, audited with a model
// trained on the demo.
func BenchmarkAudit100k(b *testing.B) {
	all := loadCSV(b, "demo", "train.csv")
	test := loadCSV(b, "demo", "test.csv")
	train, dev := all.Split(0.1, 1)
	r := cnn.DefaultRecipe()
	r.Train.Epochs = 8
	m := trainText(b, train, dev, r, 1)
	rng := rand.New(rand.NewPCG(1, 2))
	draw := func(d *corpus.Dataset, n int) *corpus.Dataset {
		out := *d
		out.Examples = make([]corpus.Example, n)
		for i := range out.Examples {
			out.Examples[i] = d.Examples[rng.IntN(len(d.Examples))]
		}
		return &out
	}
	tr, ho := data(b, m, draw(train, 80000)), data(b, m, draw(test, 20000))
	b.ResetTimer()
	for range b.N {
		if _, err := Run(context.Background(), m, tr, ho, Options{Seed: 1}, nil); err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	reportHeap(b)
}

// BenchmarkAuditDemo5Seeds: five models of the demo (seeds 1–5), each
// audited, and the audits merged (Stability).
func BenchmarkAuditDemo5Seeds(b *testing.B) {
	all := loadCSV(b, "demo", "train.csv")
	test := loadCSV(b, "demo", "test.csv")
	type run struct {
		m      *cnn.Model
		tr, ho Data
	}
	var runs []run
	for seed := uint64(1); seed <= 5; seed++ {
		train, dev := all.Split(0.1, seed)
		r := cnn.DefaultRecipe()
		r.Train.Epochs = 8
		m := trainText(b, train, dev, r, seed)
		runs = append(runs, run{m, data(b, m, train), data(b, m, test)})
	}
	b.ResetTimer()
	for range b.N {
		var results []*Result
		for i, r := range runs {
			res, err := Run(context.Background(), r.m, r.tr, r.ho, Options{Seed: uint64(i + 1)}, nil)
			if err != nil {
				b.Fatal(err)
			}
			results = append(results, res)
		}
		_ = Stability(results, 0)
	}
	b.StopTimer()
	reportHeap(b)
}

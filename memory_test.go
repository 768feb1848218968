package main

import (
	"context"
	"path/filepath"
	"runtime"
	"sync"
	"testing"
	"time"

	"telltale/cnn"
	"telltale/corpus"
)

// TestTrainingMemoryEstimate: the estimate train refuses oversized models
// by bounds the heap training takes, and not by much: measured, the peak
// heap in use above the start (runtime.MemStats.HeapAlloc, sampled every
// 5 ms) while cnn.TrainText trains one epoch on the demo corpus, was 3.5
// times below the estimate on the development machine; 5 times leaves
// room for the collector's timing.
func TestTrainingMemoryEstimate(t *testing.T) {
	if testing.Short() {
		t.Skip("trains on the whole demo corpus; skipped with -short")
	}
	all, _, err := corpus.Load(filepath.Join("testdata", "demo", "train.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	train, dev, _ := all.SplitThree(0.1, 0.1, 1)
	r := cnn.DefaultRecipe()
	r.Model.Dim, r.Model.Filters, r.Train.Epochs, r.Train.Threads = 32, 300, 1, 2
	enc, err := corpus.TrainEncoder(r.Tokenizer, train.Texts())
	if err != nil {
		t.Fatal(err)
	}
	longest := 0
	for _, ids := range enc.EncodeAll(train.Texts(), 2) {
		longest = max(longest, len(ids))
	}
	cfg := r.Model
	cfg.VocabSize, cfg.Classes = enc.Vocab.Len(), len(train.Labels)
	estimate := trainingBytes(cfg, r.Train.Batch, min(longest, r.Train.MaxLen), r.Train.Threads, 0)

	runtime.GC()
	var base runtime.MemStats
	runtime.ReadMemStats(&base)
	var peak uint64
	stop := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		var ms runtime.MemStats
		tick := time.NewTicker(5 * time.Millisecond)
		defer tick.Stop()
		for {
			select {
			case <-stop:
				return
			case <-tick.C:
				runtime.ReadMemStats(&ms)
				peak = max(peak, ms.HeapAlloc)
			}
		}
	}()
	_, err = cnn.TrainText(context.Background(), train, dev, r, nil)
	close(stop)
	wg.Wait()
	if err != nil {
		t.Fatal(err)
	}
	used := float64(peak) - float64(base.HeapAlloc)
	t.Logf("estimate %.1f MiB, measured peak %.1f MiB above the start (%.1f×)", estimate/(1<<20), used/(1<<20), estimate/used)
	if estimate < used || estimate > 5*used {
		t.Errorf("the estimate %.1f MiB is not between 1 and 5 times the measured %.1f MiB", estimate/(1<<20), used/(1<<20))
	}
}

package explain

import (
	"context"
	"fmt"
	"runtime"
	"sync"
	"sync/atomic"
)

// TextSource yields the texts of a corpus one at a time: the vocabulary ids
// of the next text, its gold class (−1 when unknown) and ok = true, or ok =
// false at the end. A non-nil error stops the pass and is returned. The ids
// slice may be reused by the source once the next call is made.
type TextSource func() (ids []int32, gold int, ok bool, err error)

// SliceSource is a TextSource over texts held in memory. Gold, when not nil,
// gives each text's class (len(gold) = len(ids)).
func SliceSource(ids [][]int32, gold []int) TextSource {
	i := 0
	return func() ([]int32, int, bool, error) {
		if i >= len(ids) {
			return nil, 0, false, nil
		}
		g := -1
		if gold != nil {
			g = gold[i]
		}
		i++
		return ids[i-1], g, true, nil
	}
}

// textBatch is a run of consecutive texts copied from a source.
type textBatch struct {
	first int     // index of the first text in the stream
	flat  []int32 // the texts' ids, one after the other
	ends  []int   // end of each text in flat
	gold  []int
}

const batchTexts = 256

// scanStream runs the texts of next through st with workers goroutines,
// reading ahead at most 2·workers batches of batchTexts texts, and calls fn
// with each text's pass as Scan does (worker, index in the stream, gold,
// pass); prepare, when not nil, is called once with each worker's Runner
// before its first text. A single goroutine reads next and checks every id (< VocabSize)
// and gold class (−1 or a class of the model); counts, when not nil, gets
// each word's number of occurrences. It returns the number of texts read,
// and the source's error, a check's error or ctx.Err().
func scanStream(ctx context.Context, st *SlotTable, next TextSource, workers int, progress Progress, total int,
	counts []int, prepare func(worker int, r *Runner), fn func(worker, text, gold int, p *Pass)) (int, error) {
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	cfg := st.m.Config
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	free := make(chan *textBatch, 2*workers)
	for range 2 * workers {
		free <- &textBatch{}
	}
	work := make(chan *textBatch, 2*workers)
	rd := &streamReader{next: next, vocab: cfg.VocabSize, classes: cfg.Classes, counts: counts}
	go rd.run(ctx, cancel, free, work)
	var done atomic.Int64
	var wg sync.WaitGroup
	for wk := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			r := st.NewRunner()
			if prepare != nil {
				prepare(wk, r)
			}
			for b := range work {
				if ctx.Err() == nil {
					lo := 0
					for i, hi := range b.ends {
						fn(wk, b.first+i, b.gold[i], r.Run(b.flat[lo:hi]))
						lo = hi
					}
					d := done.Add(int64(len(b.ends)))
					if progress != nil {
						progress(int(d), total)
					}
				}
				free <- b
			}
		}()
	}
	wg.Wait()
	// The reader has returned: work is closed only when it does.
	if rd.err != nil {
		return rd.read, rd.err
	}
	return rd.read, ctx.Err()
}

// streamReader reads a TextSource into batches and checks each text against
// a model of vocab words and classes classes. Its fields read and err are
// only looked at once run has returned.
type streamReader struct {
	next           TextSource
	vocab, classes int
	counts         []int // when not nil, each word's occurrences so far
	read           int   // texts read
	err            error // the source's or a check's error
}

// run fills the batches taken from free and sends them on work until the
// source ends, it fails, a text fails its check (then it calls cancel) or
// ctx ends; it closes work when it returns.
func (r *streamReader) run(ctx context.Context, cancel context.CancelFunc, free <-chan *textBatch, work chan<- *textBatch) {
	defer close(work)
	for {
		var b *textBatch
		select {
		case b = <-free:
		case <-ctx.Done():
			return
		}
		r.fill(b)
		if len(b.ends) > 0 && r.err == nil {
			work <- b
		}
		if r.err != nil || len(b.ends) < batchTexts {
			if r.err != nil {
				cancel()
			}
			return
		}
	}
}

// fill empties b, reusing its slices, and reads up to batchTexts texts into
// it. It stops early at the source's end or at an error, which it leaves in
// r.err (b then holds the good texts before it).
func (r *streamReader) fill(b *textBatch) {
	b.first, b.flat, b.ends, b.gold = r.read, b.flat[:0], b.ends[:0], b.gold[:0]
	for len(b.ends) < batchTexts {
		ids, gold, ok, err := r.next()
		if err != nil {
			r.err = err
			break
		}
		if !ok {
			break
		}
		for j, id := range ids {
			if id < 0 || int(id) >= r.vocab {
				r.err = fmt.Errorf("explain: text %d token %d: id %d outside the vocabulary of %d", r.read, j, id, r.vocab)
				break
			}
			if r.counts != nil {
				r.counts[id]++
			}
		}
		if r.err == nil && (gold < -1 || gold >= r.classes) {
			r.err = fmt.Errorf("explain: text %d: gold class %d outside 0…%d", r.read, gold, r.classes-1)
		}
		if r.err != nil {
			break
		}
		b.flat = append(b.flat, ids...)
		b.ends = append(b.ends, len(b.flat))
		b.gold = append(b.gold, gold)
		r.read++
	}
}

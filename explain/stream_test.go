package explain

import (
	"context"
	"encoding/json"
	"errors"
	"math/rand/v2"
	"runtime"
	"strings"
	"testing"

	"telltale/cnn"
)

// zipfSource generates n seeded texts of 20–80 tokens whose words follow a
// Zipf law (exponent 1.1 over the vocabulary, the order measured on English
// text; common practice, no source), gold classes drawn at random. Each
// call of the returned source reuses one ids buffer, as a file reader would.
func zipfSource(m *cnn.Model, n int, seed uint64) TextSource {
	rng := rand.New(rand.NewPCG(seed, seed))
	z := rand.NewZipf(rng, 1.1, 1, uint64(m.Config.VocabSize-3))
	buf := make([]int32, 0, 80)
	i := 0
	return func() ([]int32, int, bool, error) {
		if i >= n {
			return nil, 0, false, nil
		}
		i++
		buf = buf[:20+rng.IntN(61)]
		for j := range buf {
			buf[j] = int32(2 + z.Uint64())
		}
		return buf, rng.IntN(m.Config.Classes), true, nil
	}
}

// ProfileStream over a source gives exactly what Profile gives over the
// same texts held in memory, whatever the number of workers.
func TestProfileStreamMatchesProfile(t *testing.T) {
	rng := rand.New(rand.NewPCG(50, 50))
	m := randomModel(rng, cnn.Config{VocabSize: 300, Dim: 8, Widths: []int{2, 3}, Filters: 5, Classes: 3})
	var ids [][]int32
	var gold []int
	src := zipfSource(m, 3000, 51)
	for {
		x, g, ok, _ := src()
		if !ok {
			break
		}
		ids = append(ids, append([]int32(nil), x...))
		gold = append(gold, g)
	}
	want, err := Profile(context.Background(), m, ids, gold, ProfileOptions{Workers: 1, MinCount: 1})
	if err != nil {
		t.Fatal(err)
	}
	st := mustTable(t, m, TableOptions{})
	for _, workers := range []int{1, 3} {
		got, err := ProfileStream(context.Background(), m, zipfSource(m, 3000, 51), ProfileOptions{Workers: workers, MinCount: 1, Table: st})
		if err != nil {
			t.Fatal(err)
		}
		a, _ := json.Marshal(want)
		b, _ := json.Marshal(got)
		if string(a) != string(b) {
			t.Fatalf("workers %d: ProfileStream differs from Profile", workers)
		}
	}
	// Without gold the n-grams carry no gold counts.
	got, err := ProfileStream(context.Background(), m, SliceSource(ids, nil), ProfileOptions{Table: st})
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range got.Filters {
		for _, n := range f.TopNgrams {
			if n.ByGold != nil {
				t.Fatalf("filter %d: gold counts %v without gold labels", f.Filter, n.ByGold)
			}
		}
	}
}

func TestProfileStreamErrors(t *testing.T) {
	rng := rand.New(rand.NewPCG(52, 52))
	m := randomModel(rng, cnn.Config{VocabSize: 50, Dim: 4, Widths: []int{2}, Filters: 3, Classes: 2})
	bad := [][]int32{{2, 3}, {4, 50, 5}}
	if _, err := ProfileStream(context.Background(), m, SliceSource(bad, nil), ProfileOptions{}); err == nil ||
		!strings.Contains(err.Error(), "text 1 token 1: id 50") {
		t.Fatalf("bad id: error %v", err)
	}
	if _, err := ProfileStream(context.Background(), m, SliceSource([][]int32{{2}}, []int{2}), ProfileOptions{}); err == nil ||
		!strings.Contains(err.Error(), "gold class 2") {
		t.Fatalf("bad gold: error %v", err)
	}
	boom := errors.New("disk gone")
	n := 0
	src := func() ([]int32, int, bool, error) {
		if n++; n > 1000 {
			return nil, 0, false, boom
		}
		return []int32{2, 3, 4}, -1, true, nil
	}
	if _, err := ProfileStream(context.Background(), m, src, ProfileOptions{}); !errors.Is(err, boom) {
		t.Fatalf("source error: got %v", err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	n = 0
	src = func() ([]int32, int, bool, error) {
		if n++; n == 5000 {
			cancel()
		}
		return []int32{2, 3, 4}, -1, true, nil // endless
	}
	if _, err := ProfileStream(ctx, m, src, ProfileOptions{}); !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled endless stream: got %v", err)
	}
}

// Profiling a stream of 200,000 texts keeps the live heap flat: it is
// measured (after a forced collection) every 20,000 texts read, and must
// neither grow once the per-filter summaries have filled nor come near
// what holding the texts would take. Measured, not timed.
func TestProfileStreamMemoryBounded(t *testing.T) {
	if testing.Short() {
		t.Skip("streams 200,000 texts")
	}
	rng := rand.New(rand.NewPCG(53, 53))
	m := randomModel(rng, cnn.Config{VocabSize: 3000, Dim: 16, Widths: []int{3, 4, 5}, Filters: 20, Classes: 3})
	st := mustTable(t, m, TableOptions{})
	const n = 200000
	inner := zipfSource(m, n, 54)
	var ms runtime.MemStats
	live := func() int64 {
		runtime.GC()
		runtime.ReadMemStats(&ms)
		return int64(ms.HeapAlloc)
	}
	base := live()
	var samples []int64
	var tokens int64
	read := 0
	src := func() ([]int32, int, bool, error) {
		ids, g, ok, err := inner()
		if ok {
			read++
			tokens += int64(len(ids))
			if read%20000 == 0 {
				samples = append(samples, live()-base)
			}
		}
		return ids, g, ok, err
	}
	p, err := ProfileStream(context.Background(), m, src, ProfileOptions{Table: st, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if p.Texts != n || len(samples) != n/20000 {
		t.Fatalf("%d texts, %d samples", p.Texts, len(samples))
	}
	held := 4 * tokens // the ids alone, were the texts held
	peak := samples[0]
	for _, s := range samples {
		peak = max(peak, s)
	}
	t.Logf("live heap above baseline every 20k texts (KiB): %v; holding the texts would take %d KiB", kib(samples), held>>10)
	if growth := peak - samples[0]; growth > 2<<20 {
		t.Errorf("live heap grew by %d KiB between 20k and 200k texts", growth>>10)
	}
	// The fixed part is the table and the per-filter summaries: for 60
	// filters and 2 workers, up to 2·ExactTop activations (8 bytes each)
	// and 2·1024 histogram counts apiece, about 8.7 MiB.
	if peak > held/2 {
		t.Errorf("peak live heap %d KiB, half of holding the texts is %d KiB", peak>>10, held>>11)
	}
}

func kib(xs []int64) []int64 {
	out := make([]int64, len(xs))
	for i, x := range xs {
		out[i] = x >> 10
	}
	return out
}

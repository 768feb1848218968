package corpus

import (
	"bufio"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"testing"
)

// TestStreamMillion streams one million generated short examples and
// checks that the live heap stays bounded (measured with runtime.MemStats,
// sampled while streaming), far below the size of the data.
func TestStreamMillion(t *testing.T) {
	if testing.Short() {
		t.Skip("long: streams 1M lines")
	}
	const n = 1_000_000
	p := filepath.Join(t.TempDir(), "big.csv")
	f, err := os.Create(p)
	if err != nil {
		t.Fatal(err)
	}
	w := bufio.NewWriter(f)
	fmt.Fprintln(w, "text,label")
	for i := range n {
		fmt.Fprintf(w, "message number %d about the ferry to island %d,team%d\n", i, i%97, i%5)
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	f.Close()
	st, _ := os.Stat(p)

	runtime.GC()
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	base := ms.HeapAlloc
	var peak uint64
	count := 0
	_, err = Stream(p, Options{}, func(e Example) error {
		count++
		if count%100_000 == 0 {
			runtime.ReadMemStats(&ms)
			peak = max(peak, ms.HeapAlloc)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if count != n {
		t.Fatalf("streamed %d examples, want %d", count, n)
	}
	growth := int64(peak) - int64(base)
	t.Logf("file %d MB, heap growth while streaming at most %d MB", st.Size()>>20, growth>>20)
	// The file is ~55 MB; streaming must not hold it. 32 MB covers the
	// read buffers and garbage between collections.
	if growth > 32<<20 {
		t.Errorf("heap grew by %d MB while streaming a %d MB file", growth>>20, st.Size()>>20)
	}
}

package corpus

import (
	"math"
	"strings"
	"testing"
)

// FuzzReadVectors: ReadVectors on arbitrary bytes, plain and gzipped, never
// panics or hangs, every error carries the package prefix, and a table it
// accepts is consistent: Dim numbers per word, all finite, no word twice,
// and no more numbers than the file could spell (each takes at least two
// bytes: a digit and a separator), which bounds what it allocates.
func FuzzReadVectors(f *testing.F) {
	f.Add([]byte("2 3\nferry 0.1 0.2 0.3\ncrew -1 2e-3 4\n"), false)
	f.Add([]byte("ferry 0.1 0.2\r\ncrew 1 2\r\n\r\nferry 3 4\n"), false)
	f.Add([]byte("ferry 0.1 NaN\n"), false)
	f.Add([]byte("1 100001\n"), false)
	f.Add([]byte("ferry\n"), false)
	f.Add([]byte("ferry 1 2\ncrew 1\n"), true)
	f.Add([]byte(strings.Repeat("x", 1<<12)), false)
	f.Fuzz(func(t *testing.T, data []byte, gz bool) {
		plain := len(data)
		name := "v.txt"
		if gz {
			name += ".gz"
		}
		p := writeVectorFile(t, name, string(data))
		for _, keep := range []func(string) bool{nil, func(w string) bool { return len(w)%2 == 0 }} {
			v, err := ReadVectors(p, keep)
			if err != nil {
				if !strings.HasPrefix(err.Error(), "corpus: ") {
					t.Fatalf("error without prefix: %v", err)
				}
				continue
			}
			if v.Dim < 1 || len(v.Data) != len(v.Words)*v.Dim {
				t.Fatalf("dim %d, %d words, %d numbers", v.Dim, len(v.Words), len(v.Data))
			}
			if len(v.Data) > plain/2+1 {
				t.Fatalf("%d numbers from %d bytes", len(v.Data), plain)
			}
			seen := map[string]bool{}
			for i, w := range v.Words {
				if w == "" || seen[w] || (keep != nil && !keep(w)) {
					t.Fatalf("word %d %q: empty, repeated or not kept", i, w)
				}
				seen[w] = true
			}
			for _, x := range v.Data {
				if math.IsNaN(float64(x)) || math.IsInf(float64(x), 0) {
					t.Fatalf("non-finite number %v accepted", x)
				}
			}
		}
	})
}

package corpus

import (
	"compress/gzip"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

func writeVectorFile(t testing.TB, name, body string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), name)
	if strings.HasSuffix(name, ".gz") {
		f, err := os.Create(p)
		if err != nil {
			t.Fatal(err)
		}
		gz := gzip.NewWriter(f)
		if _, err := gz.Write([]byte(body)); err != nil {
			t.Fatal(err)
		}
		if err := gz.Close(); err != nil {
			t.Fatal(err)
		}
		if err := f.Close(); err != nil {
			t.Fatal(err)
		}
		return p
	}
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestReadVectors(t *testing.T) {
	// The plain-text layout: optional "count dim" header, then "word x1 … xd"
	// per line (common practice, no source).
	const body = "3 4\nferry 0.5 -1 2.25 0\nquay 1e-3 2 3 4\r\nferry 9 9 9 9\n\ndeck -0.125 0 0 1\n"
	for _, name := range []string{"v.txt", "v.txt.gz"} {
		for _, header := range []bool{true, false} {
			b := body
			if !header {
				b = body[strings.IndexByte(body, '\n')+1:]
			}
			v, err := ReadVectors(writeVectorFile(t, name, b), nil)
			if err != nil {
				t.Fatalf("%s header=%v: %v", name, header, err)
			}
			if v.Dim != 4 || strings.Join(v.Words, " ") != "ferry quay deck" {
				t.Fatalf("%s header=%v: dim %d words %q", name, header, v.Dim, v.Words)
			}
			want := map[string][]float32{"ferry": {0.5, -1, 2.25, 0}, "quay": {0.001, 2, 3, 4}, "deck": {-0.125, 0, 0, 1}}
			for i, w := range v.Words {
				if fmt.Sprint(v.Vector(i)) != fmt.Sprint(want[w]) {
					t.Errorf("%s: vector of %q = %v, want %v", name, w, v.Vector(i), want[w])
				}
			}
		}
	}
	v, err := ReadVectors(writeVectorFile(t, "k.txt", body), func(w string) bool { return w == "quay" })
	if err != nil || len(v.Words) != 1 || v.Words[0] != "quay" {
		t.Fatalf("keep filter: %v %v", v, err)
	}
}

func TestReadVectorsErrors(t *testing.T) {
	cases := []struct{ name, body, want string }{
		{"empty", "", "is empty"},
		{"word only", "ferry\n", "line 1: expected a word followed by its numbers"},
		{"wrong dimension", "ferry 1 2 3\nquay 1 2\n", "line 2: 2 numbers for \"quay\", but the file's dimension is 3"},
		{"header disagrees", "2 3\nferry 1 2 3 4\n", "line 2: 4 numbers"},
		{"nan", "ferry 1 2\nquay NaN 1\n", "line 2: \"NaN\" is not a finite number"},
		{"text", "ferry 1 2\nquay one 1\n", "line 2: \"one\" is not a finite number"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ReadVectors(writeVectorFile(t, "v.txt", c.body), nil)
			if err == nil || !strings.Contains(err.Error(), c.want) || !errors.Is(err, ErrVectors) {
				t.Fatalf("error %v, want one containing %q wrapping ErrVectors", err, c.want)
			}
		})
	}
	plain := filepath.Join(t.TempDir(), "v.gz")
	if err := os.WriteFile(plain, []byte("ferry 1 2\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := ReadVectors(plain, nil); err == nil || !strings.Contains(err.Error(), "not a gzip file") {
		t.Fatalf("plain file named .gz: %v", err)
	}
	if _, err := ReadVectors(filepath.Join(t.TempDir(), "none.txt"), nil); err == nil || !strings.Contains(err.Error(), "cannot open") {
		t.Fatalf("missing file: %v", err)
	}
}

// BenchmarkReadVectors reads a 400,000-word, 300-dimension file (the size
// of common published English vector sets), written once per run.
func BenchmarkReadVectors(b *testing.B) {
	words, dim := 400000, 300
	if testing.Short() {
		words = 20000
	}
	p := filepath.Join(b.TempDir(), "big.txt")
	f, err := os.Create(p)
	if err != nil {
		b.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 1))
	var sb strings.Builder
	fmt.Fprintf(f, "%d %d\n", words, dim)
	for i := 0; i < words; i++ {
		sb.Reset()
		fmt.Fprintf(&sb, "w%d", i)
		for d := 0; d < dim; d++ {
			fmt.Fprintf(&sb, " %.5f", rng.Float32()-0.5)
		}
		sb.WriteByte('\n')
		f.WriteString(sb.String())
	}
	if err := f.Close(); err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		v, err := ReadVectors(p, nil)
		if err != nil || len(v.Words) != words {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(words)*float64(b.N)/b.Elapsed().Seconds(), "words/s")
}

// TestParseFloat32MatchesStrconv checks the fast path against
// strconv.ParseFloat(s, 32), the standard library's correctly rounded parser,
// on the forms vector files hold and on edge cases.
func TestParseFloat32MatchesStrconv(t *testing.T) {
	cases := []string{"0", "-0", "1", "-1", "0.5", "0.05", "+0.25", "100", "1234567", "12345678", "0.1234567",
		"-0.12345678", "3.4028235e38", "1e-3", "1E+2", "0.0000000001", "0.00000000001", "9999999", "0.999999",
		"1.", ".5", "-.5", "00012.5000", "16777217", "1.6777217"}
	rng := rand.New(rand.NewPCG(3, 3))
	for i := 0; i < 20000; i++ {
		digits := 1 + rng.IntN(8)
		frac := rng.IntN(digits + 3)
		var sb strings.Builder
		if rng.IntN(2) == 0 {
			sb.WriteByte('-')
		}
		num := fmt.Sprintf("%0*d", digits, rng.Int64N(100000000)%int64(math.Pow10(digits)))
		if frac >= len(num) {
			num = strings.Repeat("0", frac-len(num)+1) + num
		}
		sb.WriteString(num[:len(num)-frac])
		if frac > 0 {
			sb.WriteString("." + num[len(num)-frac:])
		}
		cases = append(cases, sb.String())
	}
	for _, s := range cases {
		want, err := strconv.ParseFloat(s, 32)
		got, ok := parseFloat32([]byte(s))
		if !ok || err != nil || got != float32(want) || math.Signbit(float64(got)) != math.Signbit(want) {
			t.Fatalf("parseFloat32(%q) = %v, %v; strconv gives %v, %v", s, got, ok, float32(want), err)
		}
	}
	for _, s := range []string{"", "-", ".", "1..2", "1e", "NaN", "inf", "-Inf", "0x1p3x", "1,5", "1e39"} {
		if _, ok := parseFloat32([]byte(s)); ok {
			t.Errorf("parseFloat32(%q) accepted", s)
		}
	}
}

// TestVectorsHeaderReservesWhatTheFileCanHold: a header's count is trusted
// only as far as the file can hold it. A compressed file of a few bytes
// that claims 123,407,025 vectors of 6 numbers (found by FuzzReadVectors:
// it made the reader reserve 2²⁷ numbers and a map as large, gigabytes per
// call) reserves room for at most 16 times its size in text, 2 bytes a
// number.
func TestVectorsHeaderReservesWhatTheFileCanHold(t *testing.T) {
	for _, gz := range []bool{false, true} {
		name := "v.txt"
		if gz {
			name += ".gz"
		}
		p := writeVectorFile(t, name, "123407025 6\nferry 1 2 3 4 5 6\n")
		st, err := os.Stat(p)
		if err != nil {
			t.Fatal(err)
		}
		size := int(st.Size())
		v, err := ReadVectors(p, nil)
		if err != nil {
			t.Fatalf("gz %v: %v", gz, err)
		}
		most := size / 2
		if gz {
			most = 16 * size / 2
		}
		if cap(v.Data) > most || len(v.Words) != 1 || v.Dim != 6 {
			t.Errorf("gz %v: %d words, dimension %d, room for %d numbers reserved; want 1, 6 and at most %d",
				gz, len(v.Words), v.Dim, cap(v.Data), most)
		}
	}
}

// A byte order mark at the start of a vector file is not part of the first
// word or the header, as for data files (common practice, no source).
func TestReadVectorsByteOrderMark(t *testing.T) {
	for _, body := range []string{"\xef\xbb\xbf2 2\nferry 1 2\nquay 3 4\n", "\xef\xbb\xbfferry 1 2\nquay 3 4\n"} {
		for _, name := range []string{"bom.txt", "bom.txt.gz"} {
			v, err := ReadVectors(writeVectorFile(t, name, body), nil)
			if err != nil {
				t.Fatalf("%s %q: %v", name, body, err)
			}
			if strings.Join(v.Words, " ") != "ferry quay" || fmt.Sprint(v.Vector(0)) != "[1 2]" {
				t.Errorf("%s %q: words %q, first vector %v", name, body, v.Words, v.Vector(0))
			}
		}
	}
}

package explain

import (
	"bytes"
	"context"
	"encoding/json"
	"flag"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
)

var update = flag.Bool("update", false, "rewrite the golden files under testdata/")

// roundJSON rewrites every number of a JSON document to 6 significant
// digits, so that golden files do not depend on the last bits of float
// arithmetic.
func roundJSON(t *testing.T, b []byte) []byte {
	t.Helper()
	var v any
	d := json.NewDecoder(bytes.NewReader(b))
	d.UseNumber()
	if err := d.Decode(&v); err != nil {
		t.Fatal(err)
	}
	var walk func(any) any
	walk = func(x any) any {
		switch x := x.(type) {
		case map[string]any:
			for k, v := range x {
				x[k] = walk(v)
			}
		case []any:
			for i, v := range x {
				x[i] = walk(v)
			}
		case json.Number:
			f, _ := x.Float64()
			if f == math.Trunc(f) && math.Abs(f) < 1e15 {
				return json.Number(strconv.FormatInt(int64(f), 10))
			}
			return json.Number(strconv.FormatFloat(f, 'g', 6, 64))
		}
		return x
	}
	out, err := json.MarshalIndent(walk(v), "", "  ")
	if err != nil {
		t.Fatal(err)
	}
	return append(out, '\n')
}

func golden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", name)
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./explain -run Golden -update)", err)
	}
	if !bytes.Equal(got, want) && !(strings.HasSuffix(name, ".json") && jsonAgrees(got, want)) {
		_ = os.MkdirAll(filepath.Join("testdata", "failed"), 0o755)
		_ = os.WriteFile(filepath.Join("testdata", "failed", name), got, 0o644)
		t.Fatalf("%s differs from the golden file; the output is in testdata/failed/%s", name, name)
	}
}

// jsonAgrees reports whether two documents written by roundJSON have the
// same structure and strings and numbers that differ by at most one unit in
// their sixth significant digit. The SIMD kernels use fused multiply-adds and
// the portable ones do not, so a value near a rounding boundary can round
// either way depending on the build (GOEXPERIMENT=simd or not).
func jsonAgrees(a, b []byte) bool {
	var x, y any
	for _, p := range []struct {
		b []byte
		v *any
	}{{a, &x}, {b, &y}} {
		d := json.NewDecoder(bytes.NewReader(p.b))
		d.UseNumber()
		if d.Decode(p.v) != nil {
			return false
		}
	}
	var eq func(x, y any) bool
	eq = func(x, y any) bool {
		switch x := x.(type) {
		case map[string]any:
			y, ok := y.(map[string]any)
			if !ok || len(x) != len(y) {
				return false
			}
			for k, v := range x {
				if w, ok := y[k]; !ok || !eq(v, w) {
					return false
				}
			}
			return true
		case []any:
			y, ok := y.([]any)
			if !ok || len(x) != len(y) {
				return false
			}
			for i := range x {
				if !eq(x[i], y[i]) {
					return false
				}
			}
			return true
		case json.Number:
			y, ok := y.(json.Number)
			if !ok {
				return false
			}
			f, _ := x.Float64()
			g, _ := y.Float64()
			return math.Abs(f-g) <= 1e-5*math.Max(math.Abs(f), math.Abs(g))
		}
		return x == y
	}
	return eq(x, y)
}

// goldenModel is a small seeded model with words of our own.
func goldenModel() (*cnn.Model, map[string]int32) {
	rng := rand.New(rand.NewPCG(42, 42))
	words := []string{corpus.PADWord, corpus.UNKWord, "the", "ferry", "was", "late", "not", "friendly", "crew", "thanks", "great", "trip", "again", "never"}
	m := randomModel(rng, cnn.Config{VocabSize: len(words), Dim: 4, Widths: []int{2, 3}, Filters: 2, Classes: 2})
	m.Vocab, m.Labels = words, []string{"complaint", "praise"}
	index := map[string]int32{}
	for i, w := range words {
		index[w] = int32(i)
	}
	return m, index
}

// tokensOf splits on single spaces, keeping byte offsets.
func tokensOf(text string, index map[string]int32) ([]corpus.Token, []int32) {
	var toks []corpus.Token
	var ids []int32
	start := 0
	for i := 0; i <= len(text); i++ {
		if i == len(text) || text[i] == ' ' {
			if i > start {
				w := text[start:i]
				toks = append(toks, corpus.Token{Text: w, Start: start, End: i})
				id, ok := index[w]
				if !ok {
					id = corpus.UNK
				}
				ids = append(ids, id)
			}
			start = i + 1
		}
	}
	return toks, ids
}

func TestGoldenExplainJSON(t *testing.T) {
	m, index := goldenModel()
	corpusTexts := []string{"the ferry was late", "the crew was not friendly", "great trip thanks crew", "never again", "the trip was great", "not great the ferry was late again"}
	var all [][]int32
	for _, s := range corpusTexts {
		_, ids := tokensOf(s, index)
		all = append(all, ids)
	}
	prof, err := Profile(context.Background(), m, all, []int{0, 0, 1, 0, 1, 0}, ProfileOptions{TopK: 3, MinCount: 1})
	if err != nil {
		t.Fatal(err)
	}
	text := "the crew was not friendly"
	toks, ids := tokensOf(text, index)
	e, err := Explain(m, toks, ids, ExplainOptions{Profiles: prof, Occlusion: true, OcclusionWidths: []int{2}, IG: true, KeptDown: 3})
	if err != nil {
		t.Fatal(err)
	}
	checkExact(t, m, ids, e)
	checkIdentities(t, m, ids, e)
	checkOcclusion(t, m, ids, e)
	checkKeptDown(t, m, ids, e, 3)
	b, err := json.Marshal(e)
	if err != nil {
		t.Fatal(err)
	}
	golden(t, "explain.golden.json", roundJSON(t, b))
	pb, err := json.Marshal(prof)
	if err != nil {
		t.Fatal(err)
	}
	golden(t, "profiles.golden.json", roundJSON(t, pb))
	var shares bytes.Buffer
	for _, c := range []int{-1, 0, 1} {
		if err := Paint(&shares, text, e, MethodExact, c, false); err != nil {
			t.Fatal(err)
		}
	}
	if err := Paint(&shares, text, e, MethodIG, -1, false); err != nil {
		t.Fatal(err)
	}
	golden(t, "paint-identified.golden.txt", shares.Bytes())
}

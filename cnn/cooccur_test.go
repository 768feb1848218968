package cnn

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"telltale/internal/testref"
)

// zipfTexts returns n texts of 5 to 40 ids drawn from a Zipf distribution
// (s = 1.2) over ids 2 … vocab−1, with the occasional UNK.
func zipfTexts(seed uint64, n, vocab int) [][]int32 {
	rng := rand.New(rand.NewPCG(seed, seed))
	z := rand.NewZipf(rng, 1.2, 1, uint64(vocab-3))
	out := make([][]int32, n)
	for i := range out {
		t := make([]int32, 5+rng.IntN(36))
		for j := range t {
			t[j] = int32(2 + z.Uint64())
			if rng.IntN(30) == 0 {
				t[j] = 1
			}
		}
		out[i] = t
	}
	return out
}

type ppmiRef struct {
	Words  []int32     `json:"words"`
	PPMI   [][]float64 `json:"ppmi"`
	Values []float64   `json:"singular_values"`
	U      [][]float64 `json:"u"`
}

// numpyPPMI runs cnn/testdata/ppmi_check.py (numpy, written from the
// definitions) on texts.
func numpyPPMI(t *testing.T, texts [][]int32, vocab int) ppmiRef {
	t.Helper()
	testref.RequirePython(t, "numpy")
	in, err := json.Marshal(map[string]any{"texts": texts, "vocab": vocab, "window": ppmiWindow, "alpha": ppmiAlpha})
	if err != nil {
		t.Fatal(err)
	}
	out := testref.RunScript(t, "ppmi_check.py", in)
	var ref ppmiRef
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatal(err)
	}
	return ref
}

// TestPPMIAgainstNumpy checks the PPMI matrix (and its transpose) entry by
// entry against numpy's, computed from the definitions of Levy, Goldberg &
// Dagan (2015) in cnn/testdata/ppmi_check.py, and the SVD against
// numpy.linalg.svd: with as many random directions as rows the randomized
// SVD is exact, so the singular values and vectors must agree to rounding.
func TestPPMIAgainstNumpy(t *testing.T) {
	const vocab = 70
	texts := zipfTexts(3, 120, vocab)
	ref := numpyPPMI(t, texts, vocab)
	words, row := cooccurWords(texts, vocab)
	if len(words) != len(ref.Words) {
		t.Fatalf("%d rows, numpy has %d", len(words), len(ref.Words))
	}
	for i, w := range words {
		if w != ref.Words[i] {
			t.Fatalf("row %d is word %d, numpy's %d", i, w, ref.Words[i])
		}
	}
	keys, counts := pairCounts(texts, row)
	n := len(words)
	m, mt := ppmiMatrices(n, keys, counts)
	dense := func(s *csr, transpose bool) [][]float64 {
		out := make([][]float64, n)
		for r := range out {
			out[r] = make([]float64, n)
		}
		for r := 0; r < n; r++ {
			for k := s.rowPtr[r]; k < s.rowPtr[r+1]; k++ {
				if transpose {
					out[s.col[k]][r] = s.val[k]
				} else {
					out[r][s.col[k]] = s.val[k]
				}
			}
		}
		return out
	}
	for _, c := range []struct {
		name string
		got  [][]float64
	}{{"M", dense(m, false)}, {"Mᵀ transposed", dense(mt, true)}} {
		for r := range n {
			for j := range n {
				// Same formula in float64, different order of operations.
				if !testref.Close(c.got[r][j], ref.PPMI[r][j], 1e-12, 1e-12) {
					t.Fatalf("%s[%d][%d] = %g, numpy %g", c.name, r, j, c.got[r][j], ref.PPMI[r][j])
				}
			}
		}
	}
	dim := n - svdOversample // then the SVD sees every direction
	u := truncatedSVD(m, mt, dim, 1, 2)
	for j := range dim {
		var ss, dot float64
		for r := range n {
			ss += u[r*dim+j] * u[r*dim+j]
			dot += u[r*dim+j] * ref.U[r][j]
		}
		// Columns are u_j·σ_j^0.5, so their squared norm is σ_j.
		if !testref.Close(ss, ref.Values[j], 1e-9, 1e-9) {
			t.Errorf("singular value %d: %g, numpy %g", j, ss, ref.Values[j])
		}
		gap := ref.Values[j] - ref.Values[j+1]
		if j > 0 {
			gap = min(gap, ref.Values[j-1]-ref.Values[j])
		}
		// A singular vector is defined (up to sign) only where its value
		// is apart from its neighbours.
		if gap > 1e-6*ref.Values[0] && !testref.Close(math.Abs(dot)/math.Sqrt(ss), 1, 1e-6, 0) {
			t.Errorf("singular vector %d: |cos| = %g with numpy's", j, math.Abs(dot)/math.Sqrt(ss))
		}
	}
}

// InitCooccurrence sets the rows of the words that occur, scaled to the
// spread of the random start, leaves PAD, UNK and unseen words alone, and
// gives the same table for the same seed (common practice, no source).
func TestInitCooccurrence(t *testing.T) {
	const vocab = 300
	texts := zipfTexts(4, 400, vocab-20) // ids ≥ vocab−20 never occur
	m := randModel(1, vocab, 16, []int{2, 3}, 4, 2)
	before := append([]float32(nil), m.Emb...)
	set := m.InitCooccurrence(texts, 7, 2)
	words, _ := cooccurWords(texts, vocab)
	if set == 0 || set > len(words) {
		t.Fatalf("%d rows set, %d words occur", set, len(words))
	}
	d := m.Config.Dim
	row := func(e []float32, id int) []float32 { return e[id*d : (id+1)*d] }
	var ss float64
	changed := 0
	for id := range vocab {
		same := slices.Equal(row(m.Emb, id), row(before, id))
		occurs := slices.Contains(words, int32(id))
		switch {
		case !occurs && !same:
			t.Errorf("row %d changed, but the word never occurs", id)
		case occurs && !same:
			changed++
			for _, v := range row(m.Emb, id) {
				ss += float64(v) * float64(v)
			}
		}
	}
	if changed != set {
		t.Errorf("%d rows changed, %d reported", changed, set)
	}
	// The scale is computed in float64, the rows stored in float32.
	if sd, want := math.Sqrt(ss/float64(changed*d)), 0.25/math.Sqrt(3); !testref.Close(sd, want, 0, 1e-6) {
		t.Errorf("standard deviation of the rows set %.4f, want about %.4f", sd, want)
	}
	m2 := randModel(1, vocab, 16, []int{2, 3}, 4, 2)
	m2.InitCooccurrence(texts, 7, 1)
	for i := range m.Emb {
		if !close32(m.Emb[i], m2.Emb[i], 1e-5, 1e-7) {
			t.Fatalf("Emb[%d]: %g with 2 threads, %g with 1", i, m.Emb[i], m2.Emb[i])
		}
	}
}

package main

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
	"telltale/internal/testref"
)

// TestFaithfulnessReadsUnseenWords: faithfulness scores a --chars model as
// predict reads it, the text's unseen word with a vector of its own
// (cnn.Model.WithUnseen). For a text of one token the removal of the top
// token leaves padding only, so its top-1 comprehensiveness is
// p(ŷ|text) − p(ŷ|PAD) (DeYoung et al. 2020, §4.2, with the token replaced
// by padding) and top1_comp is the mean over the texts: an identity of the
// model's forward passes, checked against the library's WithUnseen
// reading and told apart from the unknown word's. The second text, a word
// of the vocabulary, gives the file its two labels.
func TestFaithfulnessReadsUnseenWords(t *testing.T) {
	dir := t.TempDir()
	model, _ := trainCharModel(t, dir)
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	const word, known = "tikcet", "ticket" // a misspelling, not in the vocabulary, and its word
	test := filepath.Join(dir, "two.csv")
	if err := os.WriteFile(test, []byte("text,label\n"+word+","+m.Labels[0]+"\n"+known+","+m.Labels[1]+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	mu, enc, err := m.WithUnseen(nil, []string{word, known})
	if err != nil || mu == m || len(mu.Vocab) != len(m.Vocab)+1 {
		t.Fatalf("%q should be the one unseen word of %q, %q (%v)", word, word, known, err)
	}
	_, ids := enc.Encode(word)
	_, knownIDs := enc.Encode(known)
	top1Comp := func(m *cnn.Model, ids []int32) float64 {
		p := m.Forward(ids).Probs
		y := 0
		for c := range p {
			if p[c] > p[y] {
				y = c
			}
		}
		return float64(p[y]) - float64(m.Forward([]int32{corpus.PAD}).Probs[y])
	}
	want := (top1Comp(mu, ids) + top1Comp(m, knownIDs)) / 2
	asUnknown := (top1Comp(m, []int32{corpus.UNK}) + top1Comp(m, knownIDs)) / 2
	if math.Abs(want-asUnknown) < 1e-4 {
		t.Fatalf("the model scores %q alike with its own vector (%g) and as the unknown word (%g): the check cannot tell them apart", word, want, asUnknown)
	}
	code, out, stderr := tt(t, "faithfulness", "--model", model, "--test", test, "--json", "--quiet")
	if code != 0 {
		t.Fatalf("faithfulness: exit %d: %s", code, stderr)
	}
	var r struct {
		Methods []struct {
			Method   string  `json:"method"`
			Top1Comp float64 `json:"top1_comp"`
		} `json:"methods"`
	}
	if err := json.Unmarshal([]byte(out), &r); err != nil || len(r.Methods) == 0 {
		t.Fatalf("faithfulness --json: %v, %d methods:\n%s", err, len(r.Methods), out)
	}
	for _, mf := range r.Methods {
		// float32 forward passes, summed in float64: 1e-6 is far below
		// the gap to the unknown word's reading asserted above.
		if !testref.Close(mf.Top1Comp, want, 1e-6, 1e-6) {
			t.Errorf("%s: top1_comp %g, want %g as predict reads the text (%g as the unknown word)", mf.Method, mf.Top1Comp, want, asUnknown)
		}
	}
}

// floorNote is the header's note on p-values at the floor of the drawn
// sign-flip test.
const floorNote = "no sign pattern of the"

// TestFaithfulnessFloorNoteOnlyWhenDrawn: with --limit 12 every pair's
// sign-flip p is exact, over all 2¹² sign patterns (Good 2005: an exact
// permutation test enumerates them all; its least p is 2/2ⁿ, the observed
// pattern and its negation), so the header says nothing of a floor of
// drawn patterns, and no p is shown as a bound.
func TestFaithfulnessFloorNoteOnlyWhenDrawn(t *testing.T) {
	model := tinyModel(t)
	code, out, stderr := tt(t, "faithfulness", "--model", model, "--test", filepath.Join("testdata", "demo", "test.csv"), "--limit", "12", "--quiet")
	if code != 0 {
		t.Fatalf("faithfulness: exit %d: %s", code, stderr)
	}
	if !strings.Contains(out, "Holm p") {
		t.Fatalf("no comparison of methods in the output:\n%s", out)
	}
	if strings.Contains(out, floorNote) || strings.Contains(out, "p ≤") {
		t.Errorf("12 texts, every p exact over 2¹² sign patterns, yet the output speaks of a floor of drawn patterns:\n%s", out)
	}
}

// TestFaithHeader: the header of the methods' comparisons counts the
// comparisons Holm's method adjusted across, those with a p (a pair with
// no text has none): by Holm's first step (Holm 1979) the least p times
// that count is its adjusted p, checked against explain.Holm. It gives the
// level of each pair's interval, simultaneous over those comparisons, and
// the resamples behind it (Bonferroni over k: 1 − 0.05/k). The note on
// the drawn test's floor is there exactly when some p is at that floor,
// not when every p is exact (n ≤ 16 texts: all 2ⁿ sign patterns, least p
// 2/2ⁿ).
func TestFaithHeader(t *testing.T) {
	const n = 12
	exact := explain.MethodPair{A: "exact", B: "random", Measure: "comp", Texts: n, P: 2.0 / (1 << n), SignFlips: 1 << n}
	drawn := explain.MethodPair{A: "exact", B: "random", Measure: "suff", Texts: 40, P: 1.0 / (explain.SignFlipDraws + 1), SignFlips: explain.SignFlipDraws}
	none := explain.MethodPair{A: "ig", B: "random", Measure: "aopc", P: math.NaN()}
	other := explain.MethodPair{A: "ig", B: "random", Measure: "comp", Texts: n, P: 0.25, SignFlips: 1 << n}
	for _, c := range []struct {
		name  string
		pairs []explain.MethodPair
		count int
		note  bool
		level string // the level of each interval, 1 − 0.05/count, and its resamples
	}{
		{"all exact, one without texts", []explain.MethodPair{exact, none, other}, 2, false, "each at 97.5%, from 1600 resamples"},
		{"one at the drawn floor", []explain.MethodPair{exact, drawn, other}, 3, true, "each at 98.33%, from 2400 resamples"},
	} {
		ps := make([]float64, len(c.pairs))
		for i, pr := range c.pairs {
			ps[i] = pr.P
		}
		adj := explain.Holm(ps)
		for i := range c.pairs {
			c.pairs[i].PHolm = adj[i]
			c.pairs[i].DiffCILevel, c.pairs[i].DiffCIResamples = 1-0.05/float64(c.count), 800*c.count
		}
		least := slices.IndexFunc(ps, func(p float64) bool { return !math.IsNaN(p) })
		for i, p := range ps {
			if p < ps[least] {
				least = i
			}
		}
		if !testref.Close(adj[least], float64(c.count)*ps[least], 1e-12, 0) {
			t.Fatalf("%s: Holm p of the least p %g is %g, want %d × it", c.name, ps[least], adj[least], c.count)
		}
		r := &explain.FaithReport{Texts: 40, Resamples: 10, Draws: 5, Pairs: c.pairs}
		var b strings.Builder
		writeFaith(&b, r)
		out := b.String()
		if want := fmt.Sprintf("across the %d comparisons", c.count); !strings.Contains(out, want) {
			t.Errorf("%s: the header does not say %q:\n%s", c.name, want, out)
		}
		if !strings.Contains(out, c.level) {
			t.Errorf("%s: the header does not say %q:\n%s", c.name, c.level, out)
		}
		if strings.Contains(out, floorNote) != c.note {
			t.Errorf("%s: the note on the drawn floor shown %v, want %v:\n%s", c.name, !c.note, c.note, out)
		}
	}
}

// With no pair of methods sharing a text, the text says so in place of
// the paragraph on the tests and the intervals (there is no level to
// name), and still lists the pairs.
func TestFaithNoPairWithTexts(t *testing.T) {
	none := explain.MethodPair{A: "ig", B: "random", Measure: "aopc", P: math.NaN(), PHolm: math.NaN()}
	r := &explain.FaithReport{Texts: 3, Resamples: 10, Draws: 5, Pairs: []explain.MethodPair{none}}
	var b strings.Builder
	writeFaith(&b, r)
	out := b.String()
	if !strings.Contains(out, "no text has a figure of both methods of any pair") || strings.Contains(out, "each at") ||
		!strings.Contains(out, "ig         − random") {
		t.Errorf("the text:\n%s", out)
	}
}

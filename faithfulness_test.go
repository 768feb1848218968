package main

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
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

package main

import (
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
)

// TestAuditWordOnlyMask runs telltale audit on a model whose planted cues
// no filter reads: trained with word weights (--wide) and one feature map
// per width (--maps 1) on the demo corpus, whose README
// (testdata/demo/README.md) documents the planted kiosk footer line (word
// "kioskmail"). The audit (audit.TestWordOnlyMaskDemo checks its figures)
// suggests a mask of words only. Asserted here: the JSON has mask_words
// holding kioskmail and no mask; the story names the words; the text
// offers --masked-out for it; and --masked-out writes the model with no
// filter masked and the words' rows of the word-weight table the unknown
// word's, saying so. The model fits no linear baseline (--baseline=false):
// the audit does not read it and nothing here looks at it.
func TestAuditWordOnlyMask(t *testing.T) {
	if testing.Short() {
		t.Skip("trains a model; skipped with -short")
	}
	dir := t.TempDir()
	model := filepath.Join(dir, "wide.tt")
	if code, _, stderr := tt(t, "train", "--data", "testdata/demo/train.csv", "--test", "testdata/demo/test.csv", "--out", model,
		"--epochs", "8", "--maps", "1", "--wide", "--baseline=false", "--quiet"); code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	base := []string{"audit", "--model", model, "--data", "testdata/demo/train.csv", "--test", "testdata/demo/test.csv"}
	var res auditOut
	jsonOf(t, &res, append(base, "--json", "--quiet")...)
	act := res.Action
	if act.Mask != nil || !slices.Contains(act.MaskWords, "kioskmail") || !act.Suggested() {
		t.Fatalf("want a mask of words only holding kioskmail: mask %v, words %q, tried %+v\n%s", act.Mask, act.MaskWords, act.Tried, res.Story)
	}
	if !strings.Contains(res.Story, "as the unknown word by the word weights, chosen on the choosing half, helps on the confirming half") {
		t.Errorf("the story does not name the mask of words:\n%s", res.Story)
	}
	code, text, stderr := tt(t, base...)
	offer := "write a copy with " + strings.Join(act.MaskWords, ", ") + " read as the unknown word by the word weights"
	if code != 0 || !strings.Contains(text, "--masked-out") || !strings.Contains(text, offer) {
		t.Errorf("audit: exit %d, the text does not offer %q with --masked-out: %s\n%s", code, offer, stderr, text)
	}
	out := filepath.Join(dir, "masked.tt")
	code, _, stderr = tt(t, append(base, "--masked-out", out)...)
	if code != 0 || !strings.Contains(stderr, "read as the unknown word by the word weights is written to "+out) {
		t.Fatalf("audit --masked-out: exit %d: %s", code, stderr)
	}
	m, err := cnn.Load(out)
	if err != nil {
		t.Fatal(err)
	}
	for g := range m.Config.NumFilters() {
		if m.IsMasked(g) {
			t.Errorf("filter %d masked by a mask of words only", g)
		}
	}
	for _, w := range act.MaskWords {
		if !slices.Equal(m.WideRow(int32(slices.Index(m.Vocab, w))), m.WideRow(corpus.UNK)) {
			t.Errorf("%s: the row of %q is not the unknown word's", out, w)
		}
	}
}

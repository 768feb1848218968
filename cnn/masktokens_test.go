package cnn

import (
	"context"
	"path/filepath"
	"reflect"
	"slices"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"telltale/corpus"
)

// TestTrainTextMaskTokens: TrainText takes the recipe's MaskTokens out of
// the training texts before it builds the vocabulary, and the model file
// keeps them (info.recipe.mask_tokens) with the halves that chose cues
// (Info.CuesChosenOn); no patterns, no change. The demo corpus's README
// (testdata/demo/README.md) documents the two planted cues the patterns
// take out: the ticket stamp ("TKREF-" and five digits) and the kiosk
// footer line ("kioskmail").
func TestTrainTextMaskTokens(t *testing.T) {
	d, _, err := corpus.Load(filepath.Join("..", "testdata", "demo", "train.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	d.Examples = d.Examples[:600]
	for _, c := range []struct {
		mask         []string
		tkref, kiosk bool // in the vocabulary
	}{
		{nil, true, true},
		{[]string{"/(?i)\\btkref\\s*-\\s*[0-9]+\\b/"}, false, true},
		{[]string{"tkref", "kioskmail"}, false, false},
	} {
		r := DefaultRecipe()
		r.Baseline = nil
		r.Model.Dim, r.Model.Widths, r.Model.Filters = 8, []int{2}, 4
		r.Train.Epochs, r.Train.Threads, r.Train.MaskTokens = 1, 2, c.mask
		tr, err := TrainText(context.Background(), d, nil, r, nil)
		if err != nil {
			t.Fatal(err)
		}
		m := tr.Model
		if slices.Contains(m.Vocab, "tkref") != c.tkref || slices.Contains(m.Vocab, "kioskmail") != c.kiosk {
			t.Errorf("mask %q: tkref in the vocabulary %v, kioskmail %v; want %v, %v", c.mask,
				slices.Contains(m.Vocab, "tkref"), slices.Contains(m.Vocab, "kioskmail"), c.tkref, c.kiosk)
		}
		m.Info.ChoseCues(CueChoice{Half: "selection", Heldout: "test", Of: 10, Fingerprint: "f", Seed: 1, For: ChoseRetrain, Texts: []int{7, 2}})
		path := filepath.Join(t.TempDir(), "m.tt")
		if err := m.Save(path); err != nil {
			t.Fatal(err)
		}
		back, err := Load(path)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(back.Info.Recipe.MaskTokens, c.mask) || !reflect.DeepEqual(back.Info.CuesChosenOn, m.Info.CuesChosenOn) {
			t.Errorf("mask %q: the file keeps %q and %+v", c.mask, back.Info.Recipe.MaskTokens, back.Info.CuesChosenOn)
		}
	}
	if _, err := TrainText(context.Background(), d, nil, Recipe{Train: TrainConfig{MaskTokens: []string{"/[/"}}}, nil); err == nil {
		t.Error("a bad pattern in the recipe trained")
	}
}

// TestTrainTextMasksTheDev: TrainText takes the recipe's MaskTokens out of
// the dev texts too, so the kept epoch's dev figures (Info.Dev) are those
// of the model on the masked dev text, not on the text as given: the ECE,
// a continuous figure, tells the two apart. The demo corpus's README
// documents the planted ticket stamp the pattern takes out; its training
// file holds it in the dev share too.
func TestTrainTextMasksTheDev(t *testing.T) {
	d, _, err := corpus.Load(filepath.Join("..", "testdata", "demo", "train.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	d.Examples = d.Examples[:800]
	train, dev := d.Split(0.25, 1)
	mask := []string{"/(?i)\\btkref\\s*-\\s*[0-9]+\\b/"}
	cm, err := corpus.MaskTokens(mask)
	if err != nil {
		t.Fatal(err)
	}
	stamped := 0
	masked := dev.MapTexts(func(s string) string {
		s, n := cm.Mask(s)
		stamped += min(n, 1)
		return s
	})
	if stamped == 0 {
		t.Fatal("no dev text holds the stamp: choose other texts")
	}
	r := DefaultRecipe()
	r.Baseline = nil
	r.Model.Dim, r.Model.Widths, r.Model.Filters = 8, []int{2}, 4
	r.Train.Epochs, r.Train.Threads, r.Train.MaskTokens = 2, 2, mask
	tr, err := TrainText(context.Background(), train, dev, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	m := tr.Model
	ece := func(ds *corpus.Dataset) float64 {
		data, err := EncodeDataset(tr.Encoder, ds, m.Labels, 2)
		if err != nil {
			t.Fatal(err)
		}
		mt, _, err := Evaluate(m, data, 2)
		if err != nil {
			t.Fatal(err)
		}
		return mt.ECE
	}
	onMasked, asGiven := ece(masked), ece(dev)
	if onMasked == asGiven {
		t.Fatalf("the stamp on %d dev texts changes no confidence (ECE %g both): the test cannot tell the two apart", stamped, onMasked)
	}
	if m.Info.Dev == nil {
		t.Fatal("no dev figures recorded")
	}
	if !scalar.EqualWithinAbsOrRel(m.Info.Dev.ECE, onMasked, 1e-12, 1e-12) {
		t.Errorf("dev ECE %g, want %g (the masked dev text), not %g (the text as given)", m.Info.Dev.ECE, onMasked, asGiven)
	}
}

// TestChoseCues: the halves that chose the same thing (For) on the same
// held-out texts (the same count and fingerprint) are merged, their
// indexes sorted and distinct; another choice, or other texts, are kept
// apart; CuesChosenIn finds the records of the texts alone. A copy's
// records are not changed.
func TestChoseCues(t *testing.T) {
	var info Info
	info.ChoseCues(CueChoice{Half: "selection", For: ChoseRetrain, Heldout: "test", Of: 10, Fingerprint: "a", Seed: 1, Texts: []int{5, 1}})
	kept := info
	info.ChoseCues(CueChoice{Half: "selection", For: ChoseRetrain, Heldout: "test", Of: 10, Fingerprint: "a", Seed: 2, Texts: []int{1, 3}})
	info.ChoseCues(CueChoice{Half: "selection", For: ChoseMask, Heldout: "test", Of: 10, Fingerprint: "a", Seed: 1, Texts: []int{4}})
	info.ChoseCues(CueChoice{Half: "selection", For: ChoseRetrain, Heldout: "/t.csv", Of: 4, Fingerprint: "b", Seed: 1, Texts: []int{0}})
	for _, c := range []struct {
		n     int
		fp    string
		texts [][]int // of each record found, in the order recorded
	}{{10, "a", [][]int{{1, 3, 5}, {4}}}, {4, "b", [][]int{{0}}}, {10, "b", nil}, {4, "a", nil}} {
		var got [][]int
		for _, r := range info.CuesChosenIn(c.n, c.fp) {
			got = append(got, r.Texts)
		}
		if !reflect.DeepEqual(got, c.texts) {
			t.Errorf("%d texts of %s: the records' indexes %v, want %v", c.n, c.fp, got, c.texts)
		}
	}
	if got := kept.CuesChosenIn(10, "a"); len(got) != 1 || !slices.Equal(got[0].Texts, []int{1, 5}) {
		t.Errorf("the copy's record changed: %+v", got)
	}
	var none *Info
	if none.CuesChosenIn(10, "a") != nil {
		t.Error("a nil Info has a record")
	}
}

// TestConfirmingSeed: audits of one lineage that chose on the halves of
// one seed leave that seed's confirming half clean; a later audit with
// another seed (audit r.tt --seed 2 --retrain-out r2.tt, r.tt itself
// retrained with seed 1) joins a half that overlaps both of seed 1's, so
// the record says so (OtherSeeds) and no confirming half is clean, also
// when the other seed chose something else (a mask).
func TestConfirmingSeed(t *testing.T) {
	one := CueChoice{Half: "selection", For: ChoseRetrain, Heldout: "test", Of: 10, Fingerprint: "a", Seed: 1, Texts: []int{1, 5}}
	var same Info
	same.ChoseCues(one)
	same.ChoseCues(one)
	if seed, _, ok := ConfirmingSeed(same.CuesChosenIn(10, "a")); !ok || seed != 1 || same.CuesChosenOn[0].OtherSeeds != nil {
		t.Errorf("one seed: seed %d ok %v, record %+v", seed, ok, same.CuesChosenOn)
	}
	var joined Info
	joined.ChoseCues(one)
	joined.ChoseCues(CueChoice{Half: "selection", For: ChoseRetrain, Heldout: "test", Of: 10, Fingerprint: "a", Seed: 2, Texts: []int{3}})
	joined.ChoseCues(CueChoice{Half: "selection", For: ChoseRetrain, Heldout: "test", Of: 10, Fingerprint: "a", Seed: 2, Texts: []int{4}})
	rec := joined.CuesChosenOn
	if len(rec) != 1 || rec[0].Seed != 1 || !slices.Equal(rec[0].OtherSeeds, []uint64{2}) || !slices.Equal(rec[0].Texts, []int{1, 3, 4, 5}) {
		t.Errorf("joined: %+v", rec)
	}
	if _, seeds, ok := ConfirmingSeed(joined.CuesChosenIn(10, "a")); ok || !slices.Equal(seeds, []uint64{1, 2}) {
		t.Errorf("joined: ok %v seeds %v, want not ok, seeds [1 2]", ok, seeds)
	}
	var apart Info
	apart.ChoseCues(one)
	apart.ChoseCues(CueChoice{Half: "selection", For: ChoseMask, Heldout: "test", Of: 10, Fingerprint: "a", Seed: 7, Texts: []int{2}})
	if _, seeds, ok := ConfirmingSeed(apart.CuesChosenIn(10, "a")); ok || !slices.Equal(seeds, []uint64{1, 7}) {
		t.Errorf("a mask of another seed: ok %v seeds %v, want not ok, seeds [1 7]", ok, seeds)
	}
	if _, _, ok := ConfirmingSeed(nil); ok {
		t.Error("no choice has a confirming seed")
	}
}

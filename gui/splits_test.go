package gui

import (
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"testing"

	"fyne.io/fyne/v2/test"

	"telltale/cnn"
	"telltale/corpus"
)

// splitTexts are the texts of the three splits.
func splitTexts(train, dev, test *corpus.Dataset) [3][]string {
	return [3][]string{train.Texts(), dev.Texts(), test.Texts()}
}

// TestSplitsAsTrainMakesThem: the window makes the three splits of a data
// file as telltale train does (splits.go: corpus.Dataset.SplitThree with
// the dev and test shares and the seed, a test file taking the test
// share's place) and a model trained here records them in the same
// cnn.SplitRecord, so the command line finds its test split again; the
// window's own notes of the plan are gone. A model opened on its data is
// evaluated on the test split it records.
func TestSplitsAsTrainMakesThem(t *testing.T) {
	dir := t.TempDir()
	tr, te := demoBytes(t)
	data, testFile := filepath.Join(dir, "train.csv"), filepath.Join(dir, "test.csv")
	if err := os.WriteFile(data, tr, 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(testFile, te, 0o600); err != nil {
		t.Fatal(err)
	}
	seed := cnn.DefaultRecipe().Train.Seed
	for _, c := range []struct {
		name     string
		testPath string
	}{{"shares of the data", ""}, {"a test file", testFile}} {
		t.Run(c.name, func(t *testing.T) {
			a := test.NewTempApp(t)
			q := &queue{}
			_, st := newWindow(a, Options{DataPath: data, TestPath: c.testPath}, q.post)
			t.Cleanup(st.cancelAll)
			q.waitFor(t, "the data", func() bool { return itemGet(st.data) != nil })
			cs := itemGet(st.data)
			all, _, err := corpus.Load(data, corpus.Options{})
			if err != nil {
				t.Fatal(err)
			}
			testFrac := cnn.DefaultTestFrac
			if c.testPath != "" {
				testFrac = 0
			}
			wantTrain, wantDev, wantTest := all.SplitThree(cnn.DefaultDevFrac, testFrac, seed)
			if c.testPath != "" {
				if wantTest, _, err = corpus.Load(testFile, corpus.Options{}); err != nil {
					t.Fatal(err)
				}
			}
			if got, want := splitTexts(cs.Train, cs.Dev, cs.Test), splitTexts(wantTrain, wantDev, wantTest); !reflect.DeepEqual(got, want) {
				t.Fatalf("the window's splits differ from SplitThree's: %d/%d/%d texts, want %d/%d/%d",
					len(got[0]), len(got[1]), len(got[2]), len(want[0]), len(want[1]), len(want[2]))
			}
			// The record telltale train --data DATA [--test FILE] writes.
			want := cnn.SplitRecord{Data: data, DataAbs: data, TestFile: c.testPath, DevFrac: cnn.DefaultDevFrac, TestFrac: testFrac,
				Seed: seed, Examples: len(all.Examples), Fingerprint: all.Fingerprint(),
				Train: len(wantTrain.Examples), Dev: len(wantDev.Examples), Test: len(wantTest.Examples)}
			if c.testPath != "" {
				want.TestFingerprint = wantTest.Fingerprint() // as train records it, to tell a changed file
			}
			if cs.Record != want {
				t.Errorf("record\n %+v\nwant\n %+v", cs.Record, want)
			}

			smallRecipe(st)
			_ = st.recipe.epochs.Set("1")
			// The model's split record is read here, never its linear
			// baseline: none is fitted.
			_ = st.recipe.baseline.Set(false)
			st.trainNow()
			q.waitFor(t, "the trained model", func() bool { return itemGet(st.model) != nil })
			m := itemGet(st.model).Model
			if m.Info.Splits == nil || *m.Info.Splits != want {
				t.Errorf("the model records %+v, want %+v", m.Info.Splits, want)
			}
			for _, k := range []string{"seed", "dev_frac", "test_frac", "test"} {
				if _, ok := m.Info.Notes[k]; ok {
					t.Errorf("the model still notes %q", k)
				}
			}
			p, ok := planOf(m, cs)
			if !ok || p.DevFrac != cnn.DefaultDevFrac || p.Seed != seed || p.TestFrac != cs.Plan.TestFrac {
				t.Errorf("plan found again %+v (%v), want the open one %+v", p, ok, cs.Plan)
			}
			other := *cs
			other.All = &corpus.Dataset{Examples: slices.Clone(all.Examples[1:])}
			if _, ok := planOf(m, &other); ok {
				t.Errorf("a plan was found for other data")
			}
		})
	}
}

// The demo corpus, opened where the repository's files it is built from
// are (the repository's root), records their absolute paths, as telltale
// train --data testdata/demo/train.csv --test testdata/demo/test.csv
// does, so a later command can read its data again; elsewhere it records
// only the names, as no file of it is there.
func TestDemoRecordsItsFiles(t *testing.T) {
	tr, te := demoFiles(t)
	plan, err := newRecipeForm().plan()
	if err != nil {
		t.Fatal(err)
	}
	load := func() cnn.SplitRecord {
		t.Helper()
		cs, err := loadCorpus(t.Context(), dataSource{demoTrain: tr, demoTest: te}, plan)
		if err != nil {
			t.Fatal(err)
		}
		return cs.Record
	}
	if r := load(); r.Data != demoTrainFile || r.DataAbs != "" || r.TestFile != demoTestFile {
		t.Errorf("away from the repository's root the demo records %q, %q and %q", r.Data, r.DataAbs, r.TestFile)
	}
	root, err := filepath.Abs("..")
	if err != nil {
		t.Fatal(err)
	}
	t.Chdir(root)
	r := load()
	if want := filepath.Join(root, demoTrainFile); r.Data != demoTrainFile || r.DataAbs != want {
		t.Errorf("the demo records data %q at %q, want %q at %q", r.Data, r.DataAbs, demoTrainFile, want)
	}
	if want := filepath.Join(root, demoTestFile); r.TestFile != want {
		t.Errorf("the demo records the test file %q, want %q", r.TestFile, want)
	}
	// Other bytes at that path are not the demo's.
	if got := demoCopy(demoTrainFile, te); got != "" {
		t.Errorf("the test file's bytes are taken for the training file's at %q", got)
	}
}

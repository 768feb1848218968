package audit

import (
	"context"
	"fmt"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
)

// loadCSV reads a labeled file of the module's testdata.
func loadCSV(t testing.TB, dir, name string) *corpus.Dataset {
	t.Helper()
	root := testref.Corpus(t, dir, name)
	d, _, err := corpus.Load(filepath.Join(root, name), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// trainText trains recipe r (seeded) on train with dev for early stopping.
func trainText(t testing.TB, train, dev *corpus.Dataset, r cnn.Recipe, seed uint64) *cnn.Model {
	t.Helper()
	r.Train.Seed = seed
	tr, err := cnn.TrainText(context.Background(), train, dev, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	return tr.Model
}

// data reads ds for m.
func data(t testing.TB, m *cnn.Model, ds *corpus.Dataset) Data {
	t.Helper()
	d, err := NewData(m, ds, 0)
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// run audits and logs the whole text.
func run(t testing.TB, m *cnn.Model, train, held Data, opt Options) *Result {
	t.Helper()
	res, err := Run(context.Background(), m, train, held, opt, nil)
	if err != nil {
		t.Fatal(err)
	}
	var sb strings.Builder
	if err := res.WriteText(&sb); err != nil {
		t.Fatal(err)
	}
	t.Log("\n" + sb.String())
	return res
}

// hasWord reports whether the cue's words hold one of words.
func hasWord(c Candidate, words ...string) bool {
	return slices.ContainsFunc(c.Words, func(w string) bool { return slices.Contains(words, w) })
}

func acted(res *Result) []Candidate {
	var out []Candidate
	for _, c := range res.Ranked {
		if c.Verdict == VerdictActed {
			out = append(out, c)
		}
	}
	return out
}

// demoRun is a model of the demo corpus (or a variant) with its audit.
type demoRun struct {
	train, dev, test *corpus.Dataset
	recipe           cnn.Recipe
	m                *cnn.Model
	held             Data // test as m reads it
	res              *Result
}

// demoRuns are the demo runs made so far: the tests that need the same
// model and audit share them rather than train again.
var demoRuns = struct {
	sync.Mutex
	m map[string]*demoRun
}{m: map[string]*demoRun{}}

// noBaseline returns r without the linear baseline (Recipe.Baseline nil),
// as the audit's tests train their models: cnn.TrainText fits it after the
// CNN, which it leaves as it is, and the audit never reads it, so a fit
// would only take time (L-BFGS over a grid of five C on every training
// text). TestRetrainKeepsTheBaseline, about the baseline, fits it.
func noBaseline(r cnn.Recipe) cnn.Recipe {
	r.Baseline = nil
	return r
}

// demoAudit trains the default recipe (8 epochs, as the README's tour;
// without the baseline: noBaseline) on the training file of variant
// (testdata/demo or testdata/demo-equal) less its dev share, split and
// trained with seed, and audits it against the variant's test.csv with
// Options{Seed: seed}; a run made before is returned again.
func demoAudit(t *testing.T, variant string, seed uint64) *demoRun {
	t.Helper()
	return demoAuditWith(t, variant, seed, false)
}

// wideDemoAudit is demoAudit of the demo corpus with seed 1 and word
// weights alone in the word-weight path (train --wide-bigrams=false:
// cnn.Config.Wide, WideLR cnn.DefaultWideLR).
func wideDemoAudit(t *testing.T) *demoRun {
	t.Helper()
	return demoAuditWith(t, "demo", 1, true)
}

func demoAuditWith(t *testing.T, variant string, seed uint64, wide bool) *demoRun {
	t.Helper()
	demoRuns.Lock()
	defer demoRuns.Unlock()
	key := fmt.Sprint(variant, "/", seed, "/", wide)
	if d, ok := demoRuns.m[key]; ok {
		return d
	}
	all := loadCSV(t, variant, "train.csv")
	d := &demoRun{test: loadCSV(t, variant, "test.csv"), recipe: noBaseline(cnn.DefaultRecipe())}
	d.train, d.dev = all.Split(cnn.DefaultDevFrac, seed)
	d.recipe.Train.Epochs = 8
	d.recipe.Train.Seed = seed
	if wide {
		d.recipe.Model.Wide, d.recipe.Model.WideBigrams, d.recipe.Train.WideLR = true, false, cnn.DefaultWideLR
	}
	d.m = trainText(t, d.train, d.dev, d.recipe, seed)
	d.held = data(t, d.m, d.test)
	d.res = run(t, d.m, data(t, d.m, d.train), d.held, Options{Seed: seed})
	demoRuns.m[key] = d
	return d
}

package gui

import (
	"bytes"
	"encoding/csv"
	"flag"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/report"
)

var update = flag.Bool("update", false, "rewrite the golden renderings in testdata/")

// assertRenders compares the canvas with the golden rendering
// testdata/name (test.AssertRendersToMarkup: a mismatch is written to
// testdata/failed/name); with -update it rewrites the golden file.
func assertRenders(t *testing.T, name string, c fyne.Canvas) {
	t.Helper()
	if *update {
		path := filepath.Join("testdata", name)
		if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, []byte(test.RenderToMarkup(c)), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	test.AssertRendersToMarkup(t, name, c)
}

// goldenName is a view's file name: "why-this-label" for "Why this label".
func goldenName(title string) string {
	return strings.ReplaceAll(strings.ToLower(title), " ", "-") + ".xml"
}

// TestGoldenEmpty renders every view of a window that opened nothing, at
// 1024×700: the empty states.
func TestGoldenEmpty(t *testing.T) {
	a := test.NewTempApp(t)
	q := &queue{}
	w, st := newWindow(a, Options{}, q.post)
	w.Resize(fyne.NewSize(smallScreen.Width, smallScreen.Height-menuBar))
	q.waitFor(t, "the failed start", func() bool { return st.tasks.idle(taskLoad) })
	q.drain()
	for top := w.Canvas().Overlays().Top(); top != nil; top = w.Canvas().Overlays().Top() {
		w.Canvas().Overlays().Remove(top) // the dialog saying there is no data
	}
	for i, spec := range st.specs {
		st.tabs.SelectIndex(i)
		assertRenders(t, filepath.Join("empty", goldenName(spec.Title)), w.Canvas())
	}
}

// exactModel is a model over the words of texts whose weights are all
// multiples of 1/4 in [−1/2, 1/2], drawn with a fixed seed: every sum the
// views show is exact in float32 whatever the order of the additions
// (kernel, thread count), so its renderings are the same on every machine.
func exactModel(t *testing.T, texts, labels []string) *cnn.Model {
	t.Helper()
	rec := cnn.DefaultRecipe()
	enc, err := corpus.TrainEncoder(rec.Tokenizer, texts)
	if err != nil {
		t.Fatal(err)
	}
	cfg := cnn.Config{VocabSize: enc.Vocab.Len(), Dim: 4, Widths: []int{2, 3}, Filters: 3, Classes: len(labels)}
	m, err := cnn.New(cfg, enc.Vocab.Words, labels, 1)
	if err != nil {
		t.Fatal(err)
	}
	m.Tokenizer = rec.Tokenizer
	rng := rand.New(rand.NewPCG(1, 2))
	quarter := func(xs []float32) {
		for i := range xs {
			xs[i] = float32(rng.IntN(5)-2) / 4
		}
	}
	quarter(m.Emb[cfg.Dim:]) // row 0 (PAD) stays zero
	for i := range m.Convs {
		quarter(m.Convs[i].W)
		quarter(m.Convs[i].B)
	}
	quarter(m.OutW)
	quarter(m.OutB)
	m.Invalidate()
	return m
}

// TestGoldenLoaded renders every view at 1024×700 with the demo corpus, the
// exact model with a linear baseline, its profiles, its audit and an
// explanation.
func TestGoldenLoaded(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the audit; the race pass (make test-race) runs -short")
	}
	// One worker: the profiles' and the audit's ties are broken in one order.
	procs := runtime.GOMAXPROCS(1)
	defer runtime.GOMAXPROCS(procs)
	w, st, q := demoWindow(t, fyne.NewSize(smallScreen.Width, smallScreen.Height-menuBar))
	cs := itemGet(st.data)
	// The linear baseline's fit is the same on any number of workers (its
	// objective sums in a fixed order: linear's TestObjectiveThreads), and
	// under GOMAXPROCS 1 it took 65 s of CPU here against 10 s on two: it
	// is fitted with all of them.
	runtime.GOMAXPROCS(procs)
	m := withBaseline(t, exactModel(t, cs.Train.Texts(), cs.Train.Labels), cs)
	runtime.GOMAXPROCS(1)
	ms, err := newModelState(m, "exact.tt")
	if err != nil {
		t.Fatal(err)
	}
	if ms.Eval, err = evaluate(ms, cs); err != nil {
		t.Fatal(err)
	}
	st.setModel(ms)
	q.waitFor(t, "the profiles", func() bool { return itemGet(st.profiles) != nil })
	st.runAudit(nil)
	q.waitFor(t, "the audit", func() bool { return itemGet(st.audit) != nil })
	text := "Dear crew, my bag was left on the upper deck. TKREF-12345"
	_ = st.explainText.Set(text)
	q.waitFor(t, "the explanation", func() bool { return st.whyView.shown != nil && st.whyView.shown.Text == text })
	st.setStatus("Ready.")
	for i, spec := range st.specs {
		st.tabs.SelectIndex(i)
		q.drain()
		assertRenders(t, filepath.Join("loaded", goldenName(spec.Title)), w.Canvas())
	}
	// The audit's table exports as audit --export writes it: its columns,
	// a row per cue listed, numbers where it holds numbers.
	var b bytes.Buffer
	if err := st.auditView.exportTable().writeCSV(&b); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(&b).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	a := itemGet(st.audit).R
	if cols := report.CueTable(a).Columns; !slices.Equal(recs[0], cols) || len(recs) != 1+len(a.Ranked) {
		t.Fatalf("audit CSV: header %v, %d rows; want %v, %d rows", recs[0], len(recs)-1, cols, len(a.Ranked))
	}
	at := slices.Index(recs[0], "label_share")
	for _, r := range recs[1:] {
		if _, err := strconv.ParseFloat(r[at], 64); err != nil {
			t.Errorf("audit CSV: label_share %q is not a number", r[at])
		}
	}
}

//go:build ci

package gui

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"telltale/cnn"
)

// queue stands in for the UI goroutine: background work posts functions
// to it and the test goroutine runs them while it waits.
type queue struct {
	mu  sync.Mutex
	fns []func()
}

func (q *queue) post(fn func()) {
	q.mu.Lock()
	q.fns = append(q.fns, fn)
	q.mu.Unlock()
}

func (q *queue) drain() {
	for {
		q.mu.Lock()
		fns := q.fns
		q.fns = nil
		q.mu.Unlock()
		if len(fns) == 0 {
			return
		}
		for _, f := range fns {
			f()
		}
	}
}

// waitFor runs posted UI work until cond holds, failing after a deadline.
func (q *queue) waitFor(t *testing.T, what string, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(3 * time.Minute)
	for {
		q.drain()
		if cond() {
			return
		}
		if time.Now().After(deadline) {
			t.Fatalf("gave up waiting for %s", what)
		}
		time.Sleep(5 * time.Millisecond)
	}
}

func demoBytes(t *testing.T) (train, testSplit []byte) {
	t.Helper()
	train, err := os.ReadFile(filepath.Join("..", "testdata", "demo", "train.csv"))
	if err != nil {
		t.Fatalf("demo corpus missing (run go generate at the repository root): %v", err)
	}
	testSplit, err = os.ReadFile(filepath.Join("..", "testdata", "demo", "test.csv"))
	if err != nil {
		t.Fatalf("demo corpus missing: %v", err)
	}
	return train, testSplit
}

// TestWholeSession walks the main job through the window: open the demo
// corpus, train a tiny model, select a filter, explain a sentence and mask
// a filter, checking widget state and what is painted against the numbers
// of the packages underneath.
func TestWholeSession(t *testing.T) {
	a := test.NewTempApp(t)
	tr, te := demoBytes(t)
	q := &queue{}
	w, st := newWindow(a, Options{DemoTrain: tr, DemoTest: te}, q.post)
	w.Resize(fyne.NewSize(1180, 760))
	t.Cleanup(st.cancelAll)

	q.waitFor(t, "the demo corpus", func() bool { return itemGet(st.data) != nil })
	cs := itemGet(st.data)
	if got := len(cs.Train.Labels); got != 5 {
		t.Fatalf("demo corpus has %d labels, want the five teams", got)
	}
	if !strings.Contains(test.RenderToMarkup(w.Canvas()), "Open: the built-in demo corpus") {
		t.Errorf("corpus view does not name the opened corpus")
	}

	// Tiny recipe; two epochs.
	_ = st.recipe.widths.Set("2,3")
	_ = st.recipe.filters.Set("6")
	_ = st.recipe.dim.Set("12")
	_ = st.recipe.epochs.Set("2")
	test.Tap(st.trainButtons[0])
	if !st.trainButtons[0].Disabled() || st.trainButtons[1].Disabled() {
		t.Errorf("while training, Train should be disabled and Stop enabled")
	}
	q.waitFor(t, "the trained model and its profiles", func() bool { return itemGet(st.profiles) != nil })
	ms := itemGet(st.model)
	if ms.Model.Config.NumFilters() != 12 || ms.Eval == nil {
		t.Fatalf("model has %d filters (want 12) or no evaluation", ms.Model.Config.NumFilters())
	}
	if ms.Eval.Metrics.N != len(cs.Test.Examples) {
		t.Errorf("scorecard covers %d texts, held-out split has %d", ms.Eval.Metrics.N, len(cs.Test.Examples))
	}
	if st.trainButtons[0].Disabled() {
		t.Errorf("Train button still disabled after training")
	}
	if len(st.trainRun.lossY) == 0 || len(st.trainRun.devF1) != len(ms.Run.Epochs) {
		t.Errorf("curves: %d loss points, %d dev points for %d epochs", len(st.trainRun.lossY), len(st.trainRun.devF1), len(ms.Run.Epochs))
	}
	// The reliability bins drawn must reproduce cnn's expected calibration
	// error (Guo et al. 2017: ECE = Σ |B|/n · |acc − conf|).
	var ece float64
	for _, b := range reliabilityBins(ms.Eval, cnn.DefaultBins) {
		ece += float64(b.count) / float64(len(ms.Eval.Pred)) * math.Abs(b.acc-b.conf)
	}
	if math.Abs(ece-ms.Eval.Metrics.ECE) > 1e-9 {
		t.Errorf("reliability bins give ECE %.12f, cnn says %.12f", ece, ms.Eval.Metrics.ECE)
	}

	// Select a filter: the painted n-gram tokens carry the profile's slot
	// scores.
	st.showFilter(3)
	fp := st.filterShown()
	if fp == nil || fp.Filter != 3 {
		t.Fatalf("filter 3 not shown: %+v", fp)
	}
	var want []float64
	for _, n := range fp.TopNgrams {
		want = append(want, n.Slots...)
	}
	chips := st.filterNgramChips()
	if len(chips) != len(want) {
		t.Fatalf("%d n-gram tokens painted, profile has %d", len(chips), len(want))
	}
	for i, c := range chips {
		if c.value != want[i] {
			t.Errorf("n-gram token %d painted %v, slot score %v", i, c.value, want[i])
		}
	}

	// Explain a sentence typed into the box.
	st.tabs("Why this label")
	st.explainEntry.SetText("")
	test.Type(st.explainEntry, "the staff were not friendly at all")
	q.waitFor(t, "the explanation", func() bool {
		e := st.explainShown()
		return e != nil && e.Text == "the staff were not friendly at all" && e.E != nil
	})
	e := st.explainShown().E
	chips = st.explainChips()
	if len(chips) != len(e.Tokens) || len(chips) != 7 {
		t.Fatalf("%d tokens painted, explanation has %d (want 7)", len(chips), len(e.Tokens))
	}
	for i, c := range chips {
		if c.value != e.Attributions.Exact[i][e.Class] || c.text != e.Tokens[i].Text {
			t.Errorf("token %d painted %q %v, explanation %q %v", i, c.text, c.value, e.Tokens[i].Text, e.Attributions.Exact[i][e.Class])
		}
	}
	markup := test.RenderToMarkup(w.Canvas())
	if !strings.Contains(markup, "Predicted: "+e.Label) {
		t.Errorf("explain view does not show the predicted label %q", e.Label)
	}
	_ = st.explainMethod.Set(methodOcclusion)
	q.drain()
	for i, c := range st.explainChips() {
		if c.value != e.Attributions.Occlusion[i] {
			t.Errorf("occlusion: token %d painted %v, explanation %v", i, c.value, e.Attributions.Occlusion[i])
		}
	}

	// Mask two filters: the masked metrics are those of cnn.Evaluate on a
	// masked copy, and the open model stays unmasked.
	st.tabs("Cue audit")
	st.maskTicks([]int{0, 4})
	test.Tap(st.maskApply)
	q.waitFor(t, "the masked evaluation", func() bool { return st.maskShown() != nil })
	mk := st.maskShown()
	if !mk.Model.IsMasked(0) || !mk.Model.IsMasked(4) || mk.Model.IsMasked(1) || ms.Model.IsMasked(0) {
		t.Fatalf("mask not as ticked (or leaked into the open model)")
	}
	ref := ms.Model.Clone()
	ref.Masked = make([]bool, ref.Config.NumFilters())
	ref.Masked[0], ref.Masked[4] = true, true
	d, err := encode(ms.Tok, ms.Vocab, cs.Test, ms.Model.Labels)
	if err != nil {
		t.Fatal(err)
	}
	met, _, err := cnn.Evaluate(ref, d, 0)
	if err != nil {
		t.Fatal(err)
	}
	if met.Accuracy != mk.Eval.Metrics.Accuracy || met.MacroF1 != mk.Eval.Metrics.MacroF1 {
		t.Errorf("masked view shows accuracy %v macro-F1 %v; cnn.Evaluate gives %v %v",
			mk.Eval.Metrics.Accuracy, mk.Eval.Metrics.MacroF1, met.Accuracy, met.MacroF1)
	}
	if !strings.Contains(test.RenderToMarkup(w.Canvas()), "Masked filters [0 4].") {
		t.Errorf("audit view does not say which filters are masked")
	}

	// Save the masked model and read it back.
	path := filepath.Join(t.TempDir(), "masked.tt")
	if err := mk.Model.Save(path); err != nil {
		t.Fatal(err)
	}
	back, err := cnn.Load(path)
	if err != nil || !back.IsMasked(4) {
		t.Fatalf("saved masked model: %v, masked(4)=%v", err, err == nil && back.IsMasked(4))
	}
}

// TestBadDataShowsDialog: a file without the label column gives a dialog
// with the reader's message, not a crash.
func TestBadDataShowsDialog(t *testing.T) {
	a := test.NewTempApp(t)
	path := filepath.Join(t.TempDir(), "bad.csv")
	if err := os.WriteFile(path, []byte("text,team\nhello there,a\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	q := &queue{}
	w, st := newWindow(a, Options{DataPath: path}, q.post)
	w.Resize(fyne.NewSize(1000, 700))
	ready := false
	st.opts.OnReady = func() { ready = true }
	q.waitFor(t, "the load to fail", func() bool { return !st.running(taskLoad) && ready })
	top := w.Canvas().Overlays().Top()
	if top == nil {
		t.Fatalf("no error dialog shown")
	}
	m := test.RenderObjectToMarkup(top)
	if !strings.Contains(m, "bad.csv") {
		t.Errorf("error dialog does not name the file:\n%s", m)
	}
	if itemGet(st.data) != nil {
		t.Errorf("a corpus was opened from a bad file")
	}
}

// TestViewIndex checks the start-view names main.go passes on.
func TestViewIndex(t *testing.T) {
	vs := views()
	for _, c := range []struct {
		in   string
		want int
	}{{"Corpus", 0}, {"corpus", 0}, {"why", 4}, {"Cue audit", 5}, {"f", 3}, {"nope", -1}, {"", -1}} {
		if got := viewIndex(vs, c.in); got != c.want {
			t.Errorf("viewIndex(%q) = %d, want %d", c.in, got, c.want)
		}
	}
}

package gui

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"telltale/cnn"
	"telltale/explain"
	"telltale/internal/testref"
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

// demoBytes reads the demo corpus's training and test files. In the race
// build (testref.Race) it keeps every fourth text of each (demoSlice): the
// race pass checks the window's goroutines (training, profiles, audit and
// explanations as tasks, their progress posted to the UI), which run the
// same on a quarter of the texts, ten times slower under the detector; the
// full build reads the whole files. Tests whose premise needs the whole
// corpus read demoFiles.
func demoBytes(t *testing.T) (train, testSplit []byte) {
	t.Helper()
	train, testSplit = demoFiles(t)
	if testref.Race {
		train, testSplit = demoSlice(t, train, 4), demoSlice(t, testSplit, 4)
	}
	return train, testSplit
}

// demoFiles reads the demo corpus's training and test files whole.
func demoFiles(t *testing.T) (train, testSplit []byte) {
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

// demoSlice keeps the header and every k-th record of the CSV file b.
func demoSlice(t *testing.T, b []byte, k int) []byte {
	t.Helper()
	recs, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	w := csv.NewWriter(&out)
	for i, r := range recs {
		if i == 0 || (i-1)%k == 0 {
			if err := w.Write(r); err != nil {
				t.Fatal(err)
			}
		}
	}
	w.Flush()
	if err := w.Error(); err != nil {
		t.Fatal(err)
	}
	return out.Bytes()
}

// smallRecipe puts a recipe in the form that trains in seconds: widths
// 3, 4, 5 with 10 maps each, 16 dimensions, three epochs. The race pass
// (-short) leaves out the linear baseline's fit: its optimizer runs ten
// times slower under the race detector and takes no part in the window's
// concurrency; the full run keeps it, and the whole-session test always.
func smallRecipe(st *State) {
	_ = st.recipe.widths.Set("3,4,5")
	_ = st.recipe.maps.Set("10")
	_ = st.recipe.dim.Set("16")
	_ = st.recipe.epochs.Set("3")
	if testing.Short() {
		_ = st.recipe.baseline.Set(false)
	}
}

// demoWindow opens a window of the given size (zero: the toolkit's own)
// on the demo corpus and waits until the corpus is loaded; its tasks are
// stopped when t ends.
func demoWindow(t *testing.T, size fyne.Size) (fyne.Window, *State, *queue) {
	t.Helper()
	a := test.NewTempApp(t)
	tr, te := demoBytes(t)
	q := &queue{}
	w, st := newWindow(a, Options{DemoTrain: tr, DemoTest: te}, q.post)
	if size != (fyne.Size{}) {
		w.Resize(size)
	}
	t.Cleanup(st.cancelAll)
	q.waitFor(t, "the demo corpus", func() bool { return itemGet(st.data) != nil })
	return w, st, q
}

// trainedWindow opens the demo corpus in a window of the given size,
// trains the small recipe and waits for the filter profiles.
func trainedWindow(t *testing.T, size fyne.Size) (fyne.Window, *State, *queue) {
	t.Helper()
	return trainedWindowOf(t, size, true)
}

// leanWindow is trainedWindow without the linear baseline, for tests that
// never read it (the fit is most of the training's cost on the demo).
func leanWindow(t *testing.T, size fyne.Size) (fyne.Window, *State, *queue) {
	t.Helper()
	return trainedWindowOf(t, size, false)
}

// leanModel is the model the first sharedLeanWindow trained, with its run.
var leanModel struct {
	sync.Mutex
	m   *cnn.Model
	run *cnn.TrainResult
}

// sharedLeanWindow is leanWindow for tests that read the trained model and
// what the window shows of it (profiles, explanations, tables), not the
// run that trained it. The first call trains in its window as leanWindow
// does; later calls open the demo corpus and give the window a copy of
// that model as the window gives itself a model it trained (trainWork:
// evaluated on the test split, set, then profiled), rather than training
// the same recipe on the same splits again. TestWholeSession and
// TestNewRunStartsClean still train in their windows, in the race pass
// too.
func sharedLeanWindow(t *testing.T, size fyne.Size) (fyne.Window, *State, *queue) {
	t.Helper()
	leanModel.Lock()
	defer leanModel.Unlock()
	if leanModel.m == nil {
		w, st, q := leanWindow(t, size)
		ms := itemGet(st.model)
		leanModel.m, leanModel.run = ms.Model.Clone(), ms.Run
		return w, st, q
	}
	w, st, q := demoWindow(t, size)
	ms, err := newModelState(leanModel.m.Clone(), "")
	if err != nil {
		t.Fatal(err)
	}
	ms.Run = leanModel.run
	if ms.Eval, err = evaluate(ms, itemGet(st.data)); err != nil {
		t.Fatal(err)
	}
	ms.Model.Info.Test = &ms.Eval.Metrics
	st.setModel(ms)
	q.waitFor(t, "the profiles", func() bool { return itemGet(st.profiles) != nil })
	return w, st, q
}

// trainedWindowOf is trainedWindow, with the form's linear baseline
// (smallRecipe's choice) or without any.
func trainedWindowOf(t *testing.T, size fyne.Size, baseline bool) (fyne.Window, *State, *queue) {
	t.Helper()
	w, st, q := demoWindow(t, size)
	smallRecipe(st)
	if !baseline {
		_ = st.recipe.baseline.Set(false)
	}
	st.trainNow()
	q.waitFor(t, "the trained model and its profiles", func() bool { return itemGet(st.profiles) != nil })
	return w, st, q
}

// rankedWords is the ranking of e's probabilities written as the strip
// under the verdict writes it, computed here from the explanation.
func rankedWords(e *explain.Explanation) string {
	idx := make([]int, len(e.Labels))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return e.Probabilities[idx[a]] > e.Probabilities[idx[b]] })
	var parts []string
	for _, i := range idx {
		parts = append(parts, fmt.Sprintf("%s %.3f", e.Labels[i], e.Probabilities[i]))
	}
	return strings.Join(parts, "  ·  ")
}

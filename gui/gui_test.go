package gui

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"sort"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"telltale/cnn"
	"telltale/explain"
	"telltale/internal/glossary"
)

// session is the window of TestWholeSession and what it has shown so far.
type session struct {
	t  *testing.T
	w  fyne.Window
	st *State
	q  *queue
	cs *corpusState
	ms *modelState
}

// TestWholeSession walks the main job through the window: open the demo
// corpus, train a tiny model, select a filter, explain a sentence, run the
// audit and mask filters, checking widget state and what is painted against
// the numbers of the packages underneath.
func TestWholeSession(t *testing.T) {
	a := test.NewTempApp(t)
	tr, te := demoBytes(t)
	q := &queue{}
	w, st := newWindow(a, Options{DemoTrain: tr, DemoTest: te}, q.post)
	w.Resize(fyne.NewSize(1180, 760))
	t.Cleanup(st.cancelAll)
	s := &session{t: t, w: w, st: st, q: q}
	s.corpus()
	s.training()
	s.results()
	s.filter()
	s.explanation()
	top := s.audit()
	s.filterList(top)
	s.masking(top)
}

// corpus: the demo corpus opens with its test file as the test split.
func (s *session) corpus() {
	t, w, st, q := s.t, s.w, s.st, s.q
	q.waitFor(t, "the demo corpus", func() bool { return itemGet(st.data) != nil })
	cs := itemGet(st.data)
	s.cs = cs
	if got := len(cs.Train.Labels); got != 5 {
		t.Fatalf("demo corpus has %d labels, want the five teams", got)
	}
	if !strings.Contains(test.RenderToMarkup(w.Canvas()), "Open: the built-in demo corpus") {
		t.Errorf("corpus view does not name the opened corpus")
	}
	if cs.TestFile == nil || len(cs.Test.Examples) != len(cs.TestFile.Examples) || len(cs.Dev.Examples) == 0 {
		t.Errorf("the demo's test file is not the test split, or there is no dev split")
	}
}

// training: a small recipe trains with the buttons following the run, and
// the reliability bins drawn reproduce cnn's calibration error.
func (s *session) training() {
	t, st, q, cs := s.t, s.st, s.q, s.cs
	// A small recipe; three epochs.
	smallRecipe(st)
	tv := st.trainingView
	test.Tap(tv.trainBtn)
	if !tv.trainBtn.Disabled() || tv.stopBtn.Disabled() {
		t.Errorf("while training, Train should be disabled and Stop enabled")
	}
	q.waitFor(t, "the trained model and its profiles", func() bool { return itemGet(st.profiles) != nil })
	ms := itemGet(st.model)
	s.ms = ms
	if ms.Model.Config.NumFilters() != 3*10 || ms.Eval == nil {
		t.Fatalf("model has %d filters (want 3 widths × 10) or no evaluation", ms.Model.Config.NumFilters())
	}
	if ms.Eval.Metrics.N != len(cs.Test.Examples) {
		t.Errorf("Results cover %d texts, the test split has %d", ms.Eval.Metrics.N, len(cs.Test.Examples))
	}
	if tv.trainBtn.Disabled() {
		t.Errorf("Train button still disabled after training")
	}
	if d := tv.run.snapshot(); len(d.LossY) == 0 || len(d.DevF1) != len(ms.Run.Epochs) || len(d.Epochs) != len(ms.Run.Epochs) {
		t.Errorf("curves: %d loss points, %d dev points, %d epoch rows for %d epochs", len(d.LossY), len(d.DevF1), len(d.Epochs), len(ms.Run.Epochs))
	}
	// The reliability bins drawn must reproduce cnn's expected calibration
	// error (Guo et al. 2017: ECE = Σ |B|/n · |acc − conf|).
	var ece float64
	for _, b := range reliabilityBins(ms.Eval, cnn.DefaultBins) {
		ece += float64(b.Count) / float64(len(ms.Eval.Pred)) * math.Abs(b.Acc-b.Conf)
	}
	if math.Abs(ece-ms.Eval.Metrics.ECE) > 1e-9 {
		t.Errorf("reliability bins give ECE %.12f, cnn says %.12f", ece, ms.Eval.Metrics.ECE)
	}
}

// filter: the painted n-gram tokens of a filter carry its slot scores.
func (s *session) filter() {
	t, st, q := s.t, s.st, s.q
	// Select a filter: the painted n-gram tokens carry the profile's slot
	// scores.
	st.showFilter(3, nil)
	q.drain()
	fp := st.filtersView.shown
	if fp == nil || fp.Filter != 3 {
		t.Fatalf("filter 3 not shown: %+v", fp)
	}
	var want []float64
	for _, n := range fp.TopNgrams {
		want = append(want, n.Slots...)
	}
	chips := st.filtersView.ngramChips()
	if len(chips) != len(want) {
		t.Fatalf("%d n-gram tokens painted, profile has %d", len(chips), len(want))
	}
	for i, c := range chips {
		if c.value != want[i] {
			t.Errorf("n-gram token %d painted %v, slot score %v", i, c.value, want[i])
		}
	}
	// So do its negative n-grams.
	want = want[:0]
	for _, n := range fp.Negatives {
		want = append(want, n.Slots...)
	}
	chips = st.filtersView.negativeChips()
	if len(chips) != len(want) {
		t.Fatalf("%d negative n-gram tokens painted, profile has %d", len(chips), len(want))
	}
	for i, c := range chips {
		if c.value != want[i] {
			t.Errorf("negative n-gram token %d painted %v, slot score %v", i, c.value, want[i])
		}
	}
}

// explanation: a typed text is painted with the explanation's numbers.
func (s *session) explanation() {
	t, w, st, q := s.t, s.w, s.st, s.q
	// Explain a sentence typed into the box.
	st.show(titleWhy)
	q.drain()
	wv := st.whyView
	wv.entry.SetText("")
	test.Type(wv.entry, "the staff were not friendly at all")
	q.waitFor(t, "the explanation", func() bool {
		e := wv.shown
		return e != nil && e.Text == "the staff were not friendly at all" && e.E != nil
	})
	e := wv.shown.E
	chips := wv.chips()
	if len(chips) != len(e.Tokens) || len(chips) != 7 {
		t.Fatalf("%d tokens painted, explanation has %d (want 7)", len(chips), len(e.Tokens))
	}
	// By default the shares of the log-odds of the predicted label against
	// the runner-up.
	for i, c := range chips {
		if c.value != e.LogOdds.Tokens[i] || c.text != e.Tokens[i].Text {
			t.Errorf("token %d painted %q %v, explanation %q %v", i, c.text, c.value, e.Tokens[i].Text, e.LogOdds.Tokens[i])
		}
	}
	markup := test.RenderToMarkup(w.Canvas())
	if !strings.Contains(markup, "Predicted: "+e.Label) || !strings.Contains(markup, fmt.Sprintf("log p(%s)/p(%s) = %.4f", e.Label, e.Labels[e.RunnerUp], e.LogOdds.Value)) {
		t.Errorf("explain view does not show the predicted label %q and the log-odds %.4f against %q", e.Label, e.LogOdds.Value, e.Labels[e.RunnerUp])
	}
	// The filters that fired carry their parts of the log-odds.
	for _, row := range wv.fired.rows {
		k := slices.IndexFunc(e.Filters, func(f explain.FiredFilter) bool { return fmt.Sprint(f.Filter) == row[0] })
		if k < 0 || row[colFiredPart] != signed4(e.LogOdds.Filters[k]) {
			t.Errorf("fired filter row %q: not the explanation's part of the log-odds", row)
		}
	}
	if len(wv.kept.rows) != len(e.KeptDown) {
		t.Errorf("%d windows kept down listed, the explanation has %d", len(wv.kept.rows), len(e.KeptDown))
	}
	// A label chosen: the shares of its centred logit, then integrated
	// gradients of it.
	c := (e.Class + 1) % len(e.Labels)
	wv.class.SetSelected(e.Labels[c])
	q.drain()
	for i, ch := range wv.chips() {
		if ch.value != e.Centred[c].Tokens[i] {
			t.Errorf("centred logit of %s: token %d painted %v, explanation %v", e.Labels[c], i, ch.value, e.Centred[c].Tokens[i])
		}
	}
	wv.method.SetSelected(methodIG)
	q.drain()
	for i, ch := range wv.chips() {
		if ch.value != e.Integrated.Centred[c].Tokens[i] {
			t.Errorf("integrated gradients of the centred logit of %s: token %d painted %v, explanation %v", e.Labels[c], i, ch.value, e.Integrated.Centred[c].Tokens[i])
		}
	}
	wv.class.SetSelected(classPredicted)
	// The probabilities under the verdict, ranked.
	if want := rankedWords(e); wv.strip.words() != want {
		t.Errorf("ranked strip says %q, want %q", wv.strip.words(), want)
	}
	wv.method.SetSelected(methodOcclusion)
	q.drain()
	for i, c := range wv.chips() {
		if c.value != e.Attributions.Occlusion[i] {
			t.Errorf("occlusion: token %d painted %v, explanation %v", i, c.value, e.Attributions.Occlusion[i])
		}
	}
}

// audit runs the audit and checks what it flags and lists; it returns the
// top suspect.
func (s *session) audit() explain.Suspect {
	t, w, st, q := s.t, s.w, s.st, s.q
	// Run the audit (Run › Run the audit). The token test runs on the
	// training split, so whatever the model learned, the two cues planted
	// there (testdata/demo/README.md: "kioskmail" in 80% of lost-property
	// texts, "tkref" in 75% of complaints texts) must be flagged for their
	// labels.
	st.auditNow()
	q.waitFor(t, "the audit", func() bool { return itemGet(st.audit) != nil })
	au := itemGet(st.audit)
	planted := map[string]string{"kioskmail": "lost-property", "tkref": "complaints"}
	for tok, label := range planted {
		found := false
		for _, f := range au.A.Tokens {
			if f.Token == tok {
				found = f.Label == label
			}
		}
		if !found {
			t.Errorf("planted cue %q not flagged for %s", tok, label)
		}
	}
	if len(au.A.Filters) == 0 {
		t.Fatalf("the audit lists no suspects")
	}
	keyed := map[string]int{} // planted cue → first suspect keyed on it
	for i, s := range au.A.Filters {
		for _, c := range s.Cues {
			if _, ok := planted[c.Token]; ok {
				if _, seen := keyed[c.Token]; !seen {
					keyed[c.Token] = i
				}
			}
		}
	}
	t.Logf("suspects keyed on the planted cues (rank from 0): %v of %d", keyed, len(au.A.Filters))
	// The small recipe above (3 widths × 10 filters, 3 epochs) is enough
	// for filters to learn both cues: each must key a top-5 suspect.
	for tok := range planted {
		if r, ok := keyed[tok]; !ok || r >= 5 {
			t.Errorf("no suspect among the top 5 keys on the planted cue %q", tok)
		}
	}
	// The suspect table shows every suspect with the parts of its score;
	// the Filters view shows the same score in its suspicion column.
	av := st.auditView
	if got := len(av.suspects.rows); got != len(au.A.Filters) {
		t.Errorf("suspect table has %d rows, the audit %d suspects", got, len(au.A.Filters))
	}
	top := au.A.Filters[0]
	row := av.suspects.rows[0]
	if row[2] != fmt.Sprint(top.Filter) || row[5] != fmt.Sprintf("%.4f", top.Score) || row[6] != fmt.Sprintf("%.3f", top.Parts.FlaggedShare) {
		t.Errorf("suspect row %q does not show suspect %d with score %v", row, top.Filter, top.Score)
	}
	if got := au.suspicionOf(top.Filter); got != fmt.Sprintf("%.4f", top.Score) {
		t.Errorf("Filters view suspicion of filter %d = %q, audit score %v", top.Filter, got, top.Score)
	}
	// The score's formula, in the glossary's words, heads the Suspects tab.
	av.showTab("Suspects")
	term, _ := glossary.Lookup("suspicion score")
	if !strings.Contains(test.RenderToMarkup(w.Canvas()), term.Formula) {
		t.Errorf("the audit view's Suspects tab does not show the score formula %q", term.Formula)
	}
	av.showTab("Cues")
	return top
}

// filterList: the Filters view ranks by the audit's scores and searches
// cue words.
func (s *session) filterList(top explain.Suspect) {
	t, st := s.t, s.st
	// The Filters view: sorting by suspicion (descending) puts the top
	// suspect first, and searching for a cue word finds its filters.
	fl := st.filtersView.list
	fl.sortCol, fl.desc = -1, false
	fl.sortBy(colFilterSuspicion)
	if got := fl.rows[fl.visible(0)][0]; got != fmt.Sprint(top.Filter) {
		t.Errorf("filters sorted by suspicion start with filter %s, want the top suspect %d", got, top.Filter)
	}
	fl.setQuery("kioskmail")
	if len(fl.order) == 0 {
		t.Errorf("searching the filter list for kioskmail finds nothing")
	}
	for i := range fl.order {
		if r := fl.rows[fl.visible(i)]; r[colFilterCues] == "" && !strings.Contains(r[len(r)-1], "kioskmail") {
			t.Errorf("search for kioskmail shows filter %s with neither a cue nor an n-gram holding it", r[0])
		}
	}
	fl.setQuery("")
}

// masking: masked metrics are those of cnn.Evaluate on explain.MaskFilters'
// copy, and the masked model saves and loads.
func (s *session) masking(top explain.Suspect) {
	t, st, q, cs, ms := s.t, s.st, s.q, s.cs, s.ms
	av := st.auditView
	// Clicking the mask cell of the top suspect masks it at once.
	av.showTab("Suspects")
	av.suspects.table.Select(widget.TableCellID{Row: 0, Col: colMask})
	q.waitFor(t, "the masked evaluation", func() bool {
		mk := av.masking.mask
		return mk != nil && slices.Equal(mk.Filters, []int{top.Filter})
	})

	// Tick the top suspect and filter 0 in the suspect table / filter
	// list: the masked metrics are those of cnn.Evaluate on
	// explain.MaskFilters' copy, and the open model stays unmasked.
	maskSet := []int{top.Filter}
	if top.Filter != 0 {
		maskSet = append(maskSet, 0)
	}
	av.masking.setTicks(maskSet)
	sort.Ints(maskSet)
	q.waitFor(t, "the masked evaluation", func() bool { return slices.Equal(av.masking.mask.Filters, maskSet) })
	mk := av.masking.mask
	for g := range ms.Model.Config.NumFilters() {
		in := slices.Contains(maskSet, g)
		if mk.Model.IsMasked(g) != in || ms.Model.IsMasked(g) {
			t.Fatalf("filter %d: masked %v in the copy (want %v), %v in the open model (want false)", g, mk.Model.IsMasked(g), in, ms.Model.IsMasked(g))
		}
	}
	ref, err := explain.MaskFilters(ms.Model, maskSet)
	if err != nil {
		t.Fatal(err)
	}
	d, err := cnn.EncodeDataset(ms.Enc, cs.Test, ms.Model.Labels, 0)
	if err != nil {
		t.Fatal(err)
	}
	met, _, err := cnn.Evaluate(ref, d, 0)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(met, mk.Eval.Metrics) {
		t.Errorf("masked view shows %+v; cnn.Evaluate on explain.MaskFilters' copy gives %+v", mk.Eval.Metrics, met)
	}
	wantRow := []string{"accuracy", fmt.Sprintf("%.4f", ms.Eval.Metrics.Accuracy), fmt.Sprintf("%.4f", met.Accuracy), fmt.Sprintf("%+.4f", met.Accuracy-ms.Eval.Metrics.Accuracy)}
	if note := av.masking.note; note.Text != maskedNote(maskSet) || !note.Visible() || !strings.Contains(note.Text, "masked copy") {
		t.Errorf("audit view says %q, not which filters are masked", note.Text)
	}
	if got := av.masking.compare.rows; len(got) == 0 || !slices.Equal(got[0], wantRow) {
		t.Errorf("before/after table starts %q, want %q", got, wantRow)
	}

	// Save the masked model and read it back.
	path := filepath.Join(t.TempDir(), "masked.tt")
	if err := mk.Model.Save(path); err != nil {
		t.Fatal(err)
	}
	back, err := cnn.Load(path)
	if err != nil || !back.IsMasked(top.Filter) {
		t.Fatalf("saved masked model: %v, masked(%d)=%v", err, top.Filter, err == nil && back.IsMasked(top.Filter))
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
	ready := false
	w, st := newWindow(a, Options{DataPath: path, OnReady: func() { ready = true }}, q.post)
	w.Resize(fyne.NewSize(1000, 700))
	q.waitFor(t, "the load to fail", func() bool { return st.tasks.idle(taskLoad) && ready })
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
	vs := viewTable()
	for _, c := range []struct {
		in   string
		want int
	}{{"Corpus", 0}, {"corpus", 0}, {"why", 4}, {"Cue audit", 5}, {"f", 3}, {"res", 2}, {"nope", -1}, {"", -1}} {
		if got := viewIndex(vs, c.in); got != c.want {
			t.Errorf("viewIndex(%q) = %d, want %d", c.in, got, c.want)
		}
	}
}

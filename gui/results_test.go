package gui

import (
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
	"telltale/linear"

	"gonum.org/v1/plot/vg"
)

// withBaseline fits the linear baseline into m as cnn.TrainText does: on
// the words of its tokenizer over cs's training split, its C chosen by
// macro-F1 on the dev split.
func withBaseline(t *testing.T, m *cnn.Model, cs *corpusState) *cnn.Model {
	t.Helper()
	tok, err := corpus.NewTokenizer(m.Tokenizer)
	if err != nil {
		t.Fatal(err)
	}
	split := func(d *corpus.Dataset) linear.Split {
		y, err := d.LabelIndex(m.Labels)
		if err != nil {
			t.Fatal(err)
		}
		s := linear.Split{Labels: y}
		for _, text := range d.Texts() {
			var words []string
			for _, tk := range tok.Tokenize(text) {
				words = append(words, tk.Text)
			}
			s.Docs = append(s.Docs, words)
		}
		return s
	}
	macroF1 := func(gold, pred []int) float64 { return cnn.ComputeMetrics(m.Labels, gold, pred, nil, 0).MacroF1 }
	if m.Baseline, err = linear.Fit(context.Background(), split(cs.Train), split(cs.Dev), m.Labels, linear.DefaultConfig(), macroF1, nil); err != nil {
		t.Fatal(err)
	}
	return m
}

// results: a model trained with the form's default recipe carries the
// linear baseline; the Results view shows both with the figures cnn
// computes on the test split (cnn.CompareBaseline, cnn.FiguresOf) and the
// McNemar test in the command line's words.
func (s *session) results() {
	t, w, st, q, ms, cs := s.t, s.w, s.st, s.q, s.ms, s.cs
	if testing.Short() {
		s.resultsWithoutBaseline()
		return
	}
	if ms.Model.Baseline == nil || ms.Eval.Baseline == nil {
		t.Fatalf("the default recipe's model carries no baseline (%v) or was not compared with it", ms.Model.Baseline == nil)
	}
	want, err := cnn.CompareBaseline(ms.Model, cs.Test, 0)
	if err != nil {
		t.Fatal(err)
	}
	if ms.Eval.Baseline.McNemar != want.McNemar || ms.Eval.Baseline.Baseline.Accuracy != want.Baseline.Accuracy ||
		want.CNN.Accuracy != ms.Eval.Metrics.Accuracy {
		t.Errorf("the window's comparison %+v, cnn's %+v", ms.Eval.Baseline, want)
	}
	f := cnn.FiguresOf(ms.Eval.Metrics, want)
	if !reflect.DeepEqual(ms.Eval.Figures, f) {
		t.Errorf("the window's figures %+v, cnn's %+v", ms.Eval.Figures, f)
	}
	st.show(titleResults)
	q.drain()
	// The labels wrap, so the painted text is checked line by line and the
	// labels' whole text against the figures.
	rv := st.resultsView
	shown := rv.headline.Text + "\n" + rv.beside.Text
	sentence := f.McNemar.Sentence()
	for _, part := range []string{
		"accuracy " + f.CNN.Accuracy.String() + ", macro-F1 " + f.CNN.MacroF1.String(),
		"accuracy " + f.Baseline.Accuracy.String() + ", macro-F1 " + f.Baseline.MacroF1.String(),
		"T" + sentence[1:],
	} {
		if !strings.Contains(shown, part) {
			t.Errorf("the Results view lacks %q:\n%s", part, shown)
		}
	}
	markup := test.RenderToMarkup(w.Canvas())
	for _, label := range []*widget.Label{rv.headline, rv.beside} {
		for _, word := range strings.Fields(label.Text) {
			if !strings.Contains(markup, word) {
				t.Errorf("%q is not painted", word)
			}
		}
	}
	data, ok := st.resultsView.exportData().(resultsJSON)
	if !ok || data.Baseline == nil || data.Baseline.Metrics.Accuracy != want.Baseline.Accuracy || data.Baseline.C != ms.Model.Baseline.Classifier.C {
		t.Errorf("the view's export %+v", data)
	}
}

// resultsWithoutBaseline: the race pass trains without the baseline (see
// training); the Results view then shows cnn's figures of the test split
// and says that there is no baseline to set beside them.
func (s *session) resultsWithoutBaseline() {
	t, st, q, ms, cs := s.t, s.st, s.q, s.ms, s.cs
	if ms.Model.Baseline != nil || ms.Eval.Baseline != nil {
		t.Fatalf("trained without the baseline, the model carries one (%v) or was compared with one", ms.Model.Baseline != nil)
	}
	enc, err := ms.Model.Encoder()
	if err != nil {
		t.Fatal(err)
	}
	data, err := cnn.EncodeDataset(enc, cs.Test, ms.Model.Labels, 0)
	if err != nil {
		t.Fatal(err)
	}
	m, _, err := cnn.Evaluate(ms.Model, data, 0)
	if err != nil {
		t.Fatal(err)
	}
	if m.Accuracy != ms.Eval.Metrics.Accuracy || m.MacroF1 != ms.Eval.Metrics.MacroF1 {
		t.Errorf("the window's metrics %+v, cnn's %+v", ms.Eval.Metrics, m)
	}
	f := cnn.FiguresOf(ms.Eval.Metrics, nil)
	if !reflect.DeepEqual(ms.Eval.Figures, f) {
		t.Errorf("the window's figures %+v, cnn's %+v", ms.Eval.Figures, f)
	}
	st.show(titleResults)
	q.drain()
	rv := st.resultsView
	if want := "accuracy " + f.CNN.Accuracy.String() + ", macro-F1 " + f.CNN.MacroF1.String(); !strings.Contains(rv.headline.Text, want) {
		t.Errorf("the Results view's headline %q lacks %q", rv.headline.Text, want)
	}
	if !strings.Contains(rv.beside.Text, "carries no linear baseline") {
		t.Errorf("the Results view does not say the model has no baseline: %q", rv.beside.Text)
	}
}

// The Results view's line beside the headline says when the model carries
// no baseline.
func TestFigureLinesWithoutBaseline(t *testing.T) {
	m := cnn.ComputeMetrics([]string{"a", "b"}, []int{0, 1, 1, 0}, []int{0, 1, 0, 0}, nil, 0)
	head, beside := figureLines(cnn.FiguresOf(m, nil), &cnn.Model{}, false)
	if want := "accuracy " + cnn.WilsonInterval(3, 4, 0.95).String(); !strings.HasPrefix(head, want) {
		t.Errorf("head %q, want it to start %q", head, want)
	}
	if !strings.Contains(beside, "carries no linear baseline") || strings.Contains(beside, "McNemar") {
		t.Errorf("beside %q", beside)
	}
}

// The status line after a run gives the epoch the dev split chose (or
// says none did) and the test split's accuracy and macro-F1 with their
// intervals (cnn.HeadlineOf: Wilson for the accuracy), in one line, as the
// Results view writes them.
func TestTrainedStatus(t *testing.T) {
	m := cnn.ComputeMetrics([]string{"a", "b"}, []int{0, 1, 1, 0}, []int{0, 1, 0, 0}, nil, 0)
	h := cnn.HeadlineOf(m)
	got := trainedStatus("Trained", 3, true, h)
	want := "Trained: epoch 3 chosen on the dev split; test split: accuracy " + cnn.WilsonInterval(3, 4, 0.95).String() +
		", macro-F1 " + h.MacroF1.String() + " (95% intervals)."
	if got != want || strings.Contains(got, "\n") {
		t.Errorf("status %q, want %q", got, want)
	}
	// Without a dev split the last epoch is kept, and nothing chose it.
	if s := trainedStatus("Trained", 3, false, h); strings.Contains(s, "chosen on the dev split") || !strings.Contains(s, "no dev split") {
		t.Errorf("status without a dev split %q", s)
	}
	if head, _ := figureLines(cnn.FiguresOf(m, nil), &cnn.Model{}, false); !strings.Contains(got, head) {
		t.Errorf("status %q does not word the figures as the Results view does (%q)", got, head)
	}
}

// A run stopped before its baseline was fitted, in the window or as the
// model file records it, says so, rather than ask for the Linear baseline
// check that was on.
func TestFigureLinesStoppedBeforeBaseline(t *testing.T) {
	m := cnn.ComputeMetrics([]string{"a", "b"}, []int{0, 1, 1, 0}, []int{0, 1, 0, 0}, nil, 0)
	for _, c := range []struct {
		name    string
		m       *cnn.Model
		stopped bool
	}{
		{"stopped in the window", &cnn.Model{}, true},
		{"recorded by the model file", &cnn.Model{Info: cnn.Info{BaselineStopped: true}}, false},
	} {
		_, beside := figureLines(cnn.FiguresOf(m, nil), c.m, c.stopped)
		if !strings.Contains(beside, "stopped before the baseline was fitted") || strings.Contains(beside, "Linear baseline on") {
			t.Errorf("%s: beside %q", c.name, beside)
		}
	}
}

// Stopping a run that asked for the baseline, during its epochs, leaves a
// model without one, and the Results view says the run was stopped.
func TestStoppedRunSaysWhyNoBaseline(t *testing.T) {
	_, st, q := demoWindow(t, smallScreen)
	smallRecipe(st)
	_ = st.recipe.baseline.Set(true)
	_ = st.recipe.epochs.Set("50")
	_ = st.recipe.patience.Set("0")
	q.drain()
	st.trainNow()
	q.waitFor(t, "the first epoch", func() bool { return len(st.trainingView.epochs.rows) > 0 })
	st.cancel(taskTrain)
	q.waitFor(t, "the stopped run", func() bool { return st.tasks.idle(taskTrain) && st.tasks.settled(taskTrain) })
	q.drain()
	ms := itemGet(st.model)
	if ms == nil || ms.Model.Baseline != nil || !ms.BaselineStopped {
		t.Fatalf("the stopped run's model: %v", ms)
	}
	st.show(titleResults)
	q.drain()
	if b := st.resultsView.beside.Text; !strings.Contains(b, "stopped before the baseline was fitted") {
		t.Errorf("Results says %q", b)
	}
}

// The line beside the headline says what to try, in the form's words,
// where the baseline is significantly ahead (cnn.BaselineRemedies), and
// only there; not the fitted start for a model that has it.
func TestFigureLinesBaselineAhead(t *testing.T) {
	m := cnn.ComputeMetrics([]string{"a", "b"}, []int{0, 1, 1, 0}, []int{0, 1, 0, 0}, nil, 0)
	ahead := cnn.BaselineTest{CNNOnly: 5, BaselineOnly: 20, P: 0.0041}
	const fit, cw = `Word weights' start "fitted linear model"`, `Class weight "balanced"`
	for _, c := range []struct {
		name            string
		recipe          cnn.TrainConfig
		test            cnn.BaselineTest
		wantFit, wantCW bool
	}{
		{"ahead", cnn.TrainConfig{}, ahead, true, true},
		{"not significant", cnn.TrainConfig{}, cnn.BaselineTest{CNNOnly: 17, BaselineOnly: 29, P: 0.1}, false, false},
		{"the CNN ahead", cnn.TrainConfig{}, cnn.BaselineTest{CNNOnly: 20, BaselineOnly: 5, P: 0.0041}, false, false},
		{"fitted start already", cnn.TrainConfig{WideFit: true}, ahead, false, true},
	} {
		model := &cnn.Model{Config: cnn.Config{Wide: true}, Info: cnn.Info{Recipe: &c.recipe},
			Baseline: &linear.Model{Classifier: &linear.Classifier{C: 10}}}
		f := cnn.FiguresOf(m, nil)
		f.Baseline, f.McNemar = &f.CNN, &c.test
		_, beside := figureLines(f, model, false)
		if strings.Contains(beside, fit) != c.wantFit || strings.Contains(beside, cw) != c.wantCW ||
			strings.Contains(beside, "The baseline is ahead here") != (c.wantFit || c.wantCW) {
			t.Errorf("%s: %q; want the fitted start %v, the class weight %v", c.name, beside, c.wantFit, c.wantCW)
		}
	}
}

// The training form starts from cnn.DefaultRecipe, field for field, offers
// what `telltale train` offers (class weight, token and word dropout, the
// baseline on or off), and refuses their bad values naming the field.
func TestRecipeForm(t *testing.T) {
	a := test.NewTempApp(t)
	q := &queue{}
	w, st := newWindow(a, Options{}, q.post)
	w.Resize(fyne.NewSize(smallScreen.Width, smallScreen.Height-menuBar))
	t.Cleanup(st.cancelAll)
	q.waitFor(t, "the failed start", func() bool { return st.tasks.idle(taskLoad) })
	q.drain()
	var names []string
	for _, it := range st.trainingView.form.Items {
		names = append(names, it.Text)
	}
	for _, n := range []string{"Token dropout", "Word dropout", "Class weight", "Linear baseline", "First epoch kept"} {
		if !strings.Contains(strings.Join(names, "|"), n) {
			t.Errorf("the form lacks %q: %q", n, names)
		}
	}
	r := st.recipe
	rec, _, err := r.parse(false)
	if err != nil || !reflect.DeepEqual(rec, cnn.DefaultRecipe()) {
		t.Fatalf("the form's defaults give %+v (%v), want cnn.DefaultRecipe %+v", rec, err, cnn.DefaultRecipe())
	}
	_ = r.tokenDropout.Set("0.125")
	_ = r.wordDropout.Set("0.5")
	_ = r.classWeight.Set("balanced")
	_ = r.baseline.Set(false)
	_ = r.keepFrom.Set("4")
	rec, _, err = r.parse(false)
	want := cnn.DefaultRecipe()
	want.Train.TokenDropout, want.Train.WordDropout, want.Train.ClassWeight, want.Baseline = 0.125, 0.5, "balanced", nil
	want.Train.KeepFrom = 4
	if err != nil || !reflect.DeepEqual(rec, want) {
		t.Errorf("with the new options set: %+v (%v), want %+v", rec, err, want)
	}
	for _, it := range st.trainingView.form.Items {
		if sel, ok := it.Widget.(*widget.Select); ok && it.Text == "Class weight" {
			q.waitFor(t, "the class weight's choice to follow its value", func() bool { return sel.Selected == "balanced" })
		}
	}
	for _, c := range []struct {
		set  func()
		want string
	}{
		{func() { _ = r.tokenDropout.Set("NaN") }, `token dropout "NaN" is not a finite number`},
		{func() { _ = r.tokenDropout.Set("1") }, "token dropout 1: must be in [0, 1)"},
		{func() { _ = r.wordDropout.Set("Inf") }, `word dropout α "Inf" is not a finite number`},
		{func() { _ = r.wordDropout.Set("-1") }, "word dropout -1: must be 0 (off) or positive"},
		{func() { _ = r.classWeight.Set("heavy") }, `class weight "heavy": choose none or balanced`},
		{func() { _ = r.keepFrom.Set("-2") }, "first epoch kept -2: give 0 (any epoch) or a later one, e.g. 5"},
		{func() { _ = r.keepFrom.Set("two") }, `first epoch kept "two" is not a whole number: 0 keeps any, e.g. 5`},
	} {
		r.reset()
		c.set()
		if _, _, err := r.parse(false); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("error %v, want it to say %q", err, c.want)
		}
	}
	r.reset()
	if on, _ := r.baseline.Get(); !on {
		t.Error("Defaults did not turn the baseline back on")
	}
}

// The reliability diagram's title fits its pane on a 1024×700 screen, line
// by line in the plot's own font, and writes a p-value at its floor with
// "<=", which that font has (it has no "≤").
func TestReliabilityTitleFits(t *testing.T) {
	_, st, q := sharedLeanWindow(t, smallScreen)
	st.show(titleResults)
	q.drain()
	rv := st.resultsView
	rv.lower.SelectIndex(1)
	q.drain()
	p := rv.reliability.plot
	if p == nil {
		t.Fatal("no reliability diagram")
	}
	room := vg.Length(rv.reliability.Size().Width - 2*theme.Padding())
	for _, line := range strings.Split(p.Title.Text, "\n") {
		if w := p.Title.TextStyle.Width(line); w > room {
			t.Errorf("title line %q is %.0f wide, the pane has %.0f", line, w, room)
		}
	}
	floor := cnn.NewCalibrationFigure(0.053, cnn.Interval{Estimate: 0.04, Low: 0.024, High: 0.056}, 1/2001.0, 2000)
	title := reliabilityTitle(0.053, &floor)
	if !strings.Contains(title, "p <= 0.0005") || strings.Contains(title, "≤") {
		t.Errorf("title %q, want the p-value at its floor as %q", title, "p <= 0.0005")
	}
}

// File › Export table as CSV on Results writes the per-class figures as
// numbers, each interval as its value, low and high (as --export does),
// which encoding/csv and strconv read back as cnn's intervals.
func TestResultsCSVHoldsNumbers(t *testing.T) {
	_, st, q := sharedLeanWindow(t, smallScreen)
	st.show(titleResults)
	q.drain()
	var b bytes.Buffer
	if err := st.resultsView.exportTable().writeCSV(&b); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(&b).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	m := itemGet(st.model).Eval.Metrics
	iv := cnn.IntervalsOf(m)
	if len(recs) != len(m.PerClass)+2 || !slices.Equal(recs[0], classExportCols) {
		t.Fatalf("exported %d records with header %q, want %d and %q", len(recs), recs[0], len(m.PerClass)+2, classExportCols)
	}
	for i, c := range iv.PerClass {
		row := recs[1+i]
		if row[0] != c.Label || row[10] != fmt.Sprint(m.PerClass[i].Support) {
			t.Errorf("row %q for class %s", row, c.Label)
		}
		for k, want := range []cnn.Interval{c.Precision, c.Recall, c.F1} {
			for j, x := range []float64{want.Estimate, want.Low, want.High} {
				got, err := strconv.ParseFloat(row[1+3*k+j], 64)
				if err != nil || !testref.Close(got, x, 1e-12, 1e-7) {
					t.Errorf("%s, column %s: %q, want %v", c.Label, classExportCols[1+3*k+j], row[1+3*k+j], x)
				}
			}
		}
	}
	last := recs[len(recs)-1]
	if f1, err := strconv.ParseFloat(last[7], 64); err != nil || !testref.Close(f1, iv.WeightedF1.Estimate, 1e-12, 1e-7) || last[1] != "" || last[10] != fmt.Sprint(m.N) {
		t.Errorf("the weighted row %q, want F1 %v over %d texts", last, iv.WeightedF1.Estimate, m.N)
	}
}

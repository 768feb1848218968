package gui

import (
	"fmt"
	"reflect"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"telltale/cnn"
)

// The training form's "Word vectors" check asks for the character layer
// as `telltale train --chars` does with its default sizes: the embedding
// dimension typed stays the word table's, the model's Dim is the whole
// word vector's width.
func TestRecipeFormChars(t *testing.T) {
	r := newRecipeForm()
	if on, _ := r.chars.Get(); on {
		t.Fatal("the form starts with character vectors on; cnn.DefaultRecipe has none")
	}
	_ = r.chars.Set(true)
	rec, _, err := r.parse(false)
	if err != nil {
		t.Fatal(err)
	}
	want := cnn.DefaultRecipe()
	want.Model.Chars = &cnn.CharConfig{Filters: cnn.DefaultCharFilters, Width: cnn.DefaultCharWidth, Dim: cnn.DefaultCharDim, MaxChars: cnn.DefaultMaxChars}
	want.Model.Dim += cnn.DefaultCharFilters
	if !reflect.DeepEqual(rec, want) {
		t.Errorf("with character vectors: %+v, want %+v", rec.Model, want.Model)
	}
	r.reset()
	if rec, _, err = r.parse(false); err != nil || rec.Model.Chars != nil {
		t.Errorf("after reset the form still asks for character vectors (%v)", err)
	}
}

// The form's "Word weights" check asks for the wide path as `telltale
// train --wide` does; the default recipe's setting is where it starts and
// where Defaults puts it back.
func TestRecipeFormWide(t *testing.T) {
	r := newRecipeForm()
	def := cnn.DefaultRecipe()
	if on, _ := r.wide.Get(); on != def.Model.Wide {
		t.Fatalf("the form starts with the wide path %v; cnn.DefaultRecipe has %v", on, def.Model.Wide)
	}
	_ = r.wide.Set(!def.Model.Wide)
	rec, _, err := r.parse(false)
	if err != nil {
		t.Fatal(err)
	}
	want := cnn.DefaultRecipe()
	want.Model.Wide = !def.Model.Wide
	if want.Model.Wide {
		want.Train.WideLR = cnn.DefaultWideLR // as train --wide
	} else {
		// As train --wide=false: no bigram weights, no fitted start, no C.
		want.Model.WideBigrams, want.Train.WideFit, want.Train.WideFitC = false, false, 0
	}
	if !reflect.DeepEqual(rec, want) {
		t.Errorf("with the check flipped: %+v, want %+v", rec.Model, want.Model)
	}
	r.reset()
	if rec, _, err = r.parse(false); err != nil || rec.Model.Wide != def.Model.Wide {
		t.Errorf("after reset the form asks for the wide path %v (%v)", rec.Model.Wide, err)
	}
}

// The form's "Word pairs" check asks for bigram weights as `telltale train
// --wide-bigrams` does; it starts as the default recipe has it, counts
// only with "Word weights" (as train's --wide=false turns both off), and
// Defaults puts it back.
func TestRecipeFormWideBigrams(t *testing.T) {
	r := newRecipeForm()
	def := cnn.DefaultRecipe()
	if on, _ := r.wideBigrams.Get(); on != def.Model.WideBigrams {
		t.Fatalf("the form starts with bigram weights %v; cnn.DefaultRecipe has %v", on, def.Model.WideBigrams)
	}
	_ = r.wideBigrams.Set(true)
	_ = r.wide.Set(false)
	rec, _, err := r.parse(false)
	if err != nil || rec.Model.Wide || rec.Model.WideBigrams {
		t.Errorf("word pairs checked without word weights: wide %v, bigrams %v (%v), want neither", rec.Model.Wide, rec.Model.WideBigrams, err)
	}
	_ = r.wide.Set(true)
	_ = r.wideBigrams.Set(false)
	if rec, _, err = r.parse(false); err != nil || !rec.Model.Wide || rec.Model.WideBigrams {
		t.Errorf("word weights without pairs: wide %v, bigrams %v (%v)", rec.Model.Wide, rec.Model.WideBigrams, err)
	}
	_ = r.wideBigrams.Set(true)
	rec, _, err = r.parse(false)
	if err != nil {
		t.Fatal(err)
	}
	want := cnn.DefaultRecipe()
	want.Model.Wide, want.Model.WideBigrams, want.Train.WideLR = true, true, cnn.DefaultWideLR
	if !reflect.DeepEqual(rec, want) {
		t.Errorf("with both checks: %+v, want %+v", rec.Model, want.Model)
	}
	_ = r.wideBigrams.Set(!def.Model.WideBigrams)
	r.reset()
	if on, _ := r.wideBigrams.Get(); on != def.Model.WideBigrams {
		t.Errorf("Defaults leave the word pairs at %v, want %v", on, def.Model.WideBigrams)
	}
}

// The form's "Word weights' start" check asks for the fitted start as
// `telltale train --wide-fit` does; it starts as the default recipe has
// it, counts only with "Word weights" (as train's --wide=false turns it
// off), and Defaults puts it back.
func TestRecipeFormWideFit(t *testing.T) {
	r := newRecipeForm()
	def := cnn.DefaultRecipe()
	if on, _ := r.wideFit.Get(); on != def.Train.WideFit {
		t.Fatalf("the form starts with the fitted start %v; cnn.DefaultRecipe has %v", on, def.Train.WideFit)
	}
	_ = r.wideFit.Set(true)
	_ = r.wide.Set(false)
	if rec, _, err := r.parse(false); err != nil || rec.Model.Wide || rec.Train.WideFit {
		t.Errorf("fitted start checked without word weights: wide %v, fitted start %v (%v), want neither", rec.Model.Wide, rec.Train.WideFit, err)
	}
	_ = r.wide.Set(true)
	rec, _, err := r.parse(false)
	if err != nil || !rec.Model.Wide || !rec.Train.WideFit {
		t.Errorf("with both checks: wide %v, fitted start %v (%v), want both", rec.Model.Wide, rec.Train.WideFit, err)
	}
	r.reset()
	if on, _ := r.wideFit.Get(); on != def.Train.WideFit {
		t.Errorf("Defaults leave the fitted start at %v, want %v", on, def.Train.WideFit)
	}
}

// The form's "Fitted start's C" asks for the fitted start's C as `telltale
// train --wide-fit-c` does: it starts at the default recipe's, counts only
// with the fitted start and the word weights (ignored otherwise, as train
// records no C without the start), refuses what is not a finite number of
// 0 or more naming the field, and Defaults puts it back.
func TestRecipeFormWideFitC(t *testing.T) {
	r := newRecipeForm()
	def := cnn.DefaultRecipe()
	if got := stringGet(r.wideFitC); got != formatFloat(def.Train.WideFitC) {
		t.Fatalf("the form starts with the fitted start's C %q; cnn.DefaultRecipe has %g", got, def.Train.WideFitC)
	}
	_ = r.wide.Set(true)
	_ = r.wideFit.Set(true)
	for _, c := range []struct {
		typed string
		want  float64
	}{{"3", 3}, {" 0.25 ", 0.25}, {"0", 0}} {
		_ = r.wideFitC.Set(c.typed)
		if rec, _, err := r.parse(false); err != nil || !rec.Train.WideFit || rec.Train.WideFitC != c.want {
			t.Errorf("C %q: fitted start %v at C %g (%v), want on at %g", c.typed, rec.Train.WideFit, rec.Train.WideFitC, err, c.want)
		}
	}
	for _, c := range []struct{ typed, want string }{
		{"-1", "fitted start's C -1: give a positive number, or 0 to choose it on dev"},
		{"NaN", `fitted start's C "NaN" is not a finite number`},
		{"Inf", `fitted start's C "Inf" is not a finite number`},
		{"ten", `fitted start's C "ten" is not a finite number`},
	} {
		_ = r.wideFitC.Set(c.typed)
		if _, _, err := r.parse(false); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("C %q: error %v, want it to say %q", c.typed, err, c.want)
		}
		// Without the fitted start, or without word weights, the field
		// counts for nothing, whatever it holds.
		for _, off := range []struct{ wide, fit bool }{{true, false}, {false, true}} {
			_ = r.wide.Set(off.wide)
			_ = r.wideFit.Set(off.fit)
			if rec, _, err := r.parse(false); err != nil || rec.Train.WideFit || rec.Train.WideFitC != 0 {
				t.Errorf("C %q with word weights %v, fitted start %v: fitted start %v at C %g (%v), want off with no C",
					c.typed, off.wide, off.fit, rec.Train.WideFit, rec.Train.WideFitC, err)
			}
		}
		_ = r.wide.Set(true)
		_ = r.wideFit.Set(true)
	}
	r.reset()
	if got := stringGet(r.wideFitC); got != formatFloat(def.Train.WideFitC) {
		t.Errorf("Defaults leave the fitted start's C at %q, want %g", got, def.Train.WideFitC)
	}
}

// In the window, the fitted start's C can be typed only while the fitted
// start and the word weights are both checked.
func TestRecipeFormWideFitCEnabled(t *testing.T) {
	a := test.NewTempApp(t)
	q := &queue{}
	w, st := newWindow(a, Options{}, q.post)
	w.Resize(smallScreen)
	t.Cleanup(st.cancelAll)
	q.waitFor(t, "the failed start", func() bool { return st.tasks.idle(taskLoad) })
	q.drain()
	var entry *widget.Entry
	for _, it := range st.trainingView.form.Items {
		if it.Text == "Fitted start's C" {
			entry, _ = it.Widget.(*widget.Entry)
		}
	}
	if entry == nil {
		t.Fatal("the form has no entry for the fitted start's C")
	}
	r := st.recipe
	for _, c := range []struct{ wide, fit bool }{{true, true}, {true, false}, {false, true}, {false, false}, {true, true}} {
		_ = r.wide.Set(c.wide)
		_ = r.wideFit.Set(c.fit)
		q.waitFor(t, fmt.Sprintf("the C's entry to follow word weights %v, fitted start %v", c.wide, c.fit),
			func() bool { return entry.Disabled() == !(c.wide && c.fit) })
	}
}

// The form's learning rate follows the command line's rule: the field
// starts empty, which is the default recipe's rate with its optimizer
// (Adam) and Adadelta's own default (0 in the recipe: 1.0) with Adadelta,
// as train without --lr; a rate typed is the rate used, with either.
func TestRecipeFormOptimizerRate(t *testing.T) {
	def := cnn.DefaultRecipe().Train
	if got := stringGet(newRecipeForm().lr); got != "" {
		t.Errorf("the rate field starts at %q, want empty", got)
	}
	cases := []struct {
		optimizer, lr string
		want          float64
	}{
		{"adam", "", def.LR},
		{"adadelta", "", 0},
		{"adam", "0.001", 0.001},
		{"adadelta", formatFloat(def.LR), def.LR},
		{"adadelta", "0.5", 0.5},
	}
	for _, c := range cases {
		r := newRecipeForm()
		_ = r.optimizer.Set(c.optimizer)
		_ = r.lr.Set(c.lr)
		rec, _, err := r.parse(false)
		if err != nil {
			t.Fatalf("%s at %q: %v", c.optimizer, c.lr, err)
		}
		if rec.Train.Optimizer != c.optimizer || rec.Train.LR != c.want {
			t.Errorf("%s at %q: %s at %g, want %g", c.optimizer, c.lr, rec.Train.Optimizer, rec.Train.LR, c.want)
		}
	}
}

// A recipe that needs fixing puts its error in the status bar in one line
// (the dialog shows it whole): a second line would make the window taller
// than a 700-pixel screen.
func TestRecipeErrorKeepsTheStatusBarOneLine(t *testing.T) {
	w, st, q := demoWindow(t, fyne.NewSize(1024, 700))
	before := w.Content().MinSize().Height
	_ = st.recipe.widths.Set("3,x")
	_ = st.recipe.epochs.Set("zero")
	q.drain()
	st.trainNow()
	q.drain()
	s := st.statusText()
	if !strings.Contains(s, `filter widths "3,x"`) || !strings.Contains(s, "epochs") {
		t.Fatalf("status %q does not name the fields to fix", s)
	}
	if strings.ContainsAny(s, "\r\n") {
		t.Errorf("status %q has more than one line", s)
	}
	if after := w.Content().MinSize().Height; after > before {
		t.Errorf("the window's least height grew from %v to %v with the error", before, after)
	}
}

// The form's entries check their values as they are typed: a value that
// Train would refuse is marked on its entry, not ticked.
func TestRecipeEntriesCheckTheirValues(t *testing.T) {
	w, st, q := demoWindow(t, smallScreen)
	e := st.trainingView.firstEntry
	// Each message shows under its entry, in one line: it must not make
	// the window wider than a 1024-pixel screen.
	st.show(titleTraining)
	q.drain()
	wide := w.Content().MinSize().Width
	var entries []*widget.Entry
	for _, it := range st.trainingView.form.Items {
		if entry, ok := it.Widget.(*widget.Entry); ok && !entry.Disabled() {
			entries = append(entries, entry)
		}
	}
	if len(entries) < 10 {
		t.Fatalf("the form has %d enabled entries", len(entries))
	}
	for _, entry := range entries {
		test.Type(entry, "x")
		q.drain()
		if entry.Validate() == nil {
			t.Errorf("%q typed: the entry's check passes", entry.Text)
		}
		if got := w.Content().MinSize().Width; got > wide || got > smallScreen.Width {
			t.Errorf("%q typed: the window's least width grew from %v to %v", entry.Text, wide, got)
		}
	}
	st.recipe.reset()
	q.drain()
	for _, c := range []struct {
		widths string
		ok     bool
	}{{"3,4,5", true}, {"3, 4", true}, {"3,x", false}, {"", false}} {
		_ = st.recipe.widths.Set(c.widths)
		q.drain()
		if err := e.Validate(); (err == nil) != c.ok {
			t.Errorf("filter widths %q: the entry's check says %v", c.widths, err)
		}
	}
	fe := st.trainingView.testShare
	_ = st.recipe.testFrac.Set("a tenth")
	q.drain()
	if fe.Validate() == nil {
		t.Error("test share \"a tenth\" passes the entry's check")
	}
}

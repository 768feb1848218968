// Package gui is the telltale desktop window: open a labeled corpus, train
// the sentence CNN, read its scorecard, browse what each filter responds to,
// see why a sentence got its label and audit the model for spurious cues.
//
// # Structure
//
// Every view is a function of a *State (see the views table in gui.go);
// the State owns the data bindings, the open corpus, model, filter profiles
// and audit, and runs long work (loading, training, profiling, the audit) on
// background goroutines with a context that the user can cancel. Background
// work touches widgets only through the State's UI runner, which is fyne.Do
// in the running application.
//
// No number is computed here: every figure shown comes from the corpus, cnn
// and explain packages; this package only lays it out, paints it and plots
// it with gonum.org/v1/plot.
//
// # Entry point
//
// Only the main package imports fyne.io/fyne/v2/app:
//
//	a := app.NewWithID("telltale")
//	w := gui.NewWindow(a, gui.Options{DemoTrain: train, DemoTest: test})
//	w.ShowAndRun()
//
// # Tests
//
// The tests run headless on Fyne's software driver: go test -tags ci ./gui.
package gui

// Package gui is the telltale desktop window: open a labeled corpus, train
// the sentence CNN, read its results on the test split, browse what each
// filter responds to, see why a text gets its label and audit the model for
// spurious cues.
//
// # Structure
//
// The window is built from one table of views (viewTable in views.go):
// Corpus, Training, Results, Filters, Why this label and Cue audit. Each
// view is a struct that holds its widgets and its own state, with methods
// (as the toolkit's own dialog/file.go does), built once by its
// constructor; the State keeps a typed pointer to each. The State owns
// what is open — the corpus and its three splits (training, dev, test,
// made as telltale train makes them), the model, its filter profiles and
// its audit — as bound values that every view follows, and the recipe
// form, which starts from cnn.DefaultRecipe.
//
// Long work (loading, training, profiling, the audit, explanations,
// retraining without the audit's cues) runs on background goroutines
// through a task runner (tasks.go): at most one goroutine per kind of
// work, a newer task replacing the one waiting, progress handed to the UI
// goroutine as at most one pending update. Background work touches widgets
// only through the State's UI runner, fyne.Do in the running application.
// So typing fast, marking cues or a long training never queues up work the
// window would then take minutes to catch up with.
//
// Indexes of filters, slots, tokens and texts start at 0, as on the command
// line; ranks start at 1. The terms of the project's own are defined in
// internal/glossary, which Help › Glossary lists.
//
// No number is computed here: every figure shown comes from the corpus,
// cnn, explain and audit packages; this package only lays it out (in the
// report package's words, where the report says the same), paints it and
// plots it with gonum.org/v1/plot in the window's font.
//
// # Entry point
//
// Only the main package imports fyne.io/fyne/v2/app:
//
//	// no ID: the toolkit keeps no preferences file; WithStoredPreferences does
//	a, err := gui.WithStoredPreferences(app.NewWithID(""), "org.telltale.app", path, onSaveError)
//	w, quit := gui.NewWindow(a, gui.Options{DemoTrain: train, DemoTest: test})
//	// quit() on a signal closes it cleanly
//	w.ShowAndRun()
//
// The window's title names the view on screen ("telltale — Results"), which
// scripts read to see that the window answers (scripts/soak.sh).
//
// # Tests
//
// The tests need no GL and run with or without the ci tag: go test ./gui.
// Golden renderings of every view are in testdata/ (go test ./gui -run
// Golden -update rewrites them; a mismatch is written to testdata/failed/).
package gui

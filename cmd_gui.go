package main

import (
	"context"
	_ "embed"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"sync"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/app"

	"telltale/gui"
	"telltale/internal/localeenv"
	"telltale/internal/outguard"
)

// The demo corpus travels inside the binary, so the window always has
// something to show.
var (
	//go:embed testdata/demo/train.csv
	demoTrain []byte
	//go:embed testdata/demo/test.csv
	demoTest []byte
)

var cmdGUI = &command{
	Name:      "gui",
	UsageLine: "gui [--data FILE] [--test FILE] [--model MODEL] [--view NAME] [--demo-train] [--quit-after DURATION]",
	Short:     "open the desktop window (on the built-in demo corpus when no data is given)",
	Long: `Gui opens the telltale window, one view for each step: Corpus (the three
splits, made as train makes them), Training (live curves), Results (the test
split), Filters, Why this label (any sentence explained as you type) and Cue
audit (the cues the model relies on that look like how the data was
collected, with marks, retraining without them and what to do). Without
--data it opens on the demo corpus built into the binary. It needs a display;
without one, use the command line (train, eval, explain, filters, audit) or
'telltale report' for an HTML report.

` + gui.Caution,
	Options: func() options { return new(guiOptions) },
	Run:     runAs(runGUI),
}

type guiOptions struct {
	gui.Options
	quitAfter time.Duration
}

func (o *guiOptions) register(fs *flag.FlagSet) {
	fs.StringVar(&o.DataPath, "data", "", "labeled training data (default: the built-in demo corpus)")
	fs.StringVar(&o.TestPath, "test", "", "labeled test file")
	fs.StringVar(&o.TextCol, "text-col", "", "name of the text column or field")
	fs.StringVar(&o.LabelCol, "label-col", "", "name of the label column or field")
	fs.StringVar(&o.ModelPath, "model", "", "a model file to open")
	fs.StringVar(&o.StartView, "view", "", "the view to open first: "+strings.Join(gui.ViewTitles(), ", "))
	fs.BoolVar(&o.AutoRun, "demo-train", false, "with no model, train one at start, profile its filters and run the cue audit")
	fs.DurationVar(&o.quitAfter, "quit-after", 0, "close the window after this long (for scripts)")
}

func (o *guiOptions) check(fs *flag.FlagSet, env *runEnv) error {
	if o.quitAfter < 0 {
		return usagef("--quit-after %s: give a duration of 0 (stay open) or more, e.g. 30s", o.quitAfter)
	}
	return nil
}

func (o *guiOptions) files() (outputs, inputs []outguard.File) {
	return nil, []outguard.File{{Name: "--data", Path: o.DataPath}, {Name: "--test", Path: o.TestPath}, {Name: "--model", Path: o.ModelPath}}
}

func runGUI(ctx context.Context, env *runEnv, o *guiOptions) error {
	if err := checkDisplay(); err != nil {
		return err
	}
	localeenv.Fix() // the window's own locale lookups read the same variables
	o.DemoTrain, o.DemoTest = demoTrain, demoTest
	o.OnReady = func() { fmt.Fprintln(env.Stderr, "telltale: window ready") }
	a := newWindowApp(env.Stderr)
	w, quit := gui.NewWindow(a, o.Options)
	// Ctrl-C and SIGTERM close the window cleanly, its background work
	// stopped first, or end the process if the window has not closed
	// within quitGrace.
	go func() {
		<-ctx.Done()
		quit()
		time.AfterFunc(quitGrace, func() { forceQuit(ctx, env.Stderr) })
	}()
	if o.quitAfter > 0 {
		time.AfterFunc(o.quitAfter, quit)
	}
	w.ShowAndRun()
	return nil
}

// declareUIRunner tells the toolkit, before the app is made, that the
// window changes its widgets only on the UI goroutine (gui.State's UI
// runner is fyne.Do), so the toolkit need not check the calling goroutine
// on every refresh; that check parses a goroutine stack each time. The
// name keeps the toolkit from reading a FyneApp.toml found beside the
// binary, which would replace this metadata. With threadChecksEnv set
// (scripts/soak.sh sets it) the checks stay on, and the toolkit logs any
// call from another goroutine.
func declareUIRunner() {
	if os.Getenv(threadChecksEnv) != "" {
		return
	}
	app.SetMetadata(fyne.AppMetadata{Name: "telltale", Migrations: map[string]bool{"fyneDo": true}})
}

// threadChecksEnv names the variable that keeps the toolkit's thread
// checks on (declareUIRunner).
const threadChecksEnv = "TELLTALE_FYNE_THREAD_CHECKS"

// windowAppID is what the window's app reports as its UniqueID.
const windowAppID = "org.telltale.app"

// newWindowApp makes the toolkit's app with the window's preferences in
// telltale/preferences.json under the user's config folder
// (gui.WithStoredPreferences says why not the toolkit's own file). A file
// that cannot be read, and the first failure to save, are told on stderr;
// neither stops the window.
func newWindowApp(stderr io.Writer) fyne.App {
	dir, err := os.UserConfigDir()
	if err != nil {
		fmt.Fprintf(stderr, "telltale gui: %v; the file dialogs' last folder is kept until the window closes\n", err)
	}
	path := ""
	if dir != "" {
		path = filepath.Join(dir, "telltale", "preferences.json")
	}
	var saveFailed sync.Once
	declareUIRunner()
	a, err := gui.WithStoredPreferences(app.NewWithID(""), windowAppID, path, func(err error) {
		saveFailed.Do(func() {
			fmt.Fprintf(stderr, "telltale gui: could not save the window's preferences to %s (%v); "+
				"the file dialogs' last folder and layout are kept until the window closes; make %s writable to keep them\n",
				path, err, filepath.Dir(path))
		})
	})
	if err != nil {
		fmt.Fprintf(stderr, "telltale gui: %v\n", err)
	}
	return a
}

// quitGrace is how long the window may take to close after a signal
// before forceQuit ends the process.
const quitGrace = 15 * time.Second

// forceQuit ends a process whose window did not close after a signal: a
// signal must end it. It writes every goroutine's stack first, so that
// whatever held the window open can be found, and exits with the signal's
// code (128 + its number). Files are written atomically (a temporary file
// renamed), so none is left half-written.
func forceQuit(ctx context.Context, stderr io.Writer) {
	buf := make([]byte, 1<<20)
	buf = buf[:runtime.Stack(buf, true)]
	fmt.Fprintf(stderr, "telltale gui: the window did not close within %v of the signal; ending the process. Its goroutines:\n%s\n", quitGrace, buf)
	code, _ := signalCode(ctx, nil)
	os.Exit(code)
}

// checkDisplay fails plainly when there is no screen to open a window on.
func checkDisplay() error {
	if runtime.GOOS != "linux" && runtime.GOOS != "freebsd" {
		return nil
	}
	if os.Getenv("DISPLAY") != "" || os.Getenv("WAYLAND_DISPLAY") != "" {
		return nil
	}
	return fmt.Errorf("no display to open a window on (DISPLAY and WAYLAND_DISPLAY are unset): " +
		"run it on a desktop, under Xvfb (xvfb-run telltale gui), or use the command line " +
		"(telltale train, eval, explain, filters, audit) and 'telltale report --out report.html' instead")
}

package main

import (
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
)

// caseFiles are the files the cases of TestRefusalsAndMessages read.
type caseFiles struct {
	dir, data, model, tiny, swapped, folder, headerless, wide, cues, labels string
}

func makeCaseFiles(t *testing.T) caseFiles {
	t.Helper()
	dir := t.TempDir()
	f := caseFiles{dir: dir, data: demoPart(t, dir, 300), model: tinyModel(t), tiny: filepath.Join("testdata", "bad", "two-labels.csv")}
	write := func(name, content string) string {
		p := filepath.Join(dir, name)
		os.MkdirAll(filepath.Dir(p), 0o755)
		if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	var sw strings.Builder
	sw.WriteString("text,label\n")
	for i := 0; i < 40; i++ {
		fmt.Fprintf(&sw, "message number %d about the ferry,%s\n", i, []string{"bookings", "praise"}[i%2])
	}
	f.swapped = write("swapped.csv", sw.String())
	f.headerless = write("headerless.csv", "the ferry was late,complaints\nthanks to the crew,praise\n")
	f.wide = write("wide.csv", strings.Repeat("x;", 5<<20/2)+"\na;b\n")
	f.cues = write("cues.txt", "# the slashes are missing\nTKREF-[0-9]{5}\n")
	var lb strings.Builder
	lb.WriteString("text,label\n")
	for i := 0; i < 12; i++ {
		fmt.Fprintf(&lb, "text %d,%s\n", i, []string{"bookings", "BOOKINGS", "praise"}[i%3])
	}
	lb.WriteString("the only one,lost-property\n")
	f.labels = write("labels.csv", lb.String())
	f.folder = filepath.Join(dir, "folder")
	for _, l := range []string{"ham", "spam"} {
		for i := 0; i < 3; i++ {
			write(filepath.Join("folder", l, fmt.Sprintf("%d.txt", i)), l+" text")
		}
	}
	write("elsewhere/eggs/1.txt", "eggs")
	os.Symlink(filepath.Join(dir, "elsewhere", "eggs"), filepath.Join(f.folder, "eggs"))
	os.Symlink(filepath.Join(dir, "elsewhere", "eggs", "1.txt"), filepath.Join(f.folder, "ham", "9.txt"))
	return f
}

// TestRefusalsAndMessages: every case of a bad option, useless data or an
// unclear message found by trying telltale as a new user would, through
// run(): the exit code and the message. (The cases come from that review;
// the expected wording is this project's own.)
func TestRefusalsAndMessages(t *testing.T) {
	f := makeCaseFiles(t)
	out := filepath.Join(f.dir, "m.tt")
	train := func(args ...string) []string {
		return overriding([]string{"train", "--data", f.data, "--out", out, "--epochs", "1", "--dim", "8", "--maps", "4", "--quiet"}, args...)
	}
	cases := []struct {
		name string
		args []string
		code int
		want []string
	}{
		// Options checked up front.
		{"negative threads", train("--threads", "-3"), 2, []string{"--threads -3: give 1 or more worker goroutines, or 0 for one per core"}},
		{"threads capped", []string{"eval", "--model", f.model, "--test", f.tiny, "--threads", "100000"}, 0,
			[]string{"warning: --threads 100000 is more than 4 per core on this machine's"}},
		{"maps too many for memory", train("--maps", "100000000"), 2, []string{"training this model would take up to about", "but this machine has", "lower --maps"}},
		{"dim too large for memory", train("--dim", "100000000"), 2, []string{"training this model would take up to about", "--dim 100000000"}},
		{"empty list item", train("--widths", "3,,5"), 2, []string{`--widths "3,,5": item 2 of 3 is empty`}},
		{"width 0", train("--widths", "0,3"), 2, []string{`--widths "0,3": 0 is not a filter width (1 or more)`}},
		{"audit top 0", []string{"audit", "--model", f.model, "--data", f.data, "--top", "0"}, 2, []string{"--top 0: give 1 or more"}},
		{"audit top -5", []string{"audit", "--model", f.model, "--data", f.data, "--top", "-5"}, 2, []string{"--top -5: give 1 or more"}},
		{"filters top 0", []string{"filters", "--model", f.model, "--data", f.data, "--top", "0"}, 2, []string{"--top 0: give 1 or more"}},
		{"negative patience", train("--patience", "-1"), 2, []string{"--patience -1: give 0 or more", "0 never stops early"}},
		{"negative seed", train("--seed", "-1"), 2, []string{"--seed -1: a seed is a whole number from 0 to 18446744073709551615"}},
		{"seed not a number", train("--seed", "one"), 2, []string{"--seed one: a seed is a whole number"}},
		{"epochs not a number", train("--epochs", "x"), 2, []string{"--epochs x: not a whole number"}},
		{"a value holding \" for \"", train("--epochs", "3 for 4"), 2, []string{"--epochs 3 for 4: not a whole number"}},
		{"a switch with a value", train("--quiet=maybe"), 2, []string{"--quiet maybe: give true or false"}},
		{"unknown option", train("--filter", "3"), 2, []string{"unknown option --filter"}},
		// NaN and infinities.
		{"lr NaN", train("--lr", "NaN"), 2, []string{"--lr NaN: not a finite number"}},
		{"lr Inf", train("--lr", "Inf"), 2, []string{"--lr Inf: not a finite number"}},
		{"lr overflowing", train("--lr", "1e400"), 2, []string{"--lr 1e400: not a finite number"}},
		{"lr negative", train("--lr", "-1"), 2, []string{"--lr -1: give a positive learning rate"}},
		{"dropout NaN", train("--dropout", "NaN"), 2, []string{"--dropout NaN: not a finite number"}},
		{"dropout 1", train("--dropout", "1"), 2, []string{"--dropout 1: give a rate from 0 up to (not including) 1"}},
		{"max-norm Inf", train("--max-norm", "+Inf"), 2, []string{"--max-norm +Inf: not a finite number"}},
		{"word-dropout NaN", train("--word-dropout", "NaN"), 2, []string{"--word-dropout NaN: not a finite number"}},
		{"word-dropout Inf", train("--word-dropout", "Inf"), 2, []string{"--word-dropout Inf: not a finite number"}},
		{"word-dropout negative", train("--word-dropout", "-0.5"), 2, []string{"--word-dropout -0.5: give α of 0 (off) or more"}},
		{"token-dropout NaN", train("--token-dropout", "NaN"), 2, []string{"--token-dropout NaN: not a finite number"}},
		{"token-dropout 1", train("--token-dropout", "1"), 2, []string{"--token-dropout 1: give a probability from 0 up to (not including) 1"}},
		{"token-dropout negative", train("--token-dropout", "-0.1"), 2, []string{"--token-dropout -0.1: give a probability from 0 up to"}},
		{"char-maps 0", train("--chars", "--char-maps", "0"), 2, []string{"--char-maps 0: give 1 or more (feature maps of the character layer (with --chars))"}},
		{"char-maps too many", train("--chars", "--char-maps", "5000"), 2, []string{"--char-maps 5000: give at most 4096"}},
		{"char-width 0", train("--chars", "--char-width", "0"), 2, []string{"--char-width 0: give 1 or more"}},
		{"char-width 33", train("--chars", "--char-width", "33"), 2, []string{"--char-width 33: give at most 32 characters"}},
		{"char-width without --chars", train("--char-width", "2"), 2, []string{"--char-maps and --char-width shape the character layer: add --chars"}},
		{"wide-lr negative", train("--wide", "--wide-lr", "-2"), 2, []string{"--wide-lr -2: give a positive factor, or 0 for the rest's learning rate"}},
		{"wide-lr NaN", train("--wide", "--wide-lr", "NaN"), 2, []string{"--wide-lr NaN: not a finite number"}},
		{"wide-lr without --wide", train("--wide=false", "--wide-lr", "2"), 2, []string{"--wide-lr sets the learning rate of the word-weight table, which --wide=false leaves out: drop one of the two"}},
		{"wide-bigrams without --wide", train("--wide=false", "--wide-bigrams"), 2, []string{"--wide-bigrams gives bigrams weights in the word-weight path, which --wide=false leaves out: drop one of the two"}},
		{"wide-fit without --wide", train("--wide=false", "--wide-fit"), 2, []string{"--wide-fit starts the word-weight path at a fitted linear model, and --wide=false leaves the path out: drop one of the two"}},
		{"keep-from negative", train("--keep-from", "-1"), 2, []string{"--keep-from -1: give 0 or more (the first epoch training may keep; 0 keeps any)"}},
		{"wide-fit-c negative", train("--wide-fit", "--wide-fit-c", "-1"), 2, []string{"--wide-fit-c -1: give a positive C, or 0 to choose it on dev"}},
		{"wide-fit-c NaN", train("--wide-fit", "--wide-fit-c", "NaN"), 2, []string{"--wide-fit-c NaN: not a finite number"}},
		{"wide-fit-c Inf", train("--wide-fit", "--wide-fit-c", "+Inf"), 2, []string{"--wide-fit-c +Inf: not a finite number"}},
		{"wide-fit-c with --wide-fit=false", train("--wide-fit=false", "--wide-fit-c", "10"), 2, []string{"--wide-fit-c sets the C of the fitted start, which --wide-fit=false leaves out: drop one of the two"}},
		// Without --wide-fit given: the default recipe has no fitted start.
		{"wide-fit-c without --wide-fit", train("--wide-fit-c", "10"), 2, []string{"--wide-fit-c sets the C of the fitted start: add --wide-fit"}},
		{"wide-fit-c without --wide", train("--wide=false", "--wide-fit-c", "10"), 2, []string{"--wide-fit-c sets the C of the word-weight path's fitted start, which --wide=false leaves out: drop one of the two"}},
		{"class-weight unknown", train("--class-weight", "heavy"), 2, []string{`--class-weight "heavy": use none or balanced`}},
		{"class-weight empty", train("--class-weight", ""), 2, []string{`--class-weight "": use none or balanced`}},
		{"baseline not a switch value", train("--baseline=sometimes"), 2, []string{"--baseline sometimes: give true or false"}},
		{"dim 0 without vectors", train("--dim", "0"), 2, []string{"--dim 0: give 1 or more (numbers per word embedding; 0 only with --vectors, for the file's)"}},
		{"dev-frac NaN", train("--dev-frac", "NaN"), 2, []string{"--dev-frac NaN: not a finite number"}},
		{"selectivity NaN", []string{"filters", "--model", f.model, "--data", f.data, "--selectivity", "NaN"}, 2, []string{"--selectivity NaN: not a finite number"}},
		{"a diverging run", train("--lr", "1e30", "--epochs", "3"), 1,
			[]string{"training diverged in epoch 1", "nothing saved to " + out, "lower --lr (it was 1e+30)"}},
		{"a diverging run with word weights", train("--wide", "--wide-lr", "1e300", "--optimizer", "adadelta", "--epochs", "1"), 1,
			[]string{"training diverged in epoch 1", "nothing saved to " + out, "or --wide-lr (it was 1e+300)"}},
		// Data that would give a useless model.
		{"swapped columns", []string{"train", "--data", f.swapped, "--text-col", "label", "--label-col", "text", "--out", out}, 1,
			[]string{"40 distinct labels among 40 examples", "check that --text-col and --label-col name the right columns", "--force"}},
		{"empty vocabulary", train("--min-count", "1000000"), 1,
			[]string{"the vocabulary is empty: no word occurs 1000000 times in the training split", "lower --min-count"}},
		{"empty dev split", []string{"train", "--data", f.tiny, "--out", out}, 1, []string{"the dev split is empty", "raise --dev-frac", "--force"}},
		{"label warnings", []string{"data", "--data", f.labels}, 0, []string{
			`label "lost-property" has a single example`, `labels "BOOKINGS" and "bookings" differ only in letter case: if they are one label, merge them with --relabel "bookings=BOOKINGS"`}},
		// Folders.
		{"symbolic links in a folder", []string{"data", "--data", f.folder}, 0, []string{
			filepath.Join(f.folder, "eggs") + ": symbolic link skipped: links in a data folder are not followed",
			filepath.Join(f.folder, "ham", "9.txt") + ": symbolic link skipped"}},
		// Messages.
		{"headerless CSV", []string{"data", "--data", f.headerless}, 2, []string{"the file lacks its header row", "e.g. text,label"}},
		{"dev-frac 0", train("--dev-frac", "0"), 2, []string{"--dev-frac 0: give a share between 0 and 1 (exclusive) of --data to hold out for early stopping"}},
		{"test-frac 1", train("--test-frac", "1"), 2, []string{"--test-frac 1: give a share between 0 and 1"}},
		{"shares that leave nothing", train("--dev-frac", "0.5", "--test-frac", "0.5"), 2, []string{"hold out 100% of --data: together they must stay below 1"}},
		{"a file and a share", train("--dev", f.tiny, "--dev-frac", "0.2"), 2, []string{"give --dev FILE or --dev-frac, not both"}},
		{"report onto a folder", []string{"report", "--model", f.model, "--data", f.data, "--out", f.dir}, 2, []string{"--out " + f.dir + " is a folder: give a file name"}},
		{"report in a missing folder", []string{"report", "--model", f.model, "--data", f.data, "--out", filepath.Join(f.dir, "nodir", "r.html")}, 2,
			[]string{"the folder " + filepath.Join(f.dir, "nodir") + " does not exist: create it or choose another --out"}},
		{"mask in a missing folder", []string{"mask", "--model", f.model, "--filters", "0", "--out", filepath.Join("nodir", "m.tt")}, 2,
			[]string{"--out nodir/m.tt: the folder nodir does not exist: create it or choose another --out"}},
		{"bare regular expression", train("--mask-tokens", f.cues, "--quiet=false", "--out", filepath.Join(f.dir, "masked.tt")), 0, []string{
			`the pattern "TKREF-[0-9]{5}" matches nothing: without slashes it is a plain token`, "write /TKREF-[0-9]{5}/"}},
		{"Latin-1", []string{"data", "--data", filepath.Join("testdata", "bad", "latin1.csv")}, 0, []string{"iconv -f latin1 -t utf-8"}},
		{"both --text and --data", []string{"predict", "--model", f.model, "--text", "hi", "--data", f.data}, 2, []string{"give --text or --data, not both"}},
		{"filter index out of range", []string{"filters", "--model", f.model, "--data", f.data, "--filters", "0,999"}, 2, []string{"--filters 0,999: the model has filters 0 to 11"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, _, stderr := tt(t, c.args...)
			noCrash(t, c.name, stderr)
			if code != c.code {
				t.Errorf("exit %d, want %d; stderr:\n%s", code, c.code, stderr)
			}
			for _, w := range c.want {
				if !strings.Contains(stderr, w) {
					t.Errorf("stderr lacks %q:\n%s", w, stderr)
				}
			}
		})
	}
	if _, err := os.Stat(out); err == nil {
		t.Error("a refused training run wrote its model file")
	}
}

// TestLongValuesAreNotEchoed: a 5 MB line in a file or on the command line
// does not come back whole in a message.
func TestLongValuesAreNotEchoed(t *testing.T) {
	f := makeCaseFiles(t)
	huge := strings.Repeat("y", 5<<20)
	for _, args := range [][]string{
		{"data", "--data", f.wide},
		{"predict", "--model", f.model, huge},
		{"train", "--data", f.data, "--out", "x.tt", "--widths", huge + ",,"},
		{"data", "--data", f.data, "--text-col", huge},
		{huge},
	} {
		code, _, stderr := tt(t, args...)
		if code == 0 || len(stderr) > 4000 {
			t.Errorf("%.40q: exit %d with %d bytes of stderr:\n%.600s", args, code, len(stderr), stderr)
		}
	}
}

// TestPatienceZeroNeverStopsEarly: --patience 0 means training every epoch
// (said in help train); the model records no early stop.
func TestPatienceZeroNeverStopsEarly(t *testing.T) {
	data := demoPart(t, t.TempDir(), 300)
	model := filepath.Join(t.TempDir(), "m.tt")
	code, out, stderr := tt(t, "train", "--data", data, "--out", model, "--epochs", "4", "--dim", "4", "--maps", "2", "--patience", "0", "--json", "--quiet")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	var s trainSummary
	if err := json.Unmarshal([]byte(out), &s); err != nil {
		t.Fatal(err)
	}
	if s.Epochs != 4 || s.StoppedEarly {
		t.Errorf("--patience 0 trained %d of 4 epochs (stopped early: %v)", s.Epochs, s.StoppedEarly)
	}
	_, help, _ := tt(t, "help", "train")
	if !strings.Contains(help, "0 never stops early") {
		t.Errorf("help train does not say what --patience 0 means:\n%s", help)
	}
}

// TestWideFitCReachesTheModel: train --wide-fit --wide-fit-c 3 fits the
// start at C 3, says so while it fits, and the model file records it.
func TestWideFitCReachesTheModel(t *testing.T) {
	data := demoPart(t, t.TempDir(), 300)
	model := filepath.Join(t.TempDir(), "m.tt")
	code, _, stderr := tt(t, "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "4", "--maps", "2",
		"--wide-fit", "--wide-fit-c", "3")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if !strings.Contains(stderr, "fitting the start of the word weights (logistic regression on them alone, at C 3 (--wide-fit-c))") {
		t.Errorf("train does not say it fits the start at C 3:\n%s", stderr)
	}
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	if r := m.Info.Recipe; r == nil || !r.WideFit || r.WideFitC != 3 {
		t.Errorf("the model records the recipe %+v, want the fitted start at C 3", r)
	}
}

// TestInterruptedExits130: a run whose context is cancelled, as a SIGINT
// cancels it, ends with exit 130 and "interrupted" for every command that
// does work (the window needs a display and is left out).
func TestInterruptedExits130(t *testing.T) {
	f := makeCaseFiles(t)
	dir := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	for _, args := range [][]string{
		{"data", "--data", f.data},
		{"train", "--data", f.data, "--out", filepath.Join(dir, "m.tt"), "--epochs", "1", "--dim", "4", "--maps", "2"},
		{"eval", "--model", f.model, "--data", f.data},
		{"predict", "--model", f.model, "--data", f.data},
		{"explain", "--model", f.model, "--data", f.data},
		{"filters", "--model", f.model, "--data", f.data},
		{"faithfulness", "--model", f.model, "--data", f.data},
		{"audit", "--model", f.model, "--data", f.data},
		{"mask", "--model", f.model, "--filters", "1", "--out", filepath.Join(dir, "masked.tt"), "--data", f.data},
		{"compare", "--models", f.model + "," + f.model, "--data", f.data},
		{"report", "--model", f.model, "--data", f.data, "--out", filepath.Join(dir, "r.html")},
	} {
		var stdout, stderr strings.Builder
		code := run(ctx, args, strings.NewReader(""), &stdout, &stderr)
		if code != 130 || !strings.Contains(stderr.String(), "telltale "+args[0]+": interrupted") {
			t.Errorf("%s: exit %d, stderr %q; want 130 and interrupted", args[0], code, stderr.String())
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "m.tt")); err == nil {
		t.Error("an interrupted training run saved a model before its first epoch ended")
	}
}

// TestReportOnSmallData: on a few hundred texts the test split is too small
// for the cue audit; the report is still written, and the command line
// says the audit was left out, why, and that --no-audit silences the note.
func TestReportOnSmallData(t *testing.T) {
	model := tinyModel(t) // trained on demoPart(…, 400)
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	out := filepath.Join(dir, "r.html")
	code, _, stderr := tt(t, "report", "--model", model, "--data", data, "--out", out)
	if code != 0 {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	for _, w := range []string{"the report leaves out the cue audit: the cue audit needs at least 60 test texts (30 in each of its two halves); this split has ",
		"train the model again with a larger share of the data as its test split", "(--no-audit leaves it out without this note)"} {
		if !strings.Contains(stderr, w) {
			t.Errorf("stderr lacks %q:\n%s", w, stderr)
		}
	}
	if b, err := os.ReadFile(out); err != nil || !strings.Contains(string(b), "The cue audit needs at least 60 test texts") {
		t.Errorf("the report does not say why the audit is missing (%v)", err)
	}
	code, _, stderr = tt(t, "report", "--model", model, "--data", data, "--out", out, "--no-audit")
	if code != 0 || strings.Contains(stderr, "leaves out the cue audit") {
		t.Errorf("report --no-audit: exit %d: %s", code, stderr)
	}
}

// TestFiltersProfileTheTrainingSplit: given the data the model was trained
// on, filters profiles the training split the model file records (its size
// is the record's, as in the report) and says so; given other data, all of
// it, with a note.
func TestFiltersProfileTheTrainingSplit(t *testing.T) {
	model := tinyModel(t)
	data := filepath.Join(filepath.Dir(model), "part.csv") // tinyModel's training data
	m, err := cnn.Load(model)
	if err != nil || m.Info.Splits == nil {
		t.Fatalf("the model records no splits (%v)", err)
	}
	rec := m.Info.Splits
	profiled := func(path string) (int, string) {
		t.Helper()
		code, js, stderr := tt(t, "filters", "--model", model, "--data", path, "--top", "2", "--json")
		var p explain.Profiles
		if err := json.Unmarshal([]byte(js), &p); code != 0 || err != nil {
			t.Fatalf("filters --data %s: exit %d, %v: %s", path, code, err, stderr)
		}
		return p.Texts, stderr
	}
	n, stderr := profiled(data)
	if n != rec.Train || rec.Train >= rec.Examples {
		t.Errorf("profiled %d texts; the model's training split has %d of %d", n, rec.Train, rec.Examples)
	}
	if want := fmt.Sprintf("note: profiling the training split of %s, as the report does: %d of its %d texts", data, rec.Train, rec.Examples); !strings.Contains(stderr, want) {
		t.Errorf("stderr lacks %q:\n%s", want, stderr)
	}
	other := demoPart(t, t.TempDir(), 200)
	all, _, err := corpus.Load(other, corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	n, stderr = profiled(other)
	if n != len(all.Examples) || !strings.Contains(stderr, "is not the data the model was trained on") {
		t.Errorf("other data: profiled %d of its %d texts; stderr %s", n, len(all.Examples), stderr)
	}
}

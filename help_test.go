package main

import (
	"encoding/json"
	"flag"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/internal/version"
)

var update = flag.Bool("update", false, "rewrite the golden files of the help texts")

// TestHelpGolden: `telltale help X` for every command against
// testdata/help/X.golden (go test -update rewrites them; a mismatch writes
// the actual text to testdata/failed/). The goldens are what a reader
// checks: each lists exactly the options its command uses. The window's
// help is left out: its view names and caution are the window's own text.
func TestHelpGolden(t *testing.T) {
	for _, c := range commands {
		if c == cmdGUI {
			continue
		}
		code, out, stderr := tt(t, "help", c.Name)
		if code != 0 {
			t.Fatalf("help %s: exit %d: %s", c.Name, code, stderr)
		}
		golden := filepath.Join("testdata", "help", c.Name+".golden")
		if *update {
			os.MkdirAll(filepath.Dir(golden), 0o755)
			if err := os.WriteFile(golden, []byte(out), 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		want, err := os.ReadFile(golden)
		if err != nil {
			t.Fatalf("%v (run go test -update)", err)
		}
		if out != string(want) {
			failed := filepath.Join("testdata", "failed", "help-"+c.Name+".txt")
			os.MkdirAll(filepath.Dir(failed), 0o755)
			os.WriteFile(failed, []byte(out), 0o644)
			t.Errorf("help %s differs from %s; the actual text is in %s", c.Name, golden, failed)
		}
	}
}

// TestHelpListsOnlyUsedOptions: no help text offers an option its command
// ignores, and the shared vocabulary holds: --maps only for train,
// --filters always a list, --dev only where a dev split is made.
func TestHelpListsOnlyUsedOptions(t *testing.T) {
	options := map[string]map[string]bool{}
	for _, c := range commands {
		_, out, _ := tt(t, "help", c.Name)
		if strings.Contains(out, "not used by") {
			t.Errorf("help %s offers an option it does not use:\n%s", c.Name, out)
		}
		options[c.Name] = map[string]bool{}
		for _, l := range strings.Split(out, "\n") {
			if f, ok := strings.CutPrefix(l, "  --"); ok {
				options[c.Name][strings.Fields(f)[0]] = true
			}
		}
	}
	for name, opts := range options {
		if opts["dev"] != (name == "train" || name == "data") {
			t.Errorf("%s: --dev offered %v", name, opts["dev"])
		}
		if opts["maps"] != (name == "train") || opts["filter"] || opts["dev-frac"] != opts["dev"] {
			t.Errorf("%s: options %v", name, opts)
		}
	}
	for _, name := range []string{"filters", "mask"} {
		_, out, _ := tt(t, "help", name)
		if !strings.Contains(out, "--filters string\n    \t") || !strings.Contains(out, "comma-separated") {
			t.Errorf("help %s: --filters is not a list of indexes:\n%s", name, out)
		}
	}
}

// TestTrainDefaultsAreTheRecipe: train's option defaults give
// cnn.DefaultRecipe itself, field for field (the baseline's configuration
// and the dropouts included), and the options change what they name.
func TestTrainDefaultsAreTheRecipe(t *testing.T) {
	parse := func(args ...string) (*trainOptions, cnn.Recipe) {
		t.Helper()
		o := new(trainOptions)
		fs := flag.NewFlagSet("train", flag.ContinueOnError)
		o.register(fs)
		if err := fs.Parse(args); err != nil {
			t.Fatal(err)
		}
		if err := o.recipe.check(fs); err != nil {
			t.Fatal(err)
		}
		return o, o.recipe.recipe(o.split.Seed, o.threads.N)
	}
	o, r := parse()
	def := cnn.DefaultRecipe()
	if !reflect.DeepEqual(r, def) || o.split.DevFrac != cnn.DefaultDevFrac || o.split.TestFrac != cnn.DefaultTestFrac {
		t.Errorf("train's defaults %+v / %+v differ from cnn.DefaultRecipe %+v", r, o.split, def)
	}
	_, r = parse("--class-weight", "balanced", "--word-dropout", "0.5", "--token-dropout", "0.125", "--baseline=false",
		"--wide", "--wide-lr", "4")
	want := def
	want.Train.ClassWeight, want.Train.WordDropout, want.Train.TokenDropout, want.Baseline = "balanced", 0.5, 0.125, nil
	want.Model.Wide, want.Train.WideLR = true, 4
	if !reflect.DeepEqual(r, want) {
		t.Errorf("with the options set: %+v, want %+v", r, want)
	}
	if _, r = parse("--keep-from", "4"); r.Train.KeepFrom != 4 {
		t.Errorf("--keep-from 4 gave KeepFrom %d", r.Train.KeepFrom)
	}
	if _, r = parse("--class-weight", "none"); r.Train.ClassWeight != "" {
		t.Errorf("--class-weight none gave %q, want the recipe's \"\"", r.Train.ClassWeight)
	}
	if _, r = parse("--wide=false"); r.Model.Wide || r.Model.WideBigrams {
		t.Errorf("--wide=false: wide %v, bigrams %v, want neither (the whole word-weight path off)", r.Model.Wide, r.Model.WideBigrams)
	}
	if _, r = parse("--wide-bigrams=false"); !r.Model.Wide || r.Model.WideBigrams || r.Train.WideLR != cnn.DefaultWideLR {
		t.Errorf("--wide-bigrams=false: wide %v, bigrams %v, learning-rate factor %g, want the words' weights alone at %d", r.Model.Wide, r.Model.WideBigrams, r.Train.WideLR, cnn.DefaultWideLR)
	}
	if _, r = parse("--wide-fit"); !r.Model.Wide || !r.Train.WideFit {
		t.Errorf("--wide-fit: wide %v, fitted start %v, want both", r.Model.Wide, r.Train.WideFit)
	}
	if _, r = parse("--wide=false"); r.Train.WideFit || r.Train.WideFitC != 0 {
		t.Errorf("--wide=false leaves the fitted start of the word weights on (%v) or its C set (%g)", r.Train.WideFit, r.Train.WideFitC)
	}
	if _, r = parse("--wide-fit", "--wide-fit-c", "3"); !r.Train.WideFit || r.Train.WideFitC != 3 {
		t.Errorf("--wide-fit --wide-fit-c 3: fitted start %v at C %g, want on at 3", r.Train.WideFit, r.Train.WideFitC)
	}
	if _, r = parse("--wide-fit", "--wide-fit-c", "0"); !r.Train.WideFit || r.Train.WideFitC != 0 {
		t.Errorf("--wide-fit --wide-fit-c 0: fitted start %v at C %g, want on, C chosen on dev (0)", r.Train.WideFit, r.Train.WideFitC)
	}
	if _, r = parse("--wide-fit=false"); r.Train.WideFit || r.Train.WideFitC != 0 {
		t.Errorf("--wide-fit=false: fitted start %v at C %g, want off with no C", r.Train.WideFit, r.Train.WideFitC)
	}
	if _, r = parse("--wide"); !r.Model.Wide || !r.Model.WideBigrams || r.Train.WideLR != cnn.DefaultWideLR {
		t.Errorf("--wide alone: wide %v, bigrams %v, learning-rate factor %g, want the default's: true, true and %d", r.Model.Wide, r.Model.WideBigrams, r.Train.WideLR, cnn.DefaultWideLR)
	}
	// The default recipe's rate is Adam's: Adadelta without --lr gets its
	// own usual default (0 in the recipe, 1.0 in training), with --lr the
	// rate given.
	if _, r = parse("--optimizer", "adadelta"); r.Train.Optimizer != "adadelta" || r.Train.LR != 0 {
		t.Errorf("--optimizer adadelta: %s at %g, want adadelta at 0 (its default)", r.Train.Optimizer, r.Train.LR)
	}
	if _, r = parse("--optimizer", "adadelta", "--lr", "0.5"); r.Train.LR != 0.5 {
		t.Errorf("--optimizer adadelta --lr 0.5: rate %g, want 0.5", r.Train.LR)
	}
	if _, r = parse("--lr", "0.001"); r.Train.Optimizer != "adam" || r.Train.LR != 0.001 {
		t.Errorf("--lr 0.001: %s at %g, want adam at 0.001", r.Train.Optimizer, r.Train.LR)
	}
	if o := new(trainOptions); true {
		fs := flag.NewFlagSet("train", flag.ContinueOnError)
		o.register(fs)
		if err := fs.Parse([]string{"--wide=false", "--wide-bigrams"}); err != nil {
			t.Fatal(err)
		}
		if err := o.recipe.check(fs); err == nil || !strings.Contains(err.Error(), "which --wide=false leaves out") {
			t.Errorf("--wide=false --wide-bigrams: %v, want a usage error naming the conflict", err)
		}
	}
}

func TestVersion(t *testing.T) {
	code, out, _ := tt(t, "version")
	if code != 0 || !strings.HasPrefix(out, "telltale "+version.String()+" (model file format ") {
		t.Errorf("version: exit %d, %q", code, out)
	}
	var v map[string]any
	if code, out, _ = tt(t, "version", "--json"); code != 0 || json.Unmarshal([]byte(out), &v) != nil || v["version"] != version.String() {
		t.Errorf("version --json: exit %d, %q", code, out)
	}
	// --version, as most programs accept it, is the version command.
	_, want, _ := tt(t, "version")
	for _, args := range [][]string{{"--version"}, {"-version"}} {
		if code, out, stderr := tt(t, args...); code != 0 || out != want {
			t.Errorf("%q: exit %d, %q (stderr %q), want %q", args, code, out, stderr, want)
		}
	}
	if code, out, _ := tt(t, "--version", "--json"); code != 0 || json.Unmarshal([]byte(out), &v) != nil || v["version"] != version.String() {
		t.Errorf("--version --json: exit %d, %q", code, out)
	}
}

// Package testref holds what every package's tests share when they check
// telltale against something outside the project: finding the outside
// reference (Debian's Python with PyTorch, scikit-learn or SciPy; the corpora
// fetched by `make corpora`), skipping loudly when it is missing on a
// developer's machine and failing when CI=true, and the one tolerance helper.
// It is imported by tests only.
package testref

import (
	"bytes"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// Python is Debian's interpreter, the one `make test` installs the
// reference libraries for (python3-torch, python3-sklearn, python3-scipy).
const Python = "/usr/bin/python3"

// InCI reports whether the tests run under CI (CI=true, set by the
// Makefile), where a missing outside reference is a failure, not a skip.
func InCI() bool { return os.Getenv("CI") == "true" }

// Missing skips the test with a message naming what is missing and the
// make target that provides it; under CI it fails instead.
func Missing(t testing.TB, what, target string) {
	t.Helper()
	if InCI() {
		t.Fatalf("%s is missing (CI=true): run `make %s`", what, target)
	}
	t.Skipf("SKIPPED: %s is missing; run `make %s` to run this check", what, target)
}

// RequirePython skips (under CI: fails) unless Debian's Python can import
// every module named.
func RequirePython(t testing.TB, modules ...string) {
	t.Helper()
	for _, m := range modules {
		if err := exec.Command(Python, "-c", "import "+m).Run(); err != nil {
			Missing(t, Python+" with the module "+m+" ("+err.Error()+")", "deps-test")
		}
	}
}

// Root is the module's root folder (where go.mod is).
func Root() string {
	_, file, _, _ := runtime.Caller(0)
	return filepath.Join(filepath.Dir(file), "..", "..")
}

// Corpus returns the folder testdata/name of the module, skipping (under
// CI: failing) when the file probe inside it is missing.
func Corpus(t testing.TB, name, probe string) string {
	t.Helper()
	dir := filepath.Join(Root(), "testdata", name)
	if _, err := os.Stat(filepath.Join(dir, probe)); err != nil {
		Missing(t, "the corpus "+dir, "corpora")
	}
	return dir
}

// Close reports whether a and b agree within the absolute tolerance abs or
// the relative tolerance rel (gonum's floats/scalar.EqualWithinAbsOrRel),
// the one tolerance test of the project.
func Close(a, b, abs, rel float64) bool { return scalar.EqualWithinAbsOrRel(a, b, abs, rel) }

// Floats parses the submatches of a regular-expression match m (as
// FindStringSubmatch returns it) after the whole match, failing t on one
// that is not a number: for tests that read printed figures back.
func Floats(t testing.TB, m []string) []float64 {
	t.Helper()
	out := make([]float64, len(m)-1)
	for i, s := range m[1:] {
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("%q: %v", m[0], err)
		}
		out[i] = v
	}
	return out
}

// SequentialSkipInRace skips t in the race build (Race) and says why: the
// code t checks (what) starts no goroutine, so the race detector, which
// checks concurrency, has nothing to find there and only makes it ten
// times slower. The full build (make test-go) runs t with every check.
func SequentialSkipInRace(t testing.TB, what string) {
	t.Helper()
	if Race {
		t.Skipf("race build: %s starts no goroutine; make test-go runs this test in full", what)
	}
}

// RunScript runs the Python script testdata/NAME of the calling package's
// folder with args, stdin (nil: none) as its standard input, and returns
// what it printed; the test fails with the script's error output when it
// does not exit 0.
func RunScript(t testing.TB, name string, stdin []byte, args ...string) []byte {
	t.Helper()
	cmd := exec.Command(Python, append([]string{filepath.Join("testdata", name)}, args...)...)
	if stdin != nil {
		cmd.Stdin = bytes.NewReader(stdin)
	}
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("%s: %v\n%s", name, err, stderr.String())
	}
	return out
}

// JSONFields marshals v and reads it back as a JSON object, to check the
// keys and values a reader of the JSON sees; it fails t on an error.
func JSONFields(t testing.TB, v any) map[string]any {
	t.Helper()
	b, err := json.Marshal(v)
	if err != nil {
		t.Fatal(err)
	}
	var back map[string]any
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	return back
}

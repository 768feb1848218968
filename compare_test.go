package main

import (
	"bufio"
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"unicode/utf8"

	"telltale/internal/testref"
)

// compare and mask test each model against the first on the same texts
// with the exact McNemar test: the counts are those of eval's exported
// predictions, the p-value SciPy's scipy.stats.binomtest(min, only_a +
// only_b, 0.5) run live (two-sided; the binomial at 1/2 is symmetric, so it
// is the exact McNemar p). The text table keeps its columns in line
// whatever the ECE cell's length.
func TestCompareMcNemar(t *testing.T) {
	testref.RequirePython(t, "scipy")
	dir := t.TempDir()
	data := demoPart(t, dir, 500)
	test := filepath.Join("testdata", "demo", "test.csv")
	var models []string
	for i, seed := range []string{"1", "2"} {
		m := filepath.Join(dir, fmt.Sprintf("m%d.tt", i))
		// The models' own predictions are compared, never their linear
		// baselines: none is fitted.
		if code, _, stderr := tt(t, "train", "--data", data, "--test", test, "--out", m, "--epochs", "1", "--dim", "16",
			"--maps", "8", "--seed", seed, "--baseline=false", "--quiet"); code != 0 {
			t.Fatalf("train: exit %d: %s", code, stderr)
		}
		models = append(models, m)
	}
	masked := filepath.Join(dir, "masked.tt")
	var rows, maskRows []compareRow
	jsonOf(t, &rows, "compare", "--models", strings.Join(models, ","), "--test", test, "--json", "--quiet")
	jsonOf(t, &maskRows, "mask", "--model", models[0], "--filters", "0,3,5", "--out", masked, "--test", test, "--json", "--quiet")
	onlyA, onlyB := rightOnly(t, dir, test, models[0], models[1])
	mOnlyA, mOnlyB := rightOnly(t, dir, test, models[0], masked)
	for _, c := range []struct {
		what         string
		rows         []compareRow
		onlyA, onlyB int
	}{{"compare", rows, onlyA, onlyB}, {"mask", maskRows, mOnlyA, mOnlyB}} {
		if len(c.rows) != 2 || c.rows[0].VsFirst != nil || c.rows[1].VsFirst == nil {
			t.Fatalf("%s --json: want the test on the second row alone: %+v", c.what, c.rows)
		}
		got := c.rows[1].VsFirst
		want := binomTestSciPy(t, min(c.onlyA, c.onlyB), c.onlyA+c.onlyB)
		if got.OnlyA != c.onlyA || got.OnlyB != c.onlyB || !testref.Close(got.P, want, 1e-12, 1e-9) {
			t.Errorf("%s: McNemar %+v; from the exports %d and %d, SciPy p %g", c.what, *got, c.onlyA, c.onlyB, want)
		}
	}
	if onlyA+onlyB == 0 {
		t.Errorf("the two models agree on every text: the test checks nothing")
	}

	code, out, stderr := tt(t, "compare", "--models", strings.Join(models, ","), "--test", test, "--quiet")
	if code != 0 {
		t.Fatalf("compare: exit %d: %s", code, stderr)
	}
	wantLine := fmt.Sprintf("model 2: %d right only with model 1, %d only with model 2; two-sided p = ", onlyA, onlyB)
	if !strings.Contains(out, wantLine) {
		t.Errorf("compare does not give the McNemar test %q:\n%s", wantLine, out)
	}
	lines := strings.Split(out, "\n")
	for i, l := range lines {
		if !strings.HasPrefix(l, "model ") || !strings.HasSuffix(l, "flipped") {
			continue
		}
		col := utf8.RuneCountInString(l[:strings.Index(l, "flipped")])
		for _, row := range lines[i+1 : i+3] {
			if r := []rune(row); len(r) <= col || r[col-1] != ' ' || r[col-2] != ' ' || r[col] == ' ' {
				t.Errorf("the flipped column does not start at %d:\n%s\n%s", col, l, row)
			}
		}
		return
	}
	t.Errorf("compare prints no table header:\n%s", out)
}

// rightOnly counts the texts of test that model a labels right and b
// wrong, and the other way round, from eval's exported predictions.
func rightOnly(t *testing.T, dir, test, a, b string) (onlyA, onlyB int) {
	t.Helper()
	right := func(model string) []bool {
		exp := filepath.Join(dir, filepath.Base(model)+".jsonl")
		if code, _, stderr := tt(t, "eval", "--model", model, "--test", test, "--export", exp, "--quiet"); code != 0 {
			t.Fatalf("eval --export: exit %d: %s", code, stderr)
		}
		f, err := os.Open(exp)
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		var out []bool
		sc := bufio.NewScanner(f)
		sc.Buffer(nil, 1<<20)
		for sc.Scan() {
			var row struct{ Gold, Predicted string }
			if err := json.Unmarshal(sc.Bytes(), &row); err != nil {
				t.Fatal(err)
			}
			out = append(out, row.Gold == row.Predicted)
		}
		return out
	}
	ra, rb := right(a), right(b)
	if len(ra) != len(rb) || len(ra) == 0 {
		t.Fatalf("exports of %d and %d rows", len(ra), len(rb))
	}
	for i := range ra {
		switch {
		case ra[i] && !rb[i]:
			onlyA++
		case rb[i] && !ra[i]:
			onlyB++
		}
	}
	return onlyA, onlyB
}

// binomTestSciPy is scipy.stats.binomtest(k, n, 0.5).pvalue (1 when n = 0).
func binomTestSciPy(t *testing.T, k, n int) float64 {
	t.Helper()
	if n == 0 {
		return 1
	}
	out, err := exec.Command(testref.Python, "-c", fmt.Sprintf(
		"from scipy.stats import binomtest; print(repr(binomtest(%d, %d, 0.5).pvalue))", k, n)).Output()
	if err != nil {
		t.Fatalf("scipy: %v", err)
	}
	var p float64
	if _, err := fmt.Sscan(strings.TrimSpace(string(out)), &p); err != nil {
		t.Fatal(err)
	}
	return p
}

package main

import (
	"encoding/csv"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"telltale/explain"
)

// largestAbs picks what a stable sort by −|v| puts first (the reference:
// sort.SliceStable of the standard library), ties and fewer values than
// asked included.
func TestLargestAbs(t *testing.T) {
	rng := rand.New(rand.NewPCG(49, 49))
	for trial := 0; trial < 500; trial++ {
		v := make([]float64, rng.IntN(40))
		for i := range v {
			v[i] = float64(rng.IntN(9)-4) / 2 // many ties, both signs
			if trial%2 == 0 {
				v[i] = rng.NormFloat64()
			}
		}
		k := rng.IntN(12)
		order := make([]int, len(v))
		for i := range order {
			order[i] = i
		}
		sortBy(order, func(i int) float64 { return -math.Abs(v[i]) })
		if got, want := largestAbs(v, k), order[:min(k, len(order))]; !slices.Equal(got, want) {
			t.Fatalf("values %v, k %d: %v, the stable sort gives %v", v, k, got, want)
		}
	}
}

// TestKeptDownNamesWordWeights: each kept-down window shows the estimate
// beside the measured change split into its parts (explain's
// KeptDownWindow.Parts: this filter, the other filters and, on a model
// with word weights only, the word weights) and the whole.
func TestKeptDownNamesWordWeights(t *testing.T) {
	e := &explain.Explanation{Label: "a", Labels: []string{"a", "b"}, RunnerUp: 1,
		Tokens: []explain.TokenSpan{{Text: "no"}, {Text: "ferry"}, {Text: "today"}},
		KeptDown: []explain.KeptDownWindow{{Filter: 3, Width: 2, Start: 0, By: []int{0}, Effect: 0.5, Own: 0.5,
			WordsHeld: 1.75, LogOdds: 1.75, Drop: 0.1}}}
	e.LogOdds.Value = 1
	for _, wide := range []bool{false, true} {
		line := `"[no] ferry"  estimated +0.500; measured: this filter +0.500, other filters +0.250, whole +0.750 (p(a) falls by 0.100)`
		if wide {
			e.LogOdds.Words = []float64{0.1, 0.2, 0.3}
			e.KeptDown[0].WordsHeld = 1.25
			line = `"[no] ferry"  estimated +0.500; measured: this filter +0.500, other filters -0.250, word weights +0.500, whole +0.750 (p(a) falls by 0.100)`
		}
		var b strings.Builder
		writeKeptDown(&b, e)
		if out := b.String(); !strings.Contains(out, line) {
			t.Errorf("wide %v: the window's line %s is missing:\n%s", wide, line, out)
		}
	}
}

// TestExplainStdinLines: texts read from standard input keep the number of
// their input line, blank lines counted (as predict's): --json gives it as
// line, a blank line giving {"line":N,"blank":true} as predict does; the
// text output names each text's line; and --export's rows carry it in the
// line column after text_index, so a row is traced back to its input.
// Reference: the input written here, whose texts are on lines 1, 3 and 4
// and whose line 2 is blank.
func TestExplainStdinLines(t *testing.T) {
	model := tinyModel(t)
	in := "the ferry was late\n\nthanks to the crew\nthe cafe was closed\n"
	want := []int{1, 3, 4}
	code, stdout, stderr := runCmd(t, in, "explain", "--model", model, "--json")
	if code != 0 {
		t.Fatalf("explain --json: exit %d: %s", code, stderr)
	}
	var got []int
	for _, l := range strings.Split(strings.TrimSpace(stdout), "\n") {
		var e struct {
			Line  int
			Blank bool
		}
		if err := json.Unmarshal([]byte(l), &e); err != nil {
			t.Fatal(err)
		}
		if e.Blank {
			if l != `{"line":2,"blank":true}` {
				t.Errorf("blank line: %s, want predict's {\"line\":2,\"blank\":true}", l)
			}
			continue
		}
		got = append(got, e.Line)
	}
	if !slices.Equal(got, want) {
		t.Errorf("--json lines %v, want %v", got, want)
	}
	if !strings.Contains(stdout, `{"line":2,"blank":true}`) {
		t.Errorf("--json: no line for the blank line 2:\n%s", stdout)
	}
	code, stdout, stderr = runCmd(t, in, "explain", "--model", model)
	if code != 0 {
		t.Fatalf("explain: exit %d: %s", code, stderr)
	}
	var heads []string
	for _, l := range strings.Split(stdout, "\n") {
		if strings.HasPrefix(l, "line ") {
			heads = append(heads, l)
		}
	}
	if wantHeads := []string{"line 1:", "line 2: blank", "line 3:", "line 4:"}; !slices.Equal(heads, wantHeads) {
		t.Errorf("text output names lines %q, want %q", heads, wantHeads)
	}
	exp := filepath.Join(t.TempDir(), "attr.csv")
	if code, _, stderr := runCmd(t, in, "explain", "--model", model, "--export", exp, "--quiet"); code != 0 {
		t.Fatalf("explain --export: exit %d: %s", code, stderr)
	}
	f, err := os.Open(exp)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) < 4 || !slices.Equal(rows[0][:3], []string{"text_index", "line", "token_index"}) {
		t.Fatalf("export header %v (of %d rows)", rows[0], len(rows))
	}
	for _, r := range rows[1:] {
		ti, _ := strconv.Atoi(r[0])
		if r[1] != strconv.Itoa(want[ti]) {
			t.Errorf("row %v: line %s, want %d", r[:4], r[1], want[ti])
		}
	}
}

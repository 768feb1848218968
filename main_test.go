package main

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"telltale/cnn"
)

// runCmd runs one command line in-process and returns its exit code and output.
func runCmd(t *testing.T, stdin string, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(context.Background(), args, strings.NewReader(stdin), &out, &errb)
	return code, out.String(), errb.String()
}

// smallDemo writes the first n lines of the demo training file (its header
// included) to a temporary file.
func smallDemo(t *testing.T, n int) string {
	t.Helper()
	b, err := os.ReadFile("testdata/demo/train.csv")
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.SplitAfter(string(b), "\n")
	// Records may span lines; cut at a line that starts a new record.
	var sb strings.Builder
	count := 0
	for _, l := range lines {
		if count >= n && strings.HasPrefix(l, "\"") {
			break
		}
		sb.WriteString(l)
		count++
	}
	p := filepath.Join(t.TempDir(), "small.csv")
	if err := os.WriteFile(p, []byte(sb.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestUsageErrorsExitTwo(t *testing.T) {
	cases := [][]string{
		{},
		{"no-such-command"},
		{"train", "--data", "x.csv"}, // --out missing
		{"train", "--no-such-flag"},  // unknown flag
		{"eval", "--data", "testdata/demo/test.csv"}, // --model missing
		{"explain", "--model", "m", "--method", "shapes"},
		{"data"},
	}
	for _, args := range cases {
		code, _, stderr := runCmd(t, "", args...)
		if code != 2 {
			t.Errorf("%q: exit %d, want 2 (stderr %q)", args, code, stderr)
		}
		if stderr == "" {
			t.Errorf("%q: no message on stderr", args)
		}
	}
}

func TestRuntimeErrorsExitOneAndNameTheFile(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "bad.csv")
	os.WriteFile(bad, []byte("text,label\n\"unclosed,spam\n"), 0o644)
	junk := filepath.Join(dir, "junk.tt")
	os.WriteFile(junk, []byte("not a model at all"), 0o644)
	// A missing input is found before any work, a usage error (exit 2).
	cases := []struct {
		args []string
		code int
		want string
	}{
		{[]string{"data", "--data", bad}, 1, "bad.csv"},
		{[]string{"data", "--data", filepath.Join(dir, "missing.csv")}, 2, "missing.csv"},
		{[]string{"eval", "--model", junk, "--data", "testdata/demo/test.csv"}, 1, "junk.tt"},
		{[]string{"predict", "--model", filepath.Join(dir, "none.tt"), "--text", "hello"}, 2, "none.tt"},
	}
	for _, c := range cases {
		code, _, stderr := runCmd(t, "", c.args...)
		if code != c.code || !strings.Contains(stderr, c.want) {
			t.Errorf("%q: exit %d, stderr %q; want exit %d naming %q", c.args, code, stderr, c.code, c.want)
		}
	}
}

// TestTourContract trains a tiny model on part of the demo corpus and checks
// the JSON contract of the commands that later checks rely on.
func TestTourContract(t *testing.T) {
	data := smallDemo(t, 600)
	model := filepath.Join(t.TempDir(), "m.tt")
	code, out, stderr := runCmd(t, "", "train", "--data", data, "--out", model, "--epochs", "2", "--dim", "16",
		"--maps", "8", "--json", "--quiet")
	if code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	var tr map[string]any
	if err := json.Unmarshal([]byte(out), &tr); err != nil {
		t.Fatalf("train --json: %v\n%s", err, out)
	}
	if v, ok := tr["examples_per_second"].(float64); !ok || v <= 0 {
		t.Errorf("train --json: examples_per_second = %v", tr["examples_per_second"])
	}

	code, out, stderr = runCmd(t, "", "eval", "--model", model, "--data", "testdata/demo/test.csv", "--json")
	if code != 0 {
		t.Fatalf("eval: exit %d: %s", code, stderr)
	}
	var ev map[string]any
	if err := json.Unmarshal([]byte(out), &ev); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"accuracy", "macro_f1", "per_class", "confusion", "ece"} {
		if _, ok := ev[k]; !ok {
			t.Errorf("eval --json lacks %q", k)
		}
	}
	if conf := ev["confusion"].([]any); len(conf) != 5 {
		t.Errorf("eval: confusion has %d rows, want 5 (the demo's teams)", len(conf))
	}
	checkEvalIntervals(t, out)

	code, out, stderr = runCmd(t, "", "compare", "--models", model+","+model, "--data", "testdata/demo/test.csv", "--json")
	if code != 0 {
		t.Fatalf("compare: exit %d: %s", code, stderr)
	}
	var rows []struct {
		Metrics         struct{ N int } `json:"metrics"`
		Flipped         float64         `json:"flipped_vs_first"`
		FlippedInterval *cnn.Interval   `json:"flipped_vs_first_interval"`
		Intervals       map[string]any  `json:"intervals"`
	}
	if err := json.Unmarshal([]byte(out), &rows); err != nil {
		t.Fatal(err)
	}
	// A model against itself flips nothing: the Wilson interval of 0 of n.
	if len(rows) != 2 || rows[0].FlippedInterval != nil || rows[1].FlippedInterval == nil || rows[1].Flipped != 0 ||
		*rows[1].FlippedInterval != cnn.WilsonInterval(0, rows[1].Metrics.N, cnn.IntervalLevel) || rows[1].Intervals["ece"] == nil {
		t.Errorf("compare --json of a model against itself: %s", out)
	}

	code, out, stderr = runCmd(t, "first text\nsecond text about a lost bag\n", "predict", "--model", model, "--json")
	if code != 0 {
		t.Fatalf("predict: exit %d: %s", code, stderr)
	}
	lines := strings.Split(strings.TrimSpace(out), "\n")
	if len(lines) != 2 {
		t.Fatalf("predict: %d lines for 2 texts", len(lines))
	}
	for _, l := range lines {
		var p struct {
			Label         string             `json:"label"`
			Probabilities map[string]float64 `json:"probabilities"`
		}
		if err := json.Unmarshal([]byte(l), &p); err != nil {
			t.Fatal(err)
		}
		sum := 0.0
		for _, v := range p.Probabilities {
			sum += v
		}
		if p.Label == "" || len(p.Probabilities) != 5 || sum < 0.999 || sum > 1.001 {
			t.Errorf("predict: %s", l)
		}
	}

	text := "My bag was left on the Brindle Rose, can you help?"
	code, out, stderr = runCmd(t, "", "explain", "--model", model, "--text", text, "--json")
	if code != 0 {
		t.Fatalf("explain: exit %d: %s", code, stderr)
	}
	type shares struct {
		Class      int       `json:"class"`
		Against    int       `json:"against"`
		Value      float64   `json:"value"`
		OutputBias float64   `json:"output_bias"`
		FilterBias []float64 `json:"filter_bias"`
		Tokens     []float64 `json:"tokens"`
	}
	var ex struct {
		Tokens []struct {
			Text       string `json:"text"`
			Start, End int
		} `json:"tokens"`
		Label         string    `json:"label"`
		Class         int       `json:"class"`
		RunnerUp      int       `json:"runner_up"`
		Probabilities []float64 `json:"probabilities"`
		LogOdds       shares    `json:"log_odds"`
		Centred       []shares  `json:"centred"`
		Attributions  struct {
			Occlusion []float64 `json:"occlusion"`
		} `json:"attributions"`
		Logits []float64 `json:"logits"`
	}
	if err := json.Unmarshal([]byte(out), &ex); err != nil {
		t.Fatal(err)
	}
	if len(ex.Tokens) == 0 || len(ex.LogOdds.Tokens) != len(ex.Tokens) || len(ex.Attributions.Occlusion) != len(ex.Tokens) || len(ex.Centred) != 5 {
		t.Fatalf("explain: %d tokens, %d shares, %d occlusion values, %d centred logits", len(ex.Tokens), len(ex.LogOdds.Tokens), len(ex.Attributions.Occlusion), len(ex.Centred))
	}
	if ex.Logits != nil {
		t.Errorf("explain --json gives the logits, which training does not pin down")
	}
	for _, tok := range ex.Tokens {
		if !strings.EqualFold(text[tok.Start:tok.End], tok.Text) {
			t.Errorf("token %q has offsets [%d,%d) = %q", tok.Text, tok.Start, tok.End, text[tok.Start:tok.End])
		}
	}
	// The exact identity, through the command's JSON: output bias + filter
	// biases + token shares = the log-odds, which is log p(label)/p(runner-up)
	// of the probabilities given; the same for every centred logit, which add
	// up to zero.
	var centredSum float64
	for j, s := range append([]shares{ex.LogOdds}, ex.Centred...) {
		sum := s.OutputBias
		for _, v := range s.FilterBias {
			sum += v
		}
		for _, v := range s.Tokens {
			sum += v
		}
		if d := sum - s.Value; d > 1e-4 || d < -1e-4 {
			t.Errorf("quantity %d (class %d against %d): parts add up to %v, value %v", j, s.Class, s.Against, sum, s.Value)
		}
		if j > 0 {
			centredSum += s.Value
		}
	}
	lo := math.Log(ex.Probabilities[ex.Class] / ex.Probabilities[ex.RunnerUp])
	if d := lo - ex.LogOdds.Value; d > 1e-4 || d < -1e-4 || ex.LogOdds.Class != ex.Class || ex.LogOdds.Against != ex.RunnerUp {
		t.Errorf("log-odds %v of %d against %d; the probabilities give %v of %d against %d", ex.LogOdds.Value, ex.LogOdds.Class, ex.LogOdds.Against, lo, ex.Class, ex.RunnerUp)
	}
	if centredSum > 1e-6 || centredSum < -1e-6 {
		t.Errorf("centred logits add up to %v", centredSum)
	}
}

// TestMisuseExitsTwo: command lines that are wrong in ways the flag package
// alone would not catch end with a usage error, not a silent default.
func TestMisuseExitsTwo(t *testing.T) {
	data := smallDemo(t, 300)
	dir := t.TempDir()
	model := filepath.Join(dir, "m.tt")
	if code, _, stderr := runCmd(t, "", "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--quiet"); code != 0 {
		t.Fatalf("train: %s", stderr)
	}
	other := filepath.Join(dir, "other.csv")
	os.WriteFile(other, []byte("text,label\nthe ferry,x\nthe boat,y\nmy bag,x\nthe quay,y\n"), 0o644)
	otherModel := filepath.Join(dir, "o.tt")
	if code, _, stderr := runCmd(t, "", "train", "--data", other, "--dev", other, "--out", otherModel, "--epochs", "1", "--dim", "8", "--maps", "4", "--quiet"); code != 0 {
		t.Fatalf("train: %s", stderr)
	}
	cases := []struct {
		args []string
		want string
	}{
		{[]string{"train", "--data", data, "--out", filepath.Join(dir, "x.tt"), "oops", "--epochs", "1"}, `unexpected argument "oops"`},
		{[]string{"predict", "--model", model, "rocket moon"}, `unexpected argument "rocket moon"`},
		{[]string{"train", "--data", data, "--out", filepath.Join(dir, "x.tt"), "--epochs", "0"}, "--epochs 0: give 1 or more"},
		{[]string{"predict", "--model", model, "--text", ""}, "--text is empty"},
		{[]string{"explain", "--model", model, "--text", "  "}, "--text is empty"},
		{[]string{"explain", "--model", model, "--text", "lost bag", "--method", "occlusion", "--class", "praise"}, "occlusion measures the predicted class only"},
		{[]string{"explain", "--model", model, "--text", "lost bag", "--windows", "0"}, "widths are 1 or more"},
		{[]string{"filters", "--model", model, "--data", data, "--selectivity", "7"}, "--selectivity 7"},
		{[]string{"filters", "--model", model, "--data", data, "--alpha", "0"}, "--alpha 0"},
		{[]string{"explain", "--model", model, "--text", "lost bag", "--kept-down", "-1"}, "--kept-down -1"},
		{[]string{"eval", "--model", model, "--data", data, "--bins", "-3"}, "--bins -3"},
		{[]string{"faithfulness", "--model", model, "--data", data, "--limit", "-5"}, "--limit -5"},
		{[]string{"data", "--data", data, "--relabel", "spm=junk"}, `has no label "spm"`},
		{[]string{"compare", "--models", model + "," + otherModel, "--data", data}, "compare needs models with the same labels"},
	}
	for _, c := range cases {
		code, _, stderr := runCmd(t, "", c.args...)
		if code != 2 || !strings.Contains(stderr, c.want) {
			t.Errorf("%q: exit %d, stderr %q; want exit 2 and %q", c.args, code, stderr, c.want)
		}
	}
	// Blank lines of standard input get no label, but an empty output line
	// each, so that outputs pair with input lines.
	code, out, _ := runCmd(t, "refund please\n\n  \nlost my bag\n", "predict", "--model", model)
	lines := strings.Split(strings.TrimSuffix(out, "\n"), "\n")
	if code != 0 || len(lines) != 4 || lines[1] != "" || lines[2] != "" || !strings.HasSuffix(lines[3], "\tlost my bag") {
		t.Errorf("predict over 2 texts and 2 blank lines: exit %d, output %q", code, out)
	}
}

// checkEvalIntervals checks eval's JSON out for the intervals beside its
// figures: each holds its figure, and the figure is the metrics' own.
func checkEvalIntervals(t *testing.T, out string) {
	t.Helper()
	var ev struct {
		cnn.Metrics
		Intervals cnn.MetricIntervals `json:"intervals"`
	}
	if err := json.Unmarshal([]byte(out), &ev); err != nil {
		t.Fatal(err)
	}
	iv := ev.Intervals
	holds := func(name string, x cnn.Interval, v float64) {
		if x.Estimate != v || !(x.Low <= x.Estimate && x.Estimate <= x.High) {
			t.Errorf("eval --json: %s %+v, figure %v", name, x, v)
		}
	}
	if iv.ECE == nil || len(iv.PerClass) != len(ev.PerClass) {
		t.Fatalf("eval --json: intervals %+v", iv)
	}
	holds("weighted_f1", iv.WeightedF1, ev.WeightedF1)
	// The ECE's interval is about its bias-corrected estimate; the
	// figure beside it is the metrics' own.
	if e := iv.ECE; e.Observed != ev.ECE || !(0 <= e.Low && e.Low <= e.Estimate && e.Estimate <= e.High && e.High <= 1) {
		t.Errorf("eval --json: ece %+v, figure %v", *e, ev.ECE)
	}
	if !(iv.ECE.P > 0 && iv.ECE.P <= 1) {
		t.Errorf("eval --json: the calibration test's p-value %v", iv.ECE.P)
	}
	for c, pc := range ev.PerClass {
		holds(pc.Label+" precision", iv.PerClass[c].Precision, pc.Precision)
		holds(pc.Label+" recall", iv.PerClass[c].Recall, pc.Recall)
		holds(pc.Label+" F1", iv.PerClass[c].F1, pc.F1)
	}
}

// overriding returns the command line base with the options of extra
// appended, after taking out of base every option extra gives again (an
// option given twice is refused). Options in base are "--name" or
// "--name value"; a value never starts with "--".
func overriding(base []string, extra ...string) []string {
	again := map[string]bool{}
	for _, tok := range extra {
		if strings.HasPrefix(tok, "--") {
			again[strings.SplitN(strings.TrimPrefix(tok, "--"), "=", 2)[0]] = true
		}
	}
	var out []string
	for i := 0; i < len(base); i++ {
		tok := base[i]
		name := strings.SplitN(strings.TrimPrefix(tok, "--"), "=", 2)[0]
		if !strings.HasPrefix(tok, "--") || !again[name] {
			out = append(out, tok)
			continue
		}
		if !strings.Contains(tok, "=") && i+1 < len(base) && !strings.HasPrefix(base[i+1], "--") {
			i++ // its value goes with it
		}
	}
	return append(out, extra...)
}

package main

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"telltale/cnn"
)

// figuresBlock returns the lines of a writeFigures block in out after its
// heading (the line starting with prefix and ending in "intervals):").
func figuresBlock(t *testing.T, out, prefix string) []string {
	t.Helper()
	lines := strings.Split(out, "\n")
	for i, l := range lines {
		if strings.HasPrefix(l, prefix) && strings.HasSuffix(l, "(95% intervals):") {
			var block []string
			for _, b := range lines[i+1:] {
				if !strings.HasPrefix(b, "  ") {
					break
				}
				block = append(block, b)
			}
			return block
		}
	}
	t.Fatalf("no block headed %q in:\n%s", prefix, out)
	return nil
}

// checkFigures checks the figures f of the metrics cnnM and baseM (nil:
// none) against their definitions: the Wilson interval of the right
// texts, the bootstrap of the confusion matrix, and the McNemar counts,
// whose difference is the difference of the right texts (an identity).
func checkFigures(t *testing.T, what string, f cnn.Figures, cnnM cnn.Metrics, baseM *cnn.Metrics) {
	t.Helper()
	if f.CNN != cnn.HeadlineOf(cnnM) || f.CNN.Accuracy.Estimate != cnnM.Accuracy || f.CNN.MacroF1.Estimate != cnnM.MacroF1 {
		t.Errorf("%s: CNN figures %+v of metrics accuracy %g macro-F1 %g", what, f.CNN, cnnM.Accuracy, cnnM.MacroF1)
	}
	if baseM == nil {
		if f.Baseline != nil || f.McNemar != nil {
			t.Errorf("%s: baseline figures %+v %+v without a baseline", what, f.Baseline, f.McNemar)
		}
		return
	}
	if f.Baseline == nil || f.McNemar == nil {
		t.Fatalf("%s: no baseline figures", what)
	}
	if *f.Baseline != cnn.HeadlineOf(*baseM) {
		t.Errorf("%s: baseline figures %+v of metrics %+v", what, *f.Baseline, *baseM)
	}
	right := func(m cnn.Metrics) int {
		n := 0
		for c, row := range m.Confusion {
			n += row[c]
		}
		return n
	}
	if d := f.McNemar.CNNOnly - f.McNemar.BaselineOnly; d != right(cnnM)-right(*baseM) {
		t.Errorf("%s: McNemar counts %+v differ by %d, the right texts by %d", what, f.McNemar, d, right(cnnM)-right(*baseM))
	}
	if f.McNemar.P <= 0 || f.McNemar.P > 1 {
		t.Errorf("%s: McNemar p = %g", what, f.McNemar.P)
	}
}

// checkIntervals checks that iv holds an interval of every measured figure
// of m that has one (weighted F1, ECE with its calibration test, each
// class's precision, recall and F1), each about m's own figure: its
// estimate is m's (an identity) and lies within its bounds; the ECE's is
// the bias-corrected one, with m's beside it as the observed ECE.
func checkIntervals(t *testing.T, what string, iv *cnn.MetricIntervals, m cnn.Metrics) {
	t.Helper()
	if iv == nil || iv.ECE == nil || len(iv.PerClass) != len(m.PerClass) {
		t.Fatalf("%s: intervals %+v for %d classes (want the ECE's too)", what, iv, len(m.PerClass))
	}
	check := func(name string, got cnn.Interval, want float64) {
		if got.Estimate != want || !(got.Low <= got.Estimate && got.Estimate <= got.High) {
			t.Errorf("%s: %s interval %+v of the figure %g", what, name, got, want)
		}
	}
	check("weighted F1", iv.WeightedF1, m.WeightedF1)
	// The ECE's interval is about the ECE corrected for its bias
	// (cnn.BootstrapECE); the observed ECE beside it is m's.
	if e := iv.ECE; e.Observed != m.ECE || !(e.Low <= e.Estimate && e.Estimate <= e.High) {
		t.Errorf("%s: ECE observed %g, interval %+v, of the figure %g", what, e.Observed, e.Interval, m.ECE)
	}
	if !(iv.ECE.P > 0 && iv.ECE.P <= 1) || iv.ECE.Draws != cnn.CalibrationDraws {
		t.Errorf("%s: calibration test p = %g over %d draws", what, iv.ECE.P, iv.ECE.Draws)
	}
	for c, pc := range m.PerClass {
		ci := iv.PerClass[c]
		if ci.Label != pc.Label {
			t.Errorf("%s: class %d intervals of %q, metrics of %q", what, c, ci.Label, pc.Label)
		}
		check(pc.Label+" precision", ci.Precision, pc.Precision)
		check(pc.Label+" recall", ci.Recall, pc.Recall)
		check(pc.Label+" F1", ci.F1, pc.F1)
	}
}

// TestTrainEvalCompareShowTheBaseline: train fits the baseline beside the
// CNN (the default recipe's), saves it in the model file, and prints and
// writes in its JSON both on the test split with their intervals and the
// McNemar test; eval and compare, given the same data, print the same
// lines and write the same figures. Every measured figure of the JSON has
// its interval (the dev split's, the test split's, the baseline's), the
// dev split is said to have chosen the epoch, and train prints the test
// split's ECE with its interval and calibration test as eval finds them.
func TestTrainEvalCompareShowTheBaseline(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 700)
	model := filepath.Join(dir, "m.tt")
	base := []string{"train", "--data", data, "--out", model, "--epochs", "2", "--dim", "8", "--maps", "4", "--threads", "1"}
	code, trainOut, stderr := tt(t, base...)
	if code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	if !strings.Contains(stderr, "fitting the linear baseline") {
		t.Errorf("train does not show the baseline's phase:\n%s", stderr)
	}
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	if m.Baseline == nil || m.Info.Test == nil {
		t.Fatalf("the model file carries no baseline (%v) or no test figures", m.Baseline == nil)
	}
	trainBlock := figuresBlock(t, trainOut, fmt.Sprintf("test split, %d texts, used for nothing else", m.Info.Test.N))
	if len(trainBlock) != 4 || !strings.HasPrefix(trainBlock[0], "  CNN  ") || !strings.HasPrefix(trainBlock[1], "  linear baseline  ") ||
		!strings.HasPrefix(trainBlock[2], "  the CNN is right on ") || !strings.HasPrefix(trainBlock[3], "  CNN              ECE ") {
		t.Fatalf("train's figures (want the CNN's test ECE last):\n%s", strings.Join(trainBlock, "\n"))
	}
	trainECE := trainBlock[3]
	trainBlock = trainBlock[:3]

	// eval on the same data finds the same test split and prints the same lines.
	code, evalOut, stderr := tt(t, "eval", "--model", model, "--data", data)
	if code != 0 {
		t.Fatalf("eval: exit %d: %s", code, stderr)
	}
	evalBlock := figuresBlock(t, evalOut, fmt.Sprintf("test split, %d texts", m.Info.Test.N))
	if strings.Join(evalBlock, "\n") != strings.Join(trainBlock, "\n") {
		t.Errorf("eval's figures differ from train's:\n%s\n--- train:\n%s", strings.Join(evalBlock, "\n"), strings.Join(trainBlock, "\n"))
	}

	code, js, stderr := tt(t, "eval", "--model", model, "--data", data, "--json")
	if code != 0 {
		t.Fatalf("eval --json: exit %d: %s", code, stderr)
	}
	var ev evalOutput
	if err := json.Unmarshal([]byte(js), &ev); err != nil {
		t.Fatal(err)
	}
	if ev.Baseline == nil || ev.Baseline.Metrics == nil || ev.Baseline.C != m.Baseline.Classifier.C {
		t.Fatalf("eval --json: baseline %+v, the model's C %g", ev.Baseline, m.Baseline.Classifier.C)
	}
	checkFigures(t, "eval --json", ev.Figures, ev.Metrics, ev.Baseline.Metrics)
	checkIntervals(t, "eval --json", &ev.Intervals, ev.Metrics)
	checkIntervals(t, "eval --json baseline", ev.Baseline.Intervals, *ev.Baseline.Metrics)
	if ev.Intervals.ECE == nil || trainECE != "  CNN              ECE "+ev.Intervals.ECE.String() {
		t.Errorf("train prints the test ECE\n%s\neval's --json has %+v", trainECE, ev.Intervals.ECE)
	}
	checkKeysDocumented(t, "eval", []byte(js), "### The JSON of train, eval and compare")
	if ev.Accuracy != m.Info.Test.Accuracy {
		t.Errorf("eval's accuracy %g, train's %g", ev.Accuracy, m.Info.Test.Accuracy)
	}
	mc := ev.Figures.McNemar
	// Where the baseline is ahead both say what to try, after the figures.
	if advice := baselineAdvice(m, mc); advice != "" != mc.BaselineAhead() || !strings.Contains(trainOut, advice) || !strings.Contains(evalOut, advice) {
		t.Errorf("the baseline ahead: %v; the advice %q is not in both outputs:\n%s\n---\n%s", mc.BaselineAhead(), advice, trainOut, evalOut)
	}
	sentence := fmt.Sprintf("the CNN is right on %d text", mc.CNNOnly)
	if !strings.Contains(evalOut, sentence) || !strings.Contains(evalOut, fmt.Sprintf("and the baseline on %d where the CNN is wrong; exact McNemar p = %s", mc.BaselineOnly, cnn.PValue(mc.P))) {
		t.Errorf("eval's text lacks the test of its JSON %+v:\n%s", *mc, evalOut)
	}

	// train --json: the same figures, the baseline's metrics and C.
	code, js, stderr = tt(t, append(base, "--json", "--quiet")...)
	if code != 0 {
		t.Fatalf("train --json: exit %d: %s", code, stderr)
	}
	var ts trainSummary
	if err := json.Unmarshal([]byte(js), &ts); err != nil {
		t.Fatal(err)
	}
	if ts.TestFigures == nil || ts.Test == nil || ts.Baseline == nil || ts.Baseline.Metrics == nil {
		t.Fatalf("train --json lacks the figures or the baseline: %s", js)
	}
	checkFigures(t, "train --json", *ts.TestFigures, *ts.Test, ts.Baseline.Metrics)
	if ts.Dev == nil || ts.DevIntervals == nil || ts.TestIntervals == nil || !strings.Contains(ts.DevNote, "chose the epoch") {
		t.Fatalf("train --json: dev %v, dev intervals %v, test intervals %v, dev note %q", ts.Dev != nil, ts.DevIntervals != nil, ts.TestIntervals != nil, ts.DevNote)
	}
	checkIntervals(t, "train --json dev", ts.DevIntervals, *ts.Dev)
	checkIntervals(t, "train --json test", ts.TestIntervals, *ts.Test)
	checkIntervals(t, "train --json baseline", ts.Baseline.Intervals, *ts.Baseline.Metrics)
	// The same seeded intervals of the same test split, whichever command.
	if !reflect.DeepEqual(*ts.TestIntervals, ev.Intervals) || !reflect.DeepEqual(ts.Baseline.Intervals, ev.Baseline.Intervals) {
		t.Errorf("train --json test intervals %+v, baseline's %+v; eval's %+v, %+v", *ts.TestIntervals, ts.Baseline.Intervals, ev.Intervals, ev.Baseline.Intervals)
	}
	checkKeysDocumented(t, "train", []byte(js), "### The JSON of train, eval and compare")

	// compare: every row carries its figures and its baseline.
	code, js, stderr = tt(t, "compare", "--models", model+","+model, "--data", data, "--json")
	if code != 0 {
		t.Fatalf("compare --json: exit %d: %s", code, stderr)
	}
	var rows []compareRow
	if err := json.Unmarshal([]byte(js), &rows); err != nil {
		t.Fatal(err)
	}
	checkKeysDocumented(t, "compare", []byte(js), "### The JSON of train, eval and compare")
	for i, r := range rows {
		if r.Baseline == nil || r.Baseline.Metrics == nil {
			t.Fatalf("compare row %d: no baseline", i)
		}
		checkFigures(t, fmt.Sprintf("compare row %d", i), r.Figures, r.Metrics, r.Baseline.Metrics)
		if !reflect.DeepEqual(r.Baseline.Intervals, ev.Baseline.Intervals) {
			t.Errorf("compare row %d: baseline intervals %+v, eval's %+v", i, r.Baseline.Intervals, ev.Baseline.Intervals)
		}
		if r.Figures.Baseline.Accuracy != ev.Figures.Baseline.Accuracy || r.Figures.CNN.Accuracy != ev.Figures.CNN.Accuracy {
			t.Errorf("compare row %d: figures %+v, eval's %+v", i, r.Figures, ev.Figures)
		}
	}
	code, cmpOut, stderr := tt(t, "compare", "--models", model+","+model, "--data", data)
	if code != 0 {
		t.Fatalf("compare: exit %d: %s", code, stderr)
	}
	cmpBlock := figuresBlock(t, cmpOut, "model 2 beside its linear baseline, test split")
	if strings.Join(cmpBlock, "\n") != strings.Join(evalBlock, "\n") {
		t.Errorf("compare's figures differ from eval's:\n%s\n--- eval:\n%s", strings.Join(cmpBlock, "\n"), strings.Join(evalBlock, "\n"))
	}
}

// TestTrainWithoutBaseline: --baseline=false fits none; nothing shows one.
func TestTrainWithoutBaseline(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	model := filepath.Join(dir, "m.tt")
	code, out, stderr := tt(t, "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--baseline=false", "--json")
	if code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	var ts trainSummary
	if err := json.Unmarshal([]byte(out), &ts); err != nil {
		t.Fatal(err)
	}
	if ts.Baseline != nil || ts.TestFigures == nil || strings.Contains(stderr, "fitting the linear baseline") {
		t.Fatalf("train --baseline=false: baseline %+v, figures %+v; stderr:\n%s", ts.Baseline, ts.TestFigures, stderr)
	}
	checkFigures(t, "train --baseline=false", *ts.TestFigures, *ts.Test, nil)
	if m, err := cnn.Load(model); err != nil || m.Baseline != nil {
		t.Fatalf("the model file: %v, baseline %v", err, m != nil && m.Baseline != nil)
	}
	code, out, _ = tt(t, "eval", "--model", model, "--data", data)
	if block := figuresBlock(t, out, "test split"); code != 0 || len(block) != 1 || strings.Contains(out, "baseline") {
		t.Errorf("eval of a model without a baseline: exit %d\n%s", code, out)
	}
}

// TestTrainOptionsReachTheModel: --class-weight, --word-dropout and
// --token-dropout are recorded in the model's recipe (the baseline weighted
// as the CNN), and without --dim the embedding dimension is the vector
// file's, with or without its "COUNT DIM" header.
func TestTrainOptionsReachTheModel(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	model := filepath.Join(dir, "m.tt")
	train := func(args ...string) *cnn.Model {
		t.Helper()
		args = append([]string{"train", "--data", data, "--out", model, "--epochs", "1", "--maps", "4", "--quiet"}, args...)
		if code, _, stderr := tt(t, args...); code != 0 {
			t.Fatalf("%q: exit %d: %s", args, code, stderr)
		}
		m, err := cnn.Load(model)
		if err != nil {
			t.Fatal(err)
		}
		return m
	}
	m := train("--dim", "8", "--class-weight", "balanced", "--word-dropout", "0.5", "--token-dropout", "0.125")
	if r := m.Info.Recipe; r.ClassWeight != "balanced" || r.WordDropout != 0.5 || r.TokenDropout != 0.125 || m.Baseline == nil || m.Baseline.Config.ClassWeight != "balanced" {
		t.Errorf("recorded recipe %+v, baseline's class weight %q", *r, m.Baseline.Config.ClassWeight)
	}
	if m = train("--dim", "8", "--class-weight", "none", "--token-dropout", "0"); m.Info.Recipe.ClassWeight != "" || m.Info.Recipe.TokenDropout != 0 {
		t.Errorf("--class-weight none --token-dropout 0 recorded %+v", *m.Info.Recipe)
	}
	vec := func(name, header string) string {
		var sb strings.Builder
		sb.WriteString(header)
		for i, w := range []string{"the", "ferry", "my", "ticket"} {
			fmt.Fprintf(&sb, "%s %d 0.5 -0.25 0.125 1 2\n", w, i)
		}
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(sb.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	for _, v := range []string{vec("plain.vec", ""), vec("header.vec", "4 6\n")} {
		if m := train("--vectors", v); m.Config.Dim != 6 {
			t.Errorf("%s without --dim: dimension %d, want the file's 6", v, m.Config.Dim)
		}
		if m := train("--vectors", v, "--dim", "0"); m.Config.Dim != 6 {
			t.Errorf("%s with --dim 0: dimension %d, want the file's 6", v, m.Config.Dim)
		}
		code, _, stderr := tt(t, "train", "--data", data, "--out", model, "--epochs", "1", "--maps", "4", "--quiet", "--vectors", v, "--dim", "8")
		if code != 2 || !strings.Contains(stderr, "--vectors "+v+" line 1: the file's vectors have 6 numbers each, but --dim is 8: give --dim 6, or leave --dim out to take the file's") {
			t.Errorf("%s with --dim 8: exit %d, %s", v, code, stderr)
		}
	}
}

// train's dev figures are written as the test figures are, with the same
// intervals (cnn.HeadlineOf of the dev metrics the model file records) at
// the same precision, and the dev ECE with its interval and calibration
// test.
func TestTrainDevFigures(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	model := filepath.Join(dir, "m.tt")
	code, out, stderr := tt(t, "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--baseline=false")
	if code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	m, err := cnn.Load(model)
	if err != nil || m.Info.Dev == nil {
		t.Fatalf("the model file: %v, dev %v", err, m != nil && m.Info.Dev != nil)
	}
	h := cnn.HeadlineOf(*m.Info.Dev)
	block := figuresBlock(t, out, fmt.Sprintf("dev split, %d texts, used to choose the epoch", h.N))
	want := fmt.Sprintf("  CNN              accuracy %s  macro-F1 %s", h.Accuracy, h.MacroF1)
	if len(block) < 2 || block[0] != want || !strings.HasPrefix(strings.TrimSpace(block[1]), "ECE ") ||
		!strings.Contains(block[1], "test of perfect calibration p ") {
		t.Errorf("dev figures:\n%s\nwant the line %q and the ECE with its interval", strings.Join(block, "\n"), want)
	}
	if test := figuresBlock(t, out, "test split"); len(test) == 0 || len(strings.Fields(test[0])[2]) != len(strings.Fields(block[0])[2]) {
		t.Errorf("dev and test figures differ in precision:\n%s", out)
	}
}

// train and eval say what to try where the baseline is significantly
// ahead of the CNN (cnn.BaselineRemedies), in train's options, and only
// there: nothing when the CNN is ahead or the test is not significant, no
// fitted start for a model that has it, --wide with it for a model
// without word weights.
func TestBaselineAdviceLine(t *testing.T) {
	ahead := &cnn.BaselineTest{CNNOnly: 5, BaselineOnly: 20, P: 0.0041}
	for _, c := range []struct {
		name        string
		wide        bool
		recipe      cnn.TrainConfig
		test        *cnn.BaselineTest
		want, want2 string // "" for no line
	}{
		{"ahead", true, cnn.TrainConfig{}, ahead, "retrain with telltale train --wide-fit (", "--class-weight balanced"},
		{"not significant", true, cnn.TrainConfig{}, &cnn.BaselineTest{CNNOnly: 17, BaselineOnly: 29, P: 0.1}, "", ""},
		{"the CNN ahead", true, cnn.TrainConfig{}, &cnn.BaselineTest{CNNOnly: 20, BaselineOnly: 5, P: 0.0041}, "", ""},
		{"no baseline", true, cnn.TrainConfig{}, nil, "", ""},
		{"fitted start already", true, cnn.TrainConfig{WideFit: true}, ahead, "retrain with telltale train --class-weight balanced (", ""},
		{"no word weights", false, cnn.TrainConfig{}, ahead, "retrain with telltale train --wide --wide-fit (", ""},
	} {
		m := &cnn.Model{Config: cnn.Config{Wide: c.wide}, Info: cnn.Info{Recipe: &c.recipe}}
		got := baselineAdvice(m, c.test)
		if c.want == "" {
			if got != "" {
				t.Errorf("%s: %q, want no line", c.name, got)
			}
			continue
		}
		if !strings.HasPrefix(got, "the baseline is ahead here: ") || !strings.Contains(got, c.want) || !strings.Contains(got, c.want2) ||
			!strings.HasSuffix(got, "and read the cue audit beside the result (README, \"The default recipe\")\n") {
			t.Errorf("%s: %q, want it to hold %q and %q", c.name, got, c.want, c.want2)
		}
	}
}

// The advice where the baseline is ahead says, when the figures are not
// all held-out figures, that it rests on them; nothing is added to no
// advice, or to advice on held-out figures.
func TestAdviceOnHeldOut(t *testing.T) {
	m := &cnn.Model{Config: cnn.Config{Wide: true}, Info: cnn.Info{Recipe: &cnn.TrainConfig{}}}
	advice := baselineAdvice(m, &cnn.BaselineTest{CNNOnly: 5, BaselineOnly: 20, P: 0.0041})
	for _, c := range []struct {
		advice, why, want string
	}{
		{advice, "", advice},
		{"", "texts it learned", ""},
		{advice, "texts it learned", advice + "this rests on texts it learned: judge the baseline's lead on held-out texts\n"},
	} {
		if got := adviceOnHeldOut(c.advice, c.why); got != c.want {
			t.Errorf("adviceOnHeldOut(%q, %q) = %q, want %q", c.advice, c.why, got, c.want)
		}
	}
}

package cnn

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os/exec"
	"slices"
	"testing"

	"telltale/internal/testref"
)

func near(a, b, tol float64) bool { return math.Abs(a-b) <= tol }

// The worked examples of the scikit-learn documentation: f1_score with
// y_true=[0,1,2,0,1,2], y_pred=[0,2,1,0,0,1] gives macro 0.2666…, micro
// 0.3333… and weighted 0.2666…; confusion_matrix with y_true=[2,0,2,2,0,1],
// y_pred=[0,0,2,2,0,2] gives [[2,0,0],[0,0,1],[1,0,2]].
func TestMetricsScikitLearnExamples(t *testing.T) {
	labels := []string{"a", "b", "c"}
	mt := ComputeMetrics(labels, []int{0, 1, 2, 0, 1, 2}, []int{0, 2, 1, 0, 0, 1}, nil, 0)
	if !near(mt.MacroF1, 0.26666666666666666, 1e-12) || !near(mt.WeightedF1, 0.26666666666666666, 1e-12) {
		t.Errorf("macro %g weighted %g, want 0.2666…", mt.MacroF1, mt.WeightedF1)
	}
	if !near(mt.Accuracy, 1.0/3, 1e-12) { // micro-F1 equals accuracy for single-label classes
		t.Errorf("accuracy (micro-F1) %g, want 0.3333…", mt.Accuracy)
	}
	mt = ComputeMetrics(labels, []int{2, 0, 2, 2, 0, 1}, []int{0, 0, 2, 2, 0, 2}, nil, 0)
	want := [][]int{{2, 0, 0}, {0, 0, 1}, {1, 0, 2}}
	for i := range want {
		if !slices.Equal(mt.Confusion[i], want[i]) {
			t.Fatalf("confusion %v, want %v", mt.Confusion, want)
		}
	}
	if mt.PerClass[2].Support != 3 || mt.PerClass[1].F1 != 0 {
		t.Errorf("per class %+v", mt.PerClass)
	}
}

// The torchmetrics documentation's examples (values recalled from memory,
// and recomputed by hand in the comments):
//
// MulticlassCalibrationError(num_classes=3, n_bins=3, norm='l1') on
// preds [[.25,.20,.55],[.55,.05,.40],[.10,.30,.60],[.90,.05,.05]],
// target [0,1,2,0] gives 0.2000: confidences .55 .55 .60 .90, correct
// F F T T; bin (1/3,2/3]: 3/4·|1/3−0.5667| = 0.175, bin (2/3,1]:
// 1/4·|1−0.9| = 0.025.
//
// BinaryCalibrationError(n_bins=2, norm='l1') on preds
// [.25,.25,.55,.75,.75], target [0,0,1,1,1] gives 0.2900 (confidence = the
// positive probability, accuracy = the target): 2/5·0.25 + 3/5·0.3167.
func TestECETorchmetricsExamples(t *testing.T) {
	probs := [][]float32{{.25, .20, .55}, {.55, .05, .40}, {.10, .30, .60}, {.90, .05, .05}}
	gold := []int{0, 1, 2, 0}
	pred := make([]int, 4)
	conf := make([]float64, 4)
	for i, p := range probs {
		pred[i], conf[i] = argmax(p)
	}
	if e := ComputeMetrics([]string{"a", "b", "c"}, gold, pred, conf, 3).ECE; !near(e, 0.2, 1e-6) {
		t.Errorf("multiclass ECE %g, want 0.2000", e)
	}
	e := expectedCalibrationError([]float64{.25, .25, .55, .75, .75}, []bool{false, false, true, true, true}, 2)
	if !near(e, 0.29, 1e-9) {
		t.Errorf("binary ECE %g, want 0.2900", e)
	}
}

// Against Debian's scikit-learn on random labels: accuracy, per-class
// precision/recall/F1/support, macro and weighted F1 and the confusion
// matrix. Some cases leave a class out of the gold labels, predicted in
// some (macro-F1 counts it with F1 0) and not in others (left out), or
// never predict a class. A figure scikit-learn calls ill-defined (it
// differs between zero_division=0 and 1) must be NaN here; so must the F1
// of a class with no gold text, which scikit-learn sets to 0 without a
// warning when the class is predicted (ComputeMetrics).
func TestMetricsAgainstScikitLearn(t *testing.T) {
	testref.SequentialSkipInRace(t, "ComputeMetrics against scikit-learn")
	requirePython(t, "sklearn")
	type tc struct {
		K int   `json:"k"`
		G []int `json:"gold"`
		P []int `json:"pred"`
	}
	rng := rand.New(rand.NewPCG(11, 12))
	var cases []tc
	for i := 0; i < 12; i++ {
		k := 2 + rng.IntN(5)
		used := k
		if i%4 == 3 {
			used = k - 1 // the last class never occurs: excluded from the macro average
		}
		predUsed := used
		if i%4 == 1 {
			used = k - 1 // the last class has no gold text but may be predicted
		}
		n := 1 + rng.IntN(80)
		c := tc{K: k, G: make([]int, n), P: make([]int, n)}
		for j := range c.G {
			c.G[j] = rng.IntN(used)
			if rng.IntN(3) == 0 {
				c.P[j] = c.G[j]
			} else {
				c.P[j] = rng.IntN(predUsed)
			}
			if i%4 == 2 && c.P[j] == 0 {
				c.P[j] = 1 // class 0 is never predicted
			}
		}
		cases = append(cases, c)
	}
	// Gold has only classes 0 and 1; class 2 is predicted, class 3 not
	// (the walkthrough's test file of two of the model's labels).
	cases = append(cases, tc{K: 4, G: []int{0, 0, 0, 1, 1, 1, 1, 0}, P: []int{0, 0, 2, 1, 1, 2, 1, 1}},
		tc{K: 3, G: []int{1, 1, 1, 1}, P: []int{1, 0, 1, 1}}) // one gold label only
	js, _ := json.Marshal(cases)
	script := `
import json, sys, warnings
warnings.filterwarnings("ignore")
from sklearn.metrics import accuracy_score, f1_score, precision_recall_fscore_support, confusion_matrix
out = []
for c in json.load(sys.stdin):
    g, p, labels = c["gold"], c["pred"], list(range(c["k"]))
    pr, rc, f1, sup = precision_recall_fscore_support(g, p, labels=labels, zero_division=0)
    pr1, rc1, f11, _ = precision_recall_fscore_support(g, p, labels=labels, zero_division=1)
    out.append({"accuracy": accuracy_score(g, p),
                "ill": [[bool(a != b) for a, b in zip(x, y)] for x, y in ((pr, pr1), (rc, rc1), (f1, f11))],
                "macro": f1_score(g, p, average="macro", zero_division=0),
                "weighted": f1_score(g, p, average="weighted", zero_division=0),
                "precision": pr.tolist(), "recall": rc.tolist(), "f1": f1.tolist(), "support": sup.tolist(),
                "confusion": confusion_matrix(g, p, labels=labels).tolist()})
print(json.dumps(out))
`
	cmd := exec.Command("/usr/bin/python3", "-c", script)
	cmd.Stdin = bytesReader(js)
	raw, err := cmd.Output()
	if err != nil {
		t.Fatalf("scikit-learn: %v", err)
	}
	var refs []struct {
		Accuracy, Macro, Weighted float64
		Precision, Recall, F1     []float64
		Support                   []int
		Confusion                 [][]int
		Ill                       [3][]bool // precision, recall, F1 ill-defined
	}
	if err := json.Unmarshal(raw, &refs); err != nil {
		t.Fatal(err)
	}
	for i, c := range cases {
		labels := make([]string, c.K)
		mt := ComputeMetrics(labels, c.G, c.P, nil, 0)
		r := refs[i]
		if !near(mt.Accuracy, r.Accuracy, 1e-12) || !near(mt.MacroF1, r.Macro, 1e-12) || !near(mt.WeightedF1, r.Weighted, 1e-12) {
			t.Errorf("case %d: accuracy %g macro %g weighted %g; scikit-learn %g %g %g", i, mt.Accuracy, mt.MacroF1, mt.WeightedF1, r.Accuracy, r.Macro, r.Weighted)
		}
		for k, pc := range mt.PerClass {
			if !sameOrUndefined(pc.Precision, r.Precision[k], r.Ill[0][k]) || !sameOrUndefined(pc.Recall, r.Recall[k], r.Ill[1][k]) ||
				!sameOrUndefined(pc.F1, r.F1[k], r.Ill[2][k] || r.Support[k] == 0) || pc.Support != r.Support[k] {
				t.Errorf("case %d class %d: %+v; scikit-learn P %g R %g F1 %g n %d, ill-defined %v %v %v",
					i, k, pc, r.Precision[k], r.Recall[k], r.F1[k], r.Support[k], r.Ill[0][k], r.Ill[1][k], r.Ill[2][k])
			}
			if !slices.Equal(mt.Confusion[k], r.Confusion[k]) {
				t.Errorf("case %d: confusion row %d %v, scikit-learn %v", i, k, mt.Confusion[k], r.Confusion[k])
			}
		}
	}
}

// sameOrUndefined: ours is NaN when undefined, else want.
func sameOrUndefined(ours, want float64, undefined bool) bool {
	if undefined {
		return math.IsNaN(ours)
	}
	return near(ours, want, 1e-12)
}

func TestEvaluateMatchesForward(t *testing.T) {
	m := randModel(8, 30, 6, []int{2, 3}, 4, 3)
	rng := rand.New(rand.NewPCG(3, 3))
	d := Data{IDs: randTexts(rng, 150, 20, 30), Labels: make([]int, 150)}
	for i := range d.Labels {
		d.Labels[i] = rng.IntN(3)
	}
	mt, pred, err := Evaluate(m, d, 2)
	if err != nil {
		t.Fatal(err)
	}
	correct := 0
	for i, ids := range d.IDs {
		c, _ := argmax(m.Forward(ids).Probs)
		if c != pred[i] {
			t.Fatalf("text %d: Evaluate predicts %d, Forward %d", i, pred[i], c)
		}
		if c == d.Labels[i] {
			correct++
		}
	}
	if !near(mt.Accuracy, float64(correct)/150, 1e-12) || mt.N != 150 {
		t.Errorf("accuracy %g, want %g", mt.Accuracy, float64(correct)/150)
	}
	if _, _, err := Evaluate(m, Data{IDs: [][]int32{{99}}, Labels: []int{0}}, 1); err == nil {
		t.Error("out-of-vocabulary id accepted")
	}
}

// TestECEManyBins: with more bins than texts the ECE costs no more than
// with few, and its value is the definition's (Guo et al. 2017): with
// bins so fine that each distinct confidence sits in a bin of its own,
// Σ over the distinct confidences of |Σ (right − conf)| / n, worked by hand
// below; with one bin, |accuracy − mean confidence|. The bootstrap interval
// and the calibration test take the same bins.
func TestECEManyBins(t *testing.T) {
	conf := []float64{0.2, 0.2, 0.7, 0.9, 1, 0}
	right := []bool{true, false, true, false, true, false}
	// Distinct confidences: 0.2 → |1 − 0.4| = 0.6; 0.7 → 0.3; 0.9 → 0.9;
	// 1 → 0; 0 → 0. Sum 1.8 over 6 texts.
	fine := 1.8 / 6
	// One bin: accuracy 3/6 against mean confidence 3/6.
	cases := []struct {
		name string
		bins int
		want float64
	}{
		{"one bin", 1, 0},
		{"a million bins", 1_000_000, fine},
		{"2^40 bins", 1 << 40, fine},
		{"the largest int", math.MaxInt, fine},
	}
	for _, c := range cases {
		func() {
			defer func() {
				if r := recover(); r != nil {
					t.Errorf("%s: panic %v", c.name, r)
				}
			}()
			if e := expectedCalibrationError(conf, right, c.bins); !near(e, c.want, 1e-12) {
				t.Errorf("%s: ECE %g, want %g", c.name, e, c.want)
			}
			if est, _ := eceDraws(conf, right, c.bins, 20, 1); !near(est, c.want, 1e-12) {
				t.Errorf("%s: the bootstrap's ECE %g, want %g", c.name, est, c.want)
			}
			if e := BootstrapECE(conf, right, c.bins, 20, 0.95, 1); !(0 <= e.Low && e.Low <= e.Estimate && e.Estimate <= e.High && e.High <= 1) {
				t.Errorf("%s: bootstrap %+v", c.name, e)
			}
			if p := CalibrationTest(conf, right, c.bins, 20, 1); p <= 0 || p > 1 {
				t.Errorf("%s: calibration p %g", c.name, p)
			}
		}()
	}
}

// BaselineAhead: the baseline right alone more often than the CNN, at exact
// McNemar p < 0.05 (common practice, no source); p from McNemarExact.
func TestBaselineAhead(t *testing.T) {
	for _, c := range []struct {
		cnnOnly, baselineOnly int
		want                  bool
	}{
		{17, 29, false}, // p = 0.1: not significant
		{5, 20, true},   // p = 0.004
		{20, 5, false},  // the CNN ahead
		{0, 6, true},    // p = 0.031
		{0, 5, false},   // p = 0.0625
		{0, 0, false},
	} {
		// Texts of label 0: the CNN right alone on the first cnnOnly, the
		// baseline on the next baselineOnly, both right on one more.
		n := c.cnnOnly + c.baselineOnly + 1
		gold, cnnPred, basePred := make([]int, n), make([]int, n), make([]int, n)
		for i := range n {
			switch {
			case i < c.cnnOnly:
				basePred[i] = 1
			case i < c.cnnOnly+c.baselineOnly:
				cnnPred[i] = 1
			}
		}
		mc := McNemarExact(gold, cnnPred, basePred)
		bt := BaselineTest{CNNOnly: mc.OnlyA, BaselineOnly: mc.OnlyB, P: mc.P}
		if got := bt.BaselineAhead(); got != c.want {
			t.Errorf("CNN alone %d, baseline alone %d (p = %.3g): ahead %v, want %v", c.cnnOnly, c.baselineOnly, bt.P, got, c.want)
		}
	}
}

// BaselineRemedies: nothing where the baseline is not ahead; otherwise the
// fitted start and the balanced class weight, less what the recorded
// recipe already has; both for a model without a recipe.
func TestBaselineRemedies(t *testing.T) {
	ahead := BaselineTest{CNNOnly: 5, BaselineOnly: 20, P: 0.0041}
	cnnAhead := BaselineTest{CNNOnly: 20, BaselineOnly: 5, P: 0.0041}
	for _, c := range []struct {
		name string
		wide bool
		r    *TrainConfig
		t    BaselineTest
		want []Remedy
	}{
		{"default recipe", true, &TrainConfig{}, ahead, []Remedy{RemedyWideFit, RemedyClassWeight}},
		{"no recipe recorded", true, nil, ahead, []Remedy{RemedyWideFit, RemedyClassWeight}},
		{"the fitted start already", true, &TrainConfig{WideFit: true}, ahead, []Remedy{RemedyClassWeight}},
		{"balanced already", true, &TrainConfig{ClassWeight: "balanced"}, ahead, []Remedy{RemedyWideFit}},
		{"both already", true, &TrainConfig{WideFit: true, ClassWeight: "balanced"}, ahead, nil},
		{"no word weights", false, &TrainConfig{}, ahead, []Remedy{RemedyWideFit, RemedyClassWeight}},
		{"the CNN ahead", true, &TrainConfig{}, cnnAhead, nil},
	} {
		m := &Model{Config: Config{Wide: c.wide}, Info: Info{Recipe: c.r}}
		if got := BaselineRemedies(m, c.t); !slices.Equal(got, c.want) {
			t.Errorf("%s: %v, want %v", c.name, got, c.want)
		}
	}
}

package cnn

import (
	"encoding/json"
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// Undefined figures (README: "a figure with nothing to measure is null")
// go to JSON as null and come back as NaN, in the metrics a model file
// keeps and in the intervals eval writes; the defined ones come back as
// they went.
func TestUndefinedFiguresJSON(t *testing.T) {
	// Gold a and b only; c predicted once, d never.
	m := ComputeMetrics([]string{"a", "b", "c", "d"}, []int{0, 0, 1, 1}, []int{0, 2, 1, 1}, nil, 0)
	js, err := json.Marshal(struct {
		M  Metrics         `json:"m"`
		Iv MetricIntervals `json:"iv"`
	}{m, IntervalsOf(m)})
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{
		`{"label":"c","precision":0,"recall":null,"f1":null,"support":0}`,
		`{"label":"d","precision":null,"recall":null,"f1":null,"support":0}`,
		`{"label":"d","precision":null,"recall":null,"f1":null}`,
	} {
		if !strings.Contains(string(js), want) {
			t.Errorf("JSON lacks %s:\n%s", want, js)
		}
	}
	var back struct {
		M  Metrics         `json:"m"`
		Iv MetricIntervals `json:"iv"`
	}
	if err := json.Unmarshal(js, &back); err != nil {
		t.Fatal(err)
	}
	want := IntervalsOf(m)
	for c, pc := range m.PerClass {
		got := back.M.PerClass[c]
		for _, f := range [][2]float64{{got.Precision, pc.Precision}, {got.Recall, pc.Recall}, {got.F1, pc.F1}} {
			if !(f[0] == f[1] || math.IsNaN(f[0]) && math.IsNaN(f[1])) {
				t.Errorf("class %s read back as %+v, want %+v", pc.Label, got, pc)
			}
		}
		gi, wi := back.Iv.PerClass[c], want.PerClass[c]
		for _, p := range [][2]Interval{{gi.Precision, wi.Precision}, {gi.Recall, wi.Recall}, {gi.F1, wi.F1}} {
			if p[0] != p[1] && !(p[0].Undefined() && p[1].Undefined()) {
				t.Errorf("class %s intervals read back as %+v, want %+v", pc.Label, gi, wi)
			}
		}
	}
	if s := want.PerClass[3].Precision.String(); s != "–" {
		t.Errorf("an undefined interval is written %q, want –", s)
	}
	// macro-F1 (scikit-learn): a (2/3), b (1), c (0: predicted, no text);
	// d, neither, left out.
	if !near(m.MacroF1, (2.0/3+1+0)/3, 1e-12) {
		t.Errorf("macro-F1 %v, want %v", m.MacroF1, (2.0/3+1)/3)
	}
	if p, a := m.WithoutSupport(); len(p) != 1 || p[0] != "c" || len(a) != 1 || a[0] != "d" {
		t.Errorf("WithoutSupport: %q, %q; want [c], [d]", p, a)
	}
}

// A model file keeps metrics with undefined figures (a dev or test split
// without some label: null in its header) and gives them back as NaN.
func TestModelFileKeepsUndefinedFigures(t *testing.T) {
	m, _ := savedModel(t)
	labels := make([]string, m.Config.Classes)
	gold := make([]int, 4) // every text of class 0, every prediction too
	mt := ComputeMetrics(labels, gold, make([]int, 4), nil, 0)
	m.Info.Test = &mt
	path := filepath.Join(t.TempDir(), "m.ttm")
	if err := m.Save(path); err != nil {
		t.Fatal(err)
	}
	got, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	last := got.Info.Test.PerClass[len(labels)-1]
	if !math.IsNaN(last.Precision) || !math.IsNaN(last.Recall) || !math.IsNaN(last.F1) || got.Info.Test.PerClass[0].F1 != 1 {
		t.Errorf("read back %+v; want class 0's F1 1 and the others' figures NaN", got.Info.Test.PerClass)
	}
}

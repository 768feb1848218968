package corpus

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"reflect"
	"strings"
	"testing"
)

func makeSet(counts map[string]int) *Dataset {
	d := &Dataset{Path: "mem.csv"}
	line := 2
	for _, l := range []string{"a", "b", "c"} {
		for i := 0; i < counts[l]; i++ {
			d.Examples = append(d.Examples, Example{Text: fmt.Sprintf("%s %d", l, i), Label: l, Line: line})
			line++
		}
	}
	d.Labels = uniqueLabels(d.Examples)
	return d
}

func TestSplit(t *testing.T) {
	d := makeSet(map[string]int{"a": 50, "b": 7, "c": 1})
	train, test := d.Split(0.2, 3)
	// round(0.2·50)=10, round(0.2·7)=1, round(0.2·1)=0 (one stays in train).
	if c := test.Counts(); !reflect.DeepEqual(c, map[string]int{"a": 10, "b": 1}) {
		t.Errorf("test counts %v", c)
	}
	if c := train.Counts(); !reflect.DeepEqual(c, map[string]int{"a": 40, "b": 6, "c": 1}) {
		t.Errorf("train counts %v", c)
	}
	train2, test2 := d.Split(0.2, 3)
	if !reflect.DeepEqual(train, train2) || !reflect.DeepEqual(test, test2) {
		t.Error("same seed, different split")
	}
	_, test3 := d.Split(0.2, 4)
	if reflect.DeepEqual(test.Examples, test3.Examples) {
		t.Error("different seed, same split")
	}
	for _, s := range []*Dataset{train, test} {
		for i := 1; i < len(s.Examples); i++ {
			if s.Examples[i].Line <= s.Examples[i-1].Line {
				t.Fatal("split changed example order")
			}
		}
	}
}

func TestLabelIndex(t *testing.T) {
	d := makeSet(map[string]int{"a": 2, "b": 1})
	idx, err := d.LabelIndex([]string{"b", "a"})
	if err != nil || !reflect.DeepEqual(idx, []int{1, 1, 0}) {
		t.Fatalf("%v %v", idx, err)
	}
	_, err = d.LabelIndex([]string{"a"})
	if !errors.Is(err, ErrLabel) || !strings.Contains(err.Error(), `corpus: mem.csv line 4: label "b" is not among the training labels ["a"]`) {
		t.Errorf("got %v", err)
	}
}

func TestRelabelFilter(t *testing.T) {
	d := makeSet(map[string]int{"a": 2, "b": 1, "c": 3})
	r := d.Relabel(map[string]string{"a": "x", "b": "x", "c": ""})
	if c := r.Counts(); !reflect.DeepEqual(c, map[string]int{"x": 3}) || !reflect.DeepEqual(r.Labels, []string{"x"}) {
		t.Errorf("relabel %v %v", c, r.Labels)
	}
	f := d.Filter(func(e Example) bool { return e.Label != "a" })
	if !reflect.DeepEqual(f.Labels, []string{"b", "c"}) || len(f.Examples) != 4 {
		t.Errorf("filter %v", f.Labels)
	}
	if len(d.Examples) != 6 {
		t.Error("Relabel or Filter changed the original")
	}
}

func TestSummarize(t *testing.T) {
	train := &Dataset{Path: "train.csv", Examples: []Example{
		{Text: "The ferry was late!", Label: "complaint", Line: 2},
		{Text: "the ferry was LATE", Label: "complaint", Line: 3},
		{Text: "Book two seats", Label: "booking", Line: 4},
		{Text: "Book two seats", Label: "booking", Line: 5},
		{Text: "lost my bag on deck 3", Label: "lost", Line: 6},
	}}
	train.Labels = uniqueLabels(train.Examples)
	test := &Dataset{Path: "test.csv", Examples: []Example{
		{Text: "lost my bag on deck 7", Label: "lost", Line: 2},
		{Text: "Book two seats", Label: "complaint", Line: 3},
	}}
	test.Labels = uniqueLabels(test.Examples)
	tok, _ := NewTokenizer(TokenizerConfig{Lower: true})
	s := Summarize(train, test, tok)
	if s.ExactGroups != 1 || len(s.ExactDuplicates[0].Members) != 3 || !s.ExactDuplicates[0].CrossSplit || !s.ExactDuplicates[0].LabelConflict {
		t.Errorf("exact %+v", s.ExactDuplicates)
	}
	// near groups: ferry (train 2,3) and lost bag (train 6, test 2)
	if s.NearGroups != 2 || s.Leaks != 2 {
		t.Errorf("near %d leaks %d: %+v", s.NearGroups, s.Leaks, s.NearDuplicates)
	}
	if p := s.Splits[0].TokenLength; p != (Percentiles{P50: 4, P90: 6, P99: 6, Max: 6}) {
		t.Errorf("percentiles %+v", p)
	}
	var b strings.Builder
	if err := s.WriteText(&b); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"booking", "duplicates: 1 exact groups, 2 near-exact groups; 2 test examples also in train", "exact LEAK CONFLICTING-LABELS \"Book two seats\": train line 4 (booking), train line 5 (booking), test line 3 (complaint)"} {
		if !strings.Contains(b.String(), want) {
			t.Errorf("text lacks %q:\n%s", want, b.String())
		}
	}
}

// A text in the dev and the test split but not in train is a duplicate
// across splits, not a leak into training; a dev text also in train is one.
// Texts of digits and marks alone are not near copies of each other.
func TestSummarizeThreeLeaks(t *testing.T) {
	train := &Dataset{Path: "train.csv", Examples: []Example{
		{Text: "Book two seats", Label: "booking", Line: 2},
		{Text: "lost my bag on deck 3", Label: "lost", Line: 3},
		{Text: "7.", Label: "lost", Line: 4},
	}}
	train.Labels = uniqueLabels(train.Examples)
	dev := &Dataset{Path: "train.csv", Examples: []Example{
		{Text: "Where is the ferry?", Label: "lost", Line: 4},
		{Text: "book two seats!", Label: "booking", Line: 5},
		{Text: "42", Label: "lost", Line: 6}, // no words: not a near copy of the train text below
	}}
	test := &Dataset{Path: "test.csv", Examples: []Example{
		{Text: "Where is the ferry?", Label: "lost", Line: 2},
	}}
	tok, _ := NewTokenizer(TokenizerConfig{Lower: true})
	s := SummarizeThree(train, dev, test, tok)
	// Exact: the ferry question (dev and test). Near (groups that are not
	// exact ones): the seats (train and dev).
	if s.ExactGroups != 1 || !s.ExactDuplicates[0].CrossSplit || s.ExactDuplicates[0].Leak {
		t.Errorf("exact %+v: want one group across dev and test, no leak", s.ExactDuplicates)
	}
	if s.NearGroups != 1 || s.Leaks != 1 {
		t.Errorf("near %d leaks %d, want 1 and 1 (the dev text also in train): %+v", s.NearGroups, s.Leaks, s.NearDuplicates)
	}
	var b strings.Builder
	if err := s.WriteText(&b); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"1 dev or test examples also in train", "exact DEV-AND-TEST \"Where is the ferry?\"", "near LEAK \"Book two seats\""} {
		if !strings.Contains(b.String(), want) {
			t.Errorf("text lacks %q:\n%s", want, b.String())
		}
	}
}

func ExampleSummary_WriteText() {
	train := &Dataset{Path: "train.csv", Examples: []Example{
		{Text: "Where is my bag?", Label: "lost", Line: 2},
		{Text: "Two tickets to Arrow Isle, please", Label: "booking", Line: 3},
		{Text: "two tickets to arrow isle please!", Label: "booking", Line: 4},
	}}
	test := &Dataset{Path: "test.csv", Examples: []Example{
		{Text: "Where is my bag?", Label: "lost", Line: 2},
	}}
	tok, _ := NewTokenizer(TokenizerConfig{Lower: true})
	Summarize(train, test, tok).WriteText(os.Stdout)
	// Output:
	// label    train  %      test  %
	// booking  2      66.7   0     0.0
	// lost     1      33.3   1     100.0
	// all      3      100.0  1     100.0
	//
	// vocabulary: 15 entries (train); test tokens not in it: 0.0%
	// tokens per text:
	//   train p50 7  p90 7  p99 7  max 7
	//   test  p50 5  p90 5  p99 5  max 5
	// duplicates: 1 exact groups, 1 near-exact groups; 1 test examples also in train
	//   exact LEAK "Where is my bag?": train line 2 (lost), test line 2 (lost)
	//   near "Two tickets to Arrow Isle, please": train line 3 (booking), train line 4 (booking)
}

// Figures of no text are undefined: an empty dev or test split has no
// label shares and no length percentiles, and without test tokens there is
// no out-of-vocabulary rate; null in JSON, "–" in text (README: "a figure
// with nothing to measure is null"). A split with texts keeps its figures.
func TestSummarizeEmptySplits(t *testing.T) {
	train := &Dataset{Path: "train.csv", Examples: []Example{
		{Text: "Book two seats", Label: "booking", Line: 2},
		{Text: "lost my bag", Label: "lost", Line: 3},
	}}
	empty := &Dataset{Path: "train.csv"}
	tok, _ := NewTokenizer(TokenizerConfig{Lower: true})
	cases := []struct {
		name      string
		dev, test *Dataset
		json      []string // substrings of the JSON
		text      []string // substrings of the text
	}{
		{"empty dev and test", empty, empty,
			[]string{`"test_oov_rate":null`, `"name":"dev","path":"train.csv","examples":0,"per_label":{},"balance":{},"token_length":{"p50":null,"p90":null,"p99":null,"max":null}`},
			[]string{"all      2      100.0  0    –  0     –", "test tokens not in it: – (no test token)", "dev   p50 –  p90 –  p99 –  max –  (no text)"}},
		{"no test split", nil, nil, []string{`"test_oov_rate":null`, `"token_length":{"p50":3,"p90":3,"p99":3,"max":3}`}, []string{"vocabulary: "}},
		{"a test text", nil, &Dataset{Path: "test.csv", Examples: []Example{{Text: "lost my hat", Label: "lost", Line: 2}}},
			[]string{`"test_oov_rate":0.3333333333333333`}, // hat of lost my hat
			[]string{"test tokens not in it: 33.3%", "test  p50 3"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := SummarizeThree(train, c.dev, c.test, tok)
			js, err := json.Marshal(s)
			if err != nil {
				t.Fatal(err)
			}
			var b strings.Builder
			if err := s.WriteText(&b); err != nil {
				t.Fatal(err)
			}
			for _, w := range c.json {
				if !strings.Contains(string(js), w) {
					t.Errorf("JSON lacks %s:\n%s", w, js)
				}
			}
			for _, w := range c.text {
				if !strings.Contains(b.String(), w) {
					t.Errorf("text lacks %q:\n%s", w, b.String())
				}
			}
		})
	}
}

package audit

import (
	"context"
	"errors"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
)

// untrained is a model of the demo's words with random weights: enough for
// the checks that come before any measurement.
func untrained(t *testing.T, train *corpus.Dataset) *cnn.Model {
	t.Helper()
	r := cnn.DefaultRecipe()
	enc, err := corpus.TrainEncoder(r.Tokenizer, train.Texts())
	if err != nil {
		t.Fatal(err)
	}
	cfg := cnn.Config{VocabSize: enc.Vocab.Len(), Dim: 8, Widths: []int{2, 3}, Filters: 4, Classes: len(train.Labels)}
	m, err := cnn.New(cfg, enc.Vocab.Words, train.Labels, 1)
	if err != nil {
		t.Fatal(err)
	}
	m.Tokenizer = enc.Tok.Config()
	return m
}

// Bad input gives a clear error wrapping ErrInput and naming the fix; the
// audit writes nothing in any case (it has no output file).
func TestBadInput(t *testing.T) {
	all := loadCSV(t, "demo", "train.csv")
	test := loadCSV(t, "demo", "test.csv")
	m := untrained(t, all)
	train, held := data(t, m, all), data(t, m, test)
	ctx := context.Background()
	expect := func(name string, err error, want string) {
		t.Helper()
		if err == nil || !errors.Is(err, ErrInput) || !strings.Contains(err.Error(), want) {
			t.Errorf("%s: %v, want an error with %q", name, err, want)
		}
	}

	// Too few held-out texts for the two halves: the fix depends on where
	// they come from, a file of their own or a share of the data.
	ten := held.subset([]int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9})
	_, err := Run(ctx, m, train, ten, Options{}, nil)
	expect("ten held-out texts", err, "too few for the tests, which need 30 in each of its two halves; give a larger test file (--test FILE)")
	if err != nil && strings.Contains(err.Error(), "--test-frac") {
		t.Errorf("a held-out file too small: %v, which speaks of a share", err)
	}
	_, err = Run(ctx, m, train, ten, Options{HeldoutShare: true}, nil)
	expect("ten held-out texts held out of the data", err, "hold out a larger share of the data as the test split "+
		"(train the model again with a larger --test-frac), or give a larger test file (--test FILE)")

	// Too few training texts for a test of association.
	_, err = Run(ctx, m, train.subset([]int{0, 1, 2}), held, Options{}, nil)
	expect("three training texts", err, "too few for a test of association")

	// Data encoded for another model: a word beyond the vocabulary.
	bad := held.subset([]int{0})
	bad.IDs = [][]int32{{int32(m.Config.VocabSize)}}
	bad.Tokens = nil
	_, err = Run(ctx, m, train, bad, Options{}, nil)
	expect("a word beyond the vocabulary", err, "the data was encoded for another model")

	// A label the model does not have.
	other := held.subset([]int{0, 1})
	other.Gold = []int{0, m.Config.Classes}
	_, err = Run(ctx, m, train, other, Options{}, nil)
	expect("a class beyond the model's", err, "the data and the model do not match")

	// A data set with a label the model does not know.
	foreign := &corpus.Dataset{Path: "x.csv", Examples: []corpus.Example{{Text: "hello", Label: "weather"}}, Labels: []string{"weather"}}
	if _, err := NewData(m, foreign, 0); err == nil || !strings.Contains(err.Error(), "weather") {
		t.Errorf("a foreign label: %v", err)
	}

	// A marked cue whose words the model does not know.
	mk := NewMarks()
	_ = mk.Set([]string{"zzyzx"}, MarkArtifact)
	_, err = Run(ctx, m, train, held, Options{Marks: mk}, nil)
	expect("a marked unknown word", err, "not a word of the model's vocabulary")

	// A marked cue that never occurs in the held-out split: "kioskmail"
	// stripped from every held-out text.
	strip := test.MapTexts(func(s string) string { return strings.ReplaceAll(s, "KioskMail", "kiosk") })
	mk = NewMarks()
	_ = mk.Set([]string{"kioskmail"}, MarkArtifact)
	_, err = Run(ctx, m, train, data(t, m, strip), Options{Marks: mk}, nil)
	expect("a marked cue absent from the held-out split", err, "never occurs in the test split")

	// A cancelled context stops the audit with the context's error.
	cctx, cancel := context.WithCancel(ctx)
	cancel()
	if _, err := Run(cctx, m, train, held, Options{}, nil); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled: %v, want context.Canceled", err)
	}

	// Options that do not exist.
	_, err = Run(ctx, m, train, held, Options{Test: "chi-square"}, nil)
	expect("an unknown test", err, "use fisher or binomial")
}

// TestOneLabelKind: held-out texts of one label are refused with an error
// that matches ErrInput and ErrOneLabel (by which the command line makes it
// a usage error); texts of two labels pass. Other input errors are not of
// that kind.
func TestOneLabelKind(t *testing.T) {
	err := Data{Name: "t.csv", Gold: []int{1, 1, 1}}.checkTwoLabels([]string{"a", "b"})
	if !errors.Is(err, ErrInput) || !errors.Is(err, ErrOneLabel) || !strings.Contains(err.Error(), `holds one label, "b"`) {
		t.Errorf("one label: %v", err)
	}
	if err := (Data{Gold: []int{0, 1}}).checkTwoLabels([]string{"a", "b"}); err != nil {
		t.Errorf("two labels: %v", err)
	}
	if errors.Is(inputErrorf("audit: other"), ErrOneLabel) {
		t.Error("another input error is of the one-label kind")
	}
}

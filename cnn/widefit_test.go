package cnn

import (
	"context"
	"encoding/json"
	"math"
	"testing"

	"telltale/corpus"
	"telltale/internal/reviewset"
	"telltale/internal/testref"
)

// wideFitCase is the input of testdata/sklearn_widefit.py.
type wideFitCase struct {
	Train [][]int32 `json:"train"`
	Test  [][]int32 `json:"test"`
	Y     []int     `json:"y"`
	C     float64   `json:"c"`
	Vocab int       `json:"vocab"`
}

// The fitted start of the wide path against scikit-learn (Debian's
// python3-sklearn), live, on real product review sentences (Kotzias et al.
// 2015, the first of internal/reviewset's rotations, fetched by `make
// corpora`): started without a dev split (so at the grid's middle C, 10),
// the model's test probabilities, through its own forward path with the
// filters' output weights at zero, are scikit-learn's multinomial
// LogisticRegression on the same features built by the script from the
// token ids alone (testdata/sklearn_widefit.py), within 1e-3 (the
// baseline's bar; the weights are float32). Also: the start puts every
// filter's output weight at zero.
func TestWideFitAgainstScikitLearn(t *testing.T) {
	testref.Corpus(t, "reviews", "amazon_cells_labelled.txt")
	testref.RequirePython(t, "sklearn")
	d, err := reviewset.LoadUnder(testref.Root())
	if err != nil {
		t.Fatal(err)
	}
	r := DefaultRecipe()
	train, _, test := reviewset.Splits(d, 0)
	enc, err := corpus.TrainEncoder(r.Tokenizer, train.Texts())
	if err != nil {
		t.Fatal(err)
	}
	trainData, err := EncodeDataset(enc, train, train.Labels, 1)
	if err != nil {
		t.Fatal(err)
	}
	testData, err := EncodeDataset(enc, test, train.Labels, 1)
	if err != nil {
		t.Fatal(err)
	}
	cfg := r.Model
	cfg.VocabSize, cfg.Classes = enc.Vocab.Len(), len(train.Labels)
	cfg.WideBigrams = false // SetBigrams turns it on with the training split's set
	m, err := New(cfg, nil, train.Labels, 1)
	if err != nil {
		t.Fatal(err)
	}
	if err := m.SetBigrams(CollectBigrams(trainData.IDs)); err != nil {
		t.Fatal(err)
	}
	if err := m.fitWideStart(context.Background(), trainData, Data{}, TrainConfig{Threads: 1}); err != nil {
		t.Fatal(err)
	}
	for i, w := range m.OutW {
		if w != 0 {
			t.Fatalf("output weight %d is %g after the fitted start, want 0", i, w)
		}
	}
	in, err := json.Marshal(wideFitCase{Train: trainData.IDs, Test: testData.IDs, Y: trainData.Labels, C: 10, Vocab: cfg.VocabSize})
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Probs   [][]float64 `json:"probs"`
		Sklearn string      `json:"sklearn"`
	}
	if out := testref.RunScript(t, "sklearn_widefit.py", in); json.Unmarshal(out, &ref) != nil {
		t.Fatalf("sklearn_widefit.py printed %.200q", out)
	}
	got := m.Probabilities(testData.IDs, 1)
	if len(ref.Probs) != len(got) {
		t.Fatalf("scikit-learn scored %d test sentences, the model %d", len(ref.Probs), len(got))
	}
	var worst float64
	for i, p := range got {
		for c, v := range p {
			if !testref.Close(float64(v), ref.Probs[i][c], 1e-3, 0) {
				t.Errorf("sentence %d class %d: probability %.6f, scikit-learn %s %.6f", i, c, v, ref.Sklearn, ref.Probs[i][c])
			}
			worst = max(worst, math.Abs(float64(v)-ref.Probs[i][c]))
		}
	}
	t.Logf("%d test sentences, largest probability difference from scikit-learn %s: %.2g", len(got), ref.Sklearn, worst)
}

package cnn

import (
	"testing"

	"telltale/corpus"
	"telltale/internal/reviewset"
	"telltale/internal/testref"
)

// TestReviewsBaseline checks the built-in linear baseline against
// scikit-learn on real product reviews: the 1,000 Amazon review sentences
// of Kotzias et al. (2015), fetched by `make corpora` from the npm package
// wink-sentiment@5.0.2 (internal/reviewset). In each of the set's ten
// cross-validation rotations the baseline is fitted as train fits it
// (the default recipe's tokens; C chosen on the dev fold by macro-F1), and
// scikit-learn's TfidfVectorizer and LogisticRegression (Debian's
// python3-sklearn, cnn/testdata/tfidf_baseline.py), fitted on the same
// tokens with the same C, must label every test sentence the same.
//
// How the default recipe's CNN compares with this baseline on the same
// rotations is measured by `go run ./internal/recipesearch -corpus
// reviews -test -baseline` and told in docs/default-recipe.md: on
// these 1,000 sentences the CNN is behind, and with the set's Yelp and
// IMDb sentences added (-corpus reviews3, 2,400 training sentences a
// rotation) level, which is why no test asserts it.
func TestReviewsBaseline(t *testing.T) {
	if testing.Short() {
		t.Skip("SKIPPED in -short mode: fits ten baselines and scikit-learn's for each")
	}
	d := loadReviews(t)
	r := DefaultRecipe()
	// The ten baselines are fitted first, then scikit-learn fits the ten
	// rotations in one process (imported once rather than ten times).
	var fits []sklearnFit
	var preds [][]int
	for k := range reviewset.Folds {
		train, dev, test := reviewset.Splits(d, k)
		enc, err := corpus.TrainEncoder(r.Tokenizer, train.Texts())
		if err != nil {
			t.Fatal(err)
		}
		b, err := fitBaseline(t.Context(), enc.Tok, train, dev, train.Labels, *r.Baseline, r.Train)
		if err != nil {
			t.Fatal(err)
		}
		fits = append(fits, sklearnFit{enc.Tok, r.Train.MaxLen, b.Classifier.C, b.Config.ClassWeight, train, test})
		preds = append(preds, b.Predict(baselineDocs(enc.Tok, test.Texts(), r.Train.MaxLen, 0)))
	}
	var agree, total int
	for k, ref := range sklearnBaselines(t, fits) {
		train, test, pred := fits[k].train, fits[k].test, preds[k]
		if len(ref.Pred) != len(pred) {
			t.Fatalf("rotation %d: scikit-learn labeled %d sentences, the baseline %d", k, len(ref.Pred), len(pred))
		}
		for i, p := range pred {
			total++
			if got := train.Labels[p]; got == ref.Pred[i] {
				agree++
			} else {
				t.Errorf("rotation %d, %s: the baseline says %s, scikit-learn %s", k, test.Where(test.Examples[i]), got, ref.Pred[i])
			}
		}
		t.Logf("rotation %d: C = %g, scikit-learn %s test accuracy %.2f", k, fits[k].c, ref.Sklearn, ref.Accuracy)
	}
	if total != 1000 {
		t.Errorf("%d test sentences over the rotations, want each of the 1,000 once", total)
	}
	t.Logf("the same label on %d of %d test sentences", agree, total)
}

// loadReviews is the reviews set (internal/reviewset) for a check against
// scikit-learn; the test fails in CI (skips elsewhere) when the corpus or
// scikit-learn is missing.
func loadReviews(t *testing.T) *corpus.Dataset {
	t.Helper()
	testref.Corpus(t, "reviews", "amazon_cells_labelled.txt")
	testref.RequirePython(t, "sklearn")
	d, err := reviewset.LoadUnder(testref.Root())
	if err != nil {
		t.Fatal(err)
	}
	return d
}

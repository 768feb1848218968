#!/usr/bin/python3
"""scikit-learn's TF-IDF + multinomial logistic regression on given tokens.

Run with Debian's Python and python3-sklearn:

    /usr/bin/python3 linear/testdata/sklearn_logreg.py < case.json

The input object holds "train" and "test" (lists of token lists), "y" (the
training class indexes), "c", "class_weight" (null or "balanced"),
"min_df" and "sublinear". The tokens are used as given (no lower-casing, no
token pattern) and scikit-learn itself forms the unigrams and bigrams
(tokens joined by one space). The classifier is the multinomial
LogisticRegression with the lbfgs solver run to a tight tolerance, so that
its optimum, not its stopping rule, is compared. Prints one JSON object:
the sorted features, their idf, the test probabilities and predictions.
"""

import json
import sys

import numpy as np
import sklearn
from sklearn.feature_extraction.text import TfidfVectorizer
from sklearn.linear_model import LogisticRegression


def ident(x):
    return x


def main():
    case = json.load(sys.stdin)
    vec = TfidfVectorizer(tokenizer=ident, preprocessor=ident, lowercase=False, token_pattern=None,
                          ngram_range=(1, 2), min_df=case["min_df"], sublinear_tf=case["sublinear"])
    xtr = vec.fit_transform(case["train"])
    xte = vec.transform(case["test"])
    clf = LogisticRegression(C=case["c"], multi_class="multinomial", solver="lbfgs", tol=1e-12,
                             max_iter=100000, class_weight=case["class_weight"])
    clf.fit(xtr, np.array(case["y"]))
    feats = vec.get_feature_names_out()
    print(json.dumps({
        "features": [str(f) for f in feats],
        "idf": vec.idf_.tolist(),
        "probs": clf.predict_proba(xte).tolist(),
        "pred": clf.predict(xte).tolist(),
        "classes": clf.classes_.tolist(),
        "sklearn": sklearn.__version__,
    }))


if __name__ == "__main__":
    main()

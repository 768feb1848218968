#!/usr/bin/python3
"""scikit-learn's TF-IDF + logistic regression on the baseline's tokens.

Run with Debian's Python and python3-sklearn:

    /usr/bin/python3 cnn/testdata/tfidf_baseline.py DIR C WEIGHT [DIR C WEIGHT ...]

Each DIR holds train.jsonl and test.jsonl, one {"tokens": [...], "label": ...}
object a line, written by the corpus-scale tests (cnn/spamassassin_test.go,
cnn/reviews_test.go): the words the built-in linear baseline saw. Several
DIR C WEIGHT triples are fitted one after the other in one process (scikit-learn is
imported once), each as if run alone. The script fits scikit-learn's
TfidfVectorizer on those tokens as given (unigrams and bigrams, sublinear
term frequency, smoothed idf, L2-normalised rows: the baseline's default
features) and the multinomial LogisticRegression with inverse
regularisation C (the C the baseline chose on its dev split) and class
weight WEIGHT ("none", or "balanced": n/(k·n_c)) on the training texts, run
to a tight tolerance, and prints one JSON object a line, a line for each
triple in the order given, with the test accuracy, macro-F1,
predictions and the scikit-learn version.
"""

import json
import os
import sys

import sklearn
from sklearn.feature_extraction.text import TfidfVectorizer
from sklearn.linear_model import LogisticRegression
from sklearn.metrics import accuracy_score, f1_score


def read(path):
    docs, labels = [], []
    with open(path, encoding="utf-8") as f:
        for line in f:
            obj = json.loads(line)
            docs.append(obj["tokens"])
            labels.append(obj["label"])
    return docs, labels


def ident(x):
    return x


def fit(d, c, weight):
    xtr, ytr = read(os.path.join(d, "train.jsonl"))
    xte, yte = read(os.path.join(d, "test.jsonl"))
    vec = TfidfVectorizer(tokenizer=ident, preprocessor=ident, lowercase=False, token_pattern=None,
                          ngram_range=(1, 2), sublinear_tf=True)
    if weight not in ("none", "balanced"):
        sys.exit("class weight %r: use none or balanced" % weight)
    clf = LogisticRegression(C=c, multi_class="multinomial", solver="lbfgs", tol=1e-10, max_iter=20000,
                             class_weight=None if weight == "none" else "balanced")
    clf.fit(vec.fit_transform(xtr), ytr)
    pred = clf.predict(vec.transform(xte))
    return {
        "accuracy": accuracy_score(yte, pred),
        "macro_f1": f1_score(yte, pred, average="macro"),
        "pred": [str(p) for p in pred],
        "train": len(xtr),
        "test": len(xte),
        "sklearn": sklearn.__version__,
    }


def main():
    args = sys.argv[1:]
    if not args or len(args) % 3 != 0:
        sys.exit("usage: tfidf_baseline.py DIR C WEIGHT [DIR C WEIGHT ...] (each DIR holding train.jsonl and test.jsonl; WEIGHT none or balanced)")
    for i in range(0, len(args), 3):
        print(json.dumps(fit(args[i], float(args[i + 1]), args[i + 2])), flush=True)


if __name__ == "__main__":
    main()

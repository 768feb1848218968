#!/usr/bin/python3
"""TF-IDF + logistic-regression baseline for the SpamAssassin accuracy check.

Run with Debian's Python and Debian's python3-sklearn:

    /usr/bin/python3 cnn/testdata/tfidf_baseline.py DIR

DIR holds train.jsonl and test.jsonl, one {"text": ..., "label": ...} object a
line, written by TestSpamAssassinAccuracy (cnn/spamassassin_test.go). The
script fits scikit-learn's TfidfVectorizer (sublinear_tf=True, otherwise its
default tokenization: lower-cased words of two or more word characters,
unigrams) and LogisticRegression (solver liblinear, C=10) on the training
texts and prints one JSON object with the test accuracy, macro-F1 and the
scikit-learn version.

The recipe is a common text-classification baseline (common practice, no
source); C=10 rather than the default 1 because TF-IDF rows are L2-normalised
and weakly regularised models do better on them (common practice, no source).
"""

import json
import os
import sys

import sklearn
from sklearn.feature_extraction.text import TfidfVectorizer
from sklearn.linear_model import LogisticRegression
from sklearn.metrics import accuracy_score, f1_score


def read(path):
    texts, labels = [], []
    with open(path, encoding="utf-8") as f:
        for line in f:
            obj = json.loads(line)
            texts.append(obj["text"])
            labels.append(obj["label"])
    return texts, labels


def main():
    if len(sys.argv) != 2:
        sys.exit("usage: tfidf_baseline.py DIR (holding train.jsonl and test.jsonl)")
    d = sys.argv[1]
    xtr, ytr = read(os.path.join(d, "train.jsonl"))
    xte, yte = read(os.path.join(d, "test.jsonl"))
    vec = TfidfVectorizer(sublinear_tf=True)
    clf = LogisticRegression(solver="liblinear", C=10.0)
    clf.fit(vec.fit_transform(xtr), ytr)
    pred = clf.predict(vec.transform(xte))
    print(json.dumps({
        "accuracy": accuracy_score(yte, pred),
        "macro_f1": f1_score(yte, pred, average="macro"),
        "train": len(xtr),
        "test": len(xte),
        "sklearn": sklearn.__version__,
    }))


if __name__ == "__main__":
    main()

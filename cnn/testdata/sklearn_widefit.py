#!/usr/bin/python3
"""scikit-learn's logistic regression on the wide path's own features.

Run with Debian's Python and python3-sklearn:

    /usr/bin/python3 cnn/testdata/sklearn_widefit.py < case.json

The input object holds "train" and "test" (lists of token-id lists; 0 is
padding, 1 the unknown word), "y" (the training class indexes) and "c".
The features are built here from the ids alone: a text's count of each id
(padding aside) and of each pair of adjacent ids (neither 0 nor 1) that
occurs in some training text, each count over the text's number of ids
plus its number of such pairs; a text without an id but padding counts the
unknown word once. The classifier is the multinomial LogisticRegression with the
lbfgs solver run to a tight tolerance. Prints one JSON object: the test
probabilities and the scikit-learn version.
"""

import json
import sys

import numpy as np
import scipy.sparse as sp
import sklearn
from sklearn.linear_model import LogisticRegression


def pairs(ids):
    return [(a, b) for a, b in zip(ids, ids[1:]) if a > 1 and b > 1]


def features(texts, vocab, pair_col):
    rows, cols, vals = [], [], []
    for i, ids in enumerate(texts):
        words = [w for w in ids if w != 0]
        found = [pair_col[p] for p in pairs(ids) if p in pair_col]
        if not words:
            words = [1]  # a text without a word counts the unknown word once
        n = len(words) + len(found)
        counts = {}
        for j in words + found:
            counts[j] = counts.get(j, 0) + 1
        for j, c in counts.items():
            rows.append(i)
            cols.append(j)
            vals.append(c / n)
    return sp.csr_matrix((vals, (rows, cols)), shape=(len(texts), vocab + len(pair_col)))


def main():
    case = json.load(sys.stdin)
    vocab = 1 + max(max(t) for t in case["train"] + case["test"] if t)
    vocab = max(vocab, case.get("vocab", 0))
    seen = sorted({p for ids in case["train"] for p in pairs(ids)})
    pair_col = {p: vocab + r for r, p in enumerate(seen)}
    xtr = features(case["train"], vocab, pair_col)
    xte = features(case["test"], vocab, pair_col)
    clf = LogisticRegression(C=case["c"], multi_class="multinomial", solver="lbfgs", tol=1e-12,
                             max_iter=100000)
    clf.fit(xtr, np.array(case["y"]))
    print(json.dumps({"probs": clf.predict_proba(xte).tolist(), "sklearn": sklearn.__version__}))


if __name__ == "__main__":
    main()

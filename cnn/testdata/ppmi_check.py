#!/usr/bin/python3
"""PPMI and its SVD, written directly from the definitions with numpy.

Run with Debian's Python and python3-numpy:

    /usr/bin/python3 cnn/testdata/ppmi_check.py < texts.json

The input is {"texts": [[id, ...], ...], "vocab": V, "window": W,
"alpha": A}: texts of word ids (0 and 1 are PAD and UNK, never counted).
The rows and columns are the words that occur, in id order. For every
pair of positions i < j <= i + W of a text, #(w_i, w_j) and #(w_j, w_i)
grow by one (Levy, Goldberg & Dagan 2015: a symmetric window without
weighting). PPMI(w, c) = max(0, log(#(w,c) * sum_c' #c'^A / (#w * #c^A)))
with #w the row sums and #c the column sums. Prints {"words": [...],
"ppmi": [[...]], "singular_values": [...], "u": [[...]]} with numpy's SVD.
"""

import json
import sys

import numpy as np


def main():
    inp = json.load(sys.stdin)
    texts, window, alpha = inp["texts"], inp["window"], inp["alpha"]
    words = sorted({w for t in texts for w in t if w > 1})
    row = {w: i for i, w in enumerate(words)}
    n = len(words)
    counts = np.zeros((n, n))
    for t in texts:
        for i in range(len(t)):
            for j in range(i + 1, min(len(t), i + 1 + window)):
                a, b = t[i], t[j]
                if a > 1 and b > 1:
                    counts[row[a], row[b]] += 1
                    counts[row[b], row[a]] += 1
    wsum = counts.sum(axis=1)
    csum = counts.sum(axis=0) ** alpha
    with np.errstate(divide="ignore"):
        pmi = np.log(counts * csum.sum() / np.outer(wsum, csum))
    ppmi = np.where(counts > 0, np.maximum(pmi, 0), 0)
    u, s, _ = np.linalg.svd(ppmi)
    print(json.dumps({"words": words, "ppmi": ppmi.tolist(), "singular_values": s.tolist(), "u": u.tolist()}))


if __name__ == "__main__":
    main()

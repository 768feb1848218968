#!/usr/bin/python3
"""A few training steps of the sentence CNN with its word and bigram weights
trained by torch.optim.SparseAdam, for the Go test TestWideSparseAgainstTorch.

Run with Debian's Python and python3-torch:

    /usr/bin/python3 cnn/testdata/sparse_adam_check.py < in.json

The input holds the model's starting weights (as torch_check.py's cases:
"vocab", "dim", "filters", "classes", "widths", "emb", "conv_w", "conv_b",
"out_w", "out_b", "wide", "wide_bigram", "bigram_keys"), the training texts
and labels, "batches" (the indices of each step's texts), "lr" and
"wide_lr" (the factor on the rate of the two weight tables), all float32.

The network is torch_check.py's without dropout: embedding lookup, conv1d
per width, windows past each text's padded length max(L, widest filter)
masked with -inf before the max over time, ReLU, linear layer, cross-entropy
averaged over the batch. The wide term is the mean of the rows of the ids
other than PAD and of the pairs of adjacent ids found in "bigram_keys"
(a * 2**32 + b), or the unknown word's row (id 1) for a text with neither;
those rows are looked up with F.embedding(sparse=True), so the tables'
gradients are sparse tensors holding exactly the rows the batch touched
(forward's sparse=False gives dense ones, for wide_decay_check.py).
The embeddings, filters and output layer train with torch.optim.Adam at
"lr"; the two tables with torch.optim.SparseAdam at lr * wide_lr; betas
(0.9, 0.999), eps 1e-8. Prints every weight after the last step and the
torch version as JSON.
"""
import json
import sys

import torch
import torch.nn.functional as F


def tensor(v, *shape):
    return torch.tensor(v, dtype=torch.float32).reshape(*shape).requires_grad_()


def forward(p, texts, keys, widths, sparse=True):
    maxw = max(widths)
    lens = [max(len(t), maxw) for t in texts]
    ids = torch.zeros(len(texts), max(lens), dtype=torch.long)  # PAD = 0
    for i, t in enumerate(texts):
        if t:
            ids[i, : len(t)] = torch.tensor(t)
    x = F.embedding(ids, p["emb"], padding_idx=0).transpose(1, 2)
    pooled = []
    for wd, W, b in zip(widths, p["conv_w"], p["conv_b"]):
        a = F.conv1d(x, W.permute(0, 2, 1), b)
        mask = torch.tensor([[t > lp - wd for t in range(a.shape[2])] for lp in lens])
        a = a.masked_fill(mask[:, None, :], float("-inf"))
        pooled.append(F.relu(a.max(dim=2).values))
    logits = F.linear(torch.cat(pooled, dim=1), p["out_w"], p["out_b"])
    terms = []
    for t in texts:
        words = [x for x in t if x != 0]
        pairs = [keys[a * 2**32 + b] for a, b in zip(t, t[1:]) if a > 1 and b > 1 and a * 2**32 + b in keys]
        rows = []
        if words:
            rows.append(F.embedding(torch.tensor(words), p["wide"], sparse=sparse))
        if pairs:
            rows.append(F.embedding(torch.tensor(pairs), p["wide_bigram"], sparse=sparse))
        if rows:
            terms.append(torch.cat(rows).mean(dim=0))
        else:
            terms.append(F.embedding(torch.tensor([1]), p["wide"], sparse=sparse)[0])
    return logits + torch.stack(terms)


def params(inp):
    """The model's weights as tensors that take gradients, and the bigram
    keys' rows."""
    V, D, Fn, C = inp["vocab"], inp["dim"], inp["filters"], inp["classes"]
    widths = inp["widths"]
    keys = {k: r for r, k in enumerate(inp["bigram_keys"])}
    p = {
        "emb": tensor(inp["emb"], V, D),
        "conv_w": [tensor(w, Fn, wd, D) for w, wd in zip(inp["conv_w"], widths)],
        "conv_b": [tensor(b, Fn) for b in inp["conv_b"]],
        "out_w": tensor(inp["out_w"], C, Fn * len(widths)),
        "out_b": tensor(inp["out_b"], C),
        "wide": tensor(inp["wide"], V, C),
        "wide_bigram": tensor(inp["wide_bigram"], len(keys), C),
    }
    return p, keys


def print_weights(p):
    """Writes the weights, flattened, and torch's version as JSON."""
    out = {k: ([t.detach().flatten().tolist() for t in v] if isinstance(v, list) else v.detach().flatten().tolist())
           for k, v in p.items()}
    out["torch"] = torch.__version__
    print(json.dumps(out))


def main():
    inp = json.load(sys.stdin)
    widths = inp["widths"]
    p, keys = params(inp)
    dense = [p["emb"], *p["conv_w"], *p["conv_b"], p["out_w"], p["out_b"]]
    adam = torch.optim.Adam(dense, lr=inp["lr"], betas=(0.9, 0.999), eps=1e-8)
    sparse = torch.optim.SparseAdam([p["wide"], p["wide_bigram"]], lr=inp["lr"] * inp["wide_lr"],
                                    betas=(0.9, 0.999), eps=1e-8)
    for batch in inp["batches"]:
        adam.zero_grad(set_to_none=True)
        sparse.zero_grad(set_to_none=True)
        texts = [inp["texts"][i] for i in batch]
        labels = torch.tensor([inp["labels"][i] for i in batch])
        F.cross_entropy(forward(p, texts, keys, widths), labels).backward()
        adam.step()
        sparse.step()
    print_weights(p)


if __name__ == "__main__":
    main()

#!/usr/bin/python3
"""A few training steps of the sentence CNN with its word and bigram weights
under a weight decay of their own, for the Go test TestWideDecayAgainstTorch.

Run with Debian's Python and python3-torch:

    /usr/bin/python3 cnn/testdata/wide_decay_check.py < in.json

The input is sparse_adam_check.py's (the starting weights, the texts and
labels, "batches", "lr", "wide_lr") plus "weight_decay" and "wide_decay".
The network is sparse_adam_check.py's forward with dense gradients on the
two tables. Everything trains with torch.optim.AdamW (Loshchilov & Hutter
2019; betas (0.9, 0.999), eps 1e-8) in three parameter groups: the
embeddings, filters and output weights at "lr" with weight_decay
"weight_decay"; the biases at "lr" with none; the word and bigram tables
at lr * wide_lr with weight_decay weight_decay + wide_decay. Prints every
weight after the last step and the torch version as JSON.
"""
import json
import sys

import torch
import torch.nn.functional as F

from sparse_adam_check import forward, params, print_weights


def main():
    inp = json.load(sys.stdin)
    widths = inp["widths"]
    p, keys = params(inp)
    lr, wd = inp["lr"], inp["weight_decay"]
    opt = torch.optim.AdamW([
        {"params": [p["emb"], *p["conv_w"], p["out_w"]], "weight_decay": wd},
        {"params": [*p["conv_b"], p["out_b"]], "weight_decay": 0.0},
        {"params": [p["wide"], p["wide_bigram"]], "lr": lr * inp["wide_lr"],
         "weight_decay": wd + inp["wide_decay"]},
    ], lr=lr, betas=(0.9, 0.999), eps=1e-8)
    for batch in inp["batches"]:
        opt.zero_grad(set_to_none=True)
        texts = [inp["texts"][i] for i in batch]
        labels = torch.tensor([inp["labels"][i] for i in batch])
        F.cross_entropy(forward(p, texts, keys, widths, sparse=False), labels).backward()
        opt.step()
    print_weights(p)


if __name__ == "__main__":
    main()

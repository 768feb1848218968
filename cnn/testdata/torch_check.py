"""Reference forward and backward of the sentence CNN in PyTorch.

Usage: /usr/bin/python3 cnn/testdata/torch_check.py DIR

Reads DIR/in.json (a list of cases: weights, batch, dropout scales, written by the Go test
TestTorchCrossCheck), builds the same network from torch.nn.functional in
float64 (embedding lookup, conv1d per width, windows past each text's own
padded length L' = max(L, max width) masked with -inf before the max over
time, ReLU, masked filters zeroed, fixed dropout scales, linear layer,
cross_entropy averaged over the batch), and writes the logits, the loss and
the gradient of every parameter of each case to DIR/out.json.

A case with "wide" adds the wide path as internal/recipesearch/pooling.py's
wide2 variant computes it: the word weights of the ids other than PAD and
the weights of the pairs of adjacent ids found in "bigram_keys" (a * 2**32
+ b; neither id PAD or UNK), summed and divided by their number; a text
with neither gets the unknown word's (id 1) weights, as telltale scores it.
"""
import json
import sys

import torch
import torch.nn.functional as F


def case(inp):
    dt = torch.float64
    V, D, Fn, C = inp["vocab"], inp["dim"], inp["filters"], inp["classes"]
    widths = inp["widths"]
    emb = torch.tensor(inp["emb"], dtype=dt).reshape(V, D).requires_grad_()
    convW = [torch.tensor(w, dtype=dt).reshape(Fn, wd, D).requires_grad_() for w, wd in zip(inp["conv_w"], widths)]
    convB = [torch.tensor(b, dtype=dt).requires_grad_() for b in inp["conv_b"]]
    outW = torch.tensor(inp["out_w"], dtype=dt).reshape(C, Fn * len(widths)).requires_grad_()
    outB = torch.tensor(inp["out_b"], dtype=dt).requires_grad_()
    texts, labels = inp["texts"], inp["labels"]
    maxw = max(widths)
    lens = [max(len(t), maxw) for t in texts]
    Lb = max(lens)
    ids = torch.zeros(len(texts), Lb, dtype=torch.long)  # PAD = 0
    for i, t in enumerate(texts):
        if t:
            ids[i, : len(t)] = torch.tensor(t)
    x = F.embedding(ids, emb, padding_idx=0).transpose(1, 2)  # (B, D, Lb); PAD row gets no gradient
    pooled = []
    for wd, W, b in zip(widths, convW, convB):
        a = F.conv1d(x, W.permute(0, 2, 1), b)  # (B, F, Lb-wd+1); weight (F, D, wd)
        nwin = a.shape[2]
        mask = torch.tensor([[t > lp - wd for t in range(nwin)] for lp in lens])
        a = a.masked_fill(mask[:, None, :], float("-inf"))
        pooled.append(F.relu(a.max(dim=2).values))
    h = torch.cat(pooled, dim=1)
    keep = torch.tensor([0.0 if m else 1.0 for m in inp["masked"]], dtype=dt)
    h = h * keep
    if inp["drop"]:
        h = h * torch.tensor(inp["drop"], dtype=dt).reshape(h.shape)
    logits = F.linear(h, outW, outB)
    wide = big = None
    if inp.get("wide"):
        wide = torch.tensor(inp["wide"], dtype=dt).reshape(V, C).requires_grad_()
        keys = {k: r for r, k in enumerate(inp.get("bigram_keys") or [])}
        if keys:
            big = torch.tensor(inp["wide_bigram"], dtype=dt).reshape(len(keys), C).requires_grad_()
        terms = []
        for t in texts:
            rows = [wide[x] for x in t if x != 0]
            rows += [big[keys[a * 2**32 + b]] for a, b in zip(t, t[1:]) if a > 1 and b > 1 and a * 2**32 + b in keys]
            terms.append(torch.stack(rows).mean(dim=0) if rows else wide[1])
        logits = logits + torch.stack(terms)
    loss = F.cross_entropy(logits, torch.tensor(labels))
    loss.backward()
    out = {
        "logits": logits.detach().flatten().tolist(),
        "loss": loss.item(),
        "emb": emb.grad.flatten().tolist(),
        "conv_w": [W.grad.flatten().tolist() for W in convW],
        "conv_b": [b.grad.tolist() for b in convB],
        "out_w": outW.grad.flatten().tolist(),
        "out_b": outB.grad.tolist(),
        "torch": torch.__version__,
    }
    if wide is not None:
        out["wide"] = wide.grad.flatten().tolist()
    if big is not None:
        out["wide_bigram"] = big.grad.flatten().tolist()
    return out


def main(d):
    with open(d + "/in.json") as f:
        cases = json.load(f)
    with open(d + "/out.json", "w") as f:
        json.dump([case(c) for c in cases], f)


if __name__ == "__main__":
    main(sys.argv[1])

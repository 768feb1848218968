#!/usr/bin/python3
"""Pooling variants of the sentence CNN, prototyped in PyTorch to decide
whether one is worth building into telltale's model.

Reads the splits `go run ./internal/recipesearch -corpus NAME -test
-dump-text DIR` writes (DIR/NAME-{train,dev,test}.jsonl), tokenizes them
as bench/reference.py does (NFKC, lower case, runs of word characters and
single other characters), builds the vocabulary of the training split
(every word; id 0 padding, id 1 unknown), cuts texts to 400 tokens and
trains telltale's default recipe: 128-d embeddings (uniform ±0.25),
convolutions of widths 3, 4 and 5 with 100 filters each, ReLU, dropout 0.5
on the pooled layer, a linear layer, Adam 1e-3, batches of 50
(length-bucketed), each training token replaced by the unknown token with
probability 0.25, at most 10 epochs with early stopping on dev macro-F1
(patience 3). Kim 2014, "Convolutional Neural Networks for Sentence
Classification".

VARIANT picks the pooling over each text's own windows:
  max          the maximum (Kim 2014; telltale's model)
  mean         the mean of the ReLU outputs
  maxmean      both, concatenated (600 pooled units)
and a "wide" suffix adds the mean of per-word label weights to the logits
(telltale's `--wide`, its table at 100 times the learning rate); a "wide2"
suffix gives the training split's bigrams weights too, the mean running
over the text's words and its bigrams seen in training (the bigram
features of Joulin et al. 2017, as the linear baseline's TF-IDF features
hold them), a quarter of a training text's bigrams left out in each batch
as its tokens are. Zhang &
Wallace 2015 ("A Sensitivity Analysis of (and Practitioners' Guide to)
Convolutional Neural Networks for Sentence Classification") compare max
and mean pooling on sentence data.

Prints one JSON line: dev macro-F1 of the kept epoch and the test accuracy
and macro-F1 of that epoch (the test split is read only as a check).

    /usr/bin/python3 internal/recipesearch/pooling.py --dir DIR --corpus sotu --variant maxmean --seed 1
"""
import argparse
import collections
import json
import random
import re
import time
import unicodedata

import torch
import torch.nn as nn
import torch.nn.functional as F

TOKEN = re.compile(r"\w+|[^\w\s]")
WIDTHS = (3, 4, 5)


def tokenize(text):
    return TOKEN.findall(unicodedata.normalize("NFKC", text).lower())


def read_split(path, max_len=400):
    texts, labels = [], []
    with open(path, encoding="utf-8") as f:
        for line in f:
            d = json.loads(line)
            texts.append(tokenize(d["text"])[:max_len])
            labels.append(d["label"])
    return texts, labels


class Model(nn.Module):
    def __init__(self, vocab, classes, variant):
        super().__init__()
        self.variant = variant
        self.emb = nn.Embedding(vocab, 128, padding_idx=0)
        nn.init.uniform_(self.emb.weight, -0.25, 0.25)
        with torch.no_grad():
            self.emb.weight[0].zero_()
        self.convs = nn.ModuleList(nn.Conv1d(128, 100, w) for w in WIDTHS)
        units = 300 * (2 if variant.startswith("maxmean") else 1)
        self.out = nn.Linear(units, classes)
        self.drop = nn.Dropout(0.5)
        self.wide = None
        if variant.endswith("wide") or variant.endswith("wide2"):
            self.wide = nn.Embedding(vocab, classes, padding_idx=0)
            nn.init.zeros_(self.wide.weight)

    def forward(self, x, lens, bi=None):
        e = self.emb(x).transpose(1, 2)
        pooled = []
        for conv, w in zip(self.convs, WIDTHS):
            h = F.relu(conv(e))
            windows = (torch.clamp(lens, min=max(WIDTHS)) - w + 1).clamp(min=1)
            valid = torch.arange(h.shape[2])[None, None, :] < windows[:, None, None]
            if self.variant.startswith("max"):
                pooled.append(h.masked_fill(~valid, -1e9).max(2).values)
            if self.variant.startswith("mean") or self.variant.startswith("maxmean"):
                pooled.append((h * valid).sum(2) / windows[:, None])
        z = self.out(self.drop(torch.cat(pooled, 1)))
        if self.wide is not None:
            words = (x != 0).float()
            total = (self.wide(x) * words[..., None]).sum(1)
            count = words.sum(1, keepdim=True)
            if bi is not None:
                pairs = (bi != 0).float()
                total = total + (self.wide(bi) * pairs[..., None]).sum(1)
                count = count + pairs.sum(1, keepdim=True)
            z = z + total / count.clamp(min=1)
        return z


def macro_f1(gold, pred, classes):
    total = 0.0
    for c in range(classes):
        tp = sum(1 for g, p in zip(gold, pred) if g == p == c)
        fp = sum(1 for g, p in zip(gold, pred) if p == c != g)
        fn = sum(1 for g, p in zip(gold, pred) if g == c != p)
        total += 2 * tp / max(1, 2 * tp + fp + fn)
    return total / classes


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--dir", required=True)
    ap.add_argument("--corpus", required=True)
    ap.add_argument("--variant", default="max")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--threads", type=int, default=2)
    args = ap.parse_args()
    torch.set_num_threads(args.threads)
    torch.manual_seed(args.seed)
    rng = random.Random(args.seed)

    train, dev, test = (read_split(f"{args.dir}/{args.corpus}-{s}.jsonl") for s in ("train", "dev", "test"))
    labels = sorted(set(train[1]))
    label_id = {l: i for i, l in enumerate(labels)}
    counts = collections.Counter(w for t in train[0] for w in t)
    vocab = {w: i + 2 for i, w in enumerate(sorted(counts))}

    def encode(texts):
        return [[vocab.get(w, 1) for w in t] or [1] for t in texts]

    xs = [encode(s[0]) for s in (train, dev, test)]
    bigram = {}
    if args.variant.endswith("wide2"):
        pairs = sorted({(a, b) for t in train[0] for a, b in zip(t, t[1:])})
        bigram = {p: len(vocab) + 2 + i for i, p in enumerate(pairs)}
    bis = [[[bigram[p] for p in zip(t, t[1:]) if p in bigram] for t in s[0]] for s in (train, dev, test)]
    ys = [[label_id[l] for l in s[1]] for s in (train, dev, test)]
    classes = len(labels)
    model = Model(len(vocab) + 2 + len(bigram), classes, args.variant)
    groups = [{"params": [p for n, p in model.named_parameters() if not n.startswith("wide")], "lr": 1e-3}]
    if model.wide is not None:
        groups.append({"params": [model.wide.weight], "lr": 0.1})
    opt = torch.optim.Adam(groups)

    def batch(x, idx, drop=0.0, bi=None):
        width = max(max(WIDTHS), max(len(x[i]) for i in idx))
        b = torch.zeros(len(idx), width, dtype=torch.long)
        for r, i in enumerate(idx):
            t = [1 if drop and rng.random() < drop else tok for tok in x[i]]
            b[r, : len(t)] = torch.tensor(t)
        if not bigram:
            return b, torch.tensor([len(x[i]) for i in idx])
        kept = [[p for p in bi[i] if not (drop and rng.random() < drop)] for i in idx]
        b2 = torch.zeros(len(idx), max(1, max(len(k) for k in kept)), dtype=torch.long)
        for r, k in enumerate(kept):
            if k:
                b2[r, : len(k)] = torch.tensor(k)
        return b, torch.tensor([len(x[i]) for i in idx]), b2

    def predict(x, bi):
        model.eval()
        out = [0] * len(x)
        order = sorted(range(len(x)), key=lambda i: len(x[i]))
        with torch.no_grad():
            for k in range(0, len(x), 100):
                idx = order[k : k + 100]
                for i, p in zip(idx, model(*batch(x, idx, bi=bi)).argmax(1).tolist()):
                    out[i] = p
        model.train()
        return out

    start = time.time()
    best, best_epoch, test_scores, waited = -1.0, 0, None, 0
    for epoch in range(1, 11):
        order = list(range(len(xs[0])))
        rng.shuffle(order)
        chunks = [sorted(order[i : i + 5000], key=lambda j: len(xs[0][j])) for i in range(0, len(order), 5000)]
        batches = [c[i : i + 50] for c in chunks for i in range(0, len(c), 50)]
        rng.shuffle(batches)
        for idx in batches:
            loss = F.cross_entropy(model(*batch(xs[0], idx, 0.25, bis[0])), torch.tensor([ys[0][i] for i in idx]))
            opt.zero_grad()
            loss.backward()
            opt.step()
        score = macro_f1(ys[1], predict(xs[1], bis[1]), classes)
        if score > best:
            best, best_epoch, waited = score, epoch, 0
            pred = predict(xs[2], bis[2])
            test_scores = (sum(g == p for g, p in zip(ys[2], pred)) / len(pred), macro_f1(ys[2], pred, classes))
        else:
            waited += 1
            if waited >= 3:
                break
    print(json.dumps({"corpus": args.corpus, "variant": args.variant, "seed": args.seed,
                      "dev_macro_f1": round(best, 4), "epoch": best_epoch,
                      "test_accuracy": round(test_scores[0], 4), "test_macro_f1": round(test_scores[1], 4),
                      "seconds": round(time.time() - start)}), flush=True)


if __name__ == "__main__":
    main()

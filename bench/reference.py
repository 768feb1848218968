#!/usr/bin/python3
"""PyTorch reference of telltale's training recipe, for bench/run.sh.

Reads the ids that `bench prepare` wrote (DIR/ids.bin, see bench/data.go:
little-endian int32 magic, vocab size, classes, n, lengths, labels, ids), so
tokenization, vocabulary and labels are the ones telltale uses, and trains
the same model with the same recipe (Kim 2014, "Convolutional Neural
Networks for Sentence Classification"): 128-d embeddings (uniform ±0.25, PAD
row zero and never trained: padding_idx), Conv1d of widths 3, 4, 5 with 100
feature maps each, ReLU, max over time of each text's own windows only (a
text of L tokens padded to L' = max(L, 5) has windows 0 … L'−w; windows past
that, in the padding to the batch's longest text, are masked to −inf),
dropout 0.5 on the pooled layer, a linear layer, mean cross-entropy, dense
Adam (lr 1e-3, PyTorch defaults otherwise) over every parameter including
the whole embedding table, batches of 50, length-bucketed like telltale's
(the shuffled corpus cut into chunks of 100 batches, each chunk sorted by
length, the batch order shuffled), no early stopping.

Prints one JSON line with the fields of bench/main.go's result type and
appends it to --json.

Two more modes serve the command-line table of bench/run.sh:

--infer-only: the eval-mode forward alone (softmax included) on the first
--infer-max texts of DIR/ids.bin, ids prepared and every batch of 100 padded
into a tensor before the clock starts; the weights are the initial ones
(the forward's cost does not depend on their values). Two passes, the
second reported (the first warms up). Writes one "torch-forward" line
(bench/cli.go's cliResult fields) to --json.

--text FILE: the training script end to end from labeled text, as
`telltale train` runs: reads FILE (JSON lines with "text" and "label"), holds
out --dev-frac of it as dev (stratified by label, seeded), tokenizes with its
own rule (NFKC, lower-case, runs of word characters and single other
non-space characters, Python's re), builds the vocabulary of the training
split (every word), cuts texts to --max-len tokens, trains the recipe above
for --epochs epochs, evaluates the dev split after each (accuracy and
macro-F1, forward in batches of 100) and saves the best epoch's weights.
Prints one JSON object: its own timings (tokenize_seconds, steady_eps) and
the dev scores; bench/run.sh times the whole process from outside.
"""
import argparse
import collections
import json
import os
import re
import time
import unicodedata

import numpy as np
import torch
import torch.nn as nn
import torch.nn.functional as F

MAGIC = 0x31444954
WIDTHS = (3, 4, 5)


def since_process_start():
    """Wall seconds since this process started (/proc/self/stat, 1/100 s ticks)."""
    with open("/proc/self/stat") as f:
        s = f.read()
    fields = s[s.rindex(")") + 2:].split()
    start = float(fields[19]) / os.sysconf("SC_CLK_TCK")
    with open("/proc/uptime") as f:
        up = float(f.read().split()[0])
    return up - start


def peak_rss_mb():
    with open("/proc/self/status") as f:
        for line in f:
            if line.startswith("VmHWM:"):
                return float(line.split()[1]) / 1024
    return 0.0


def loadavg():
    with open("/proc/loadavg") as f:
        return " ".join(f.read().split()[:3])


def read_ids(path):
    a = np.fromfile(path, dtype="<i4")
    if a.size < 4 or a[0] != MAGIC:
        raise SystemExit(f"reference.py: {path}: not an ids file; run `bench prepare` again")
    vocab, classes, n = int(a[1]), int(a[2]), int(a[3])
    lens = a[4:4 + n].astype(np.int64)
    labels = a[4 + n:4 + 2 * n].astype(np.int64)
    flat = a[4 + 2 * n:]
    offs = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(lens, out=offs[1:])
    if offs[-1] != flat.size:
        raise SystemExit(f"reference.py: {path}: lengths do not match the ids")
    return vocab, classes, lens, labels, flat, offs


class KimCNN(nn.Module):
    def __init__(self, vocab, classes, dim=128, filters=100, dropout=0.5):
        super().__init__()
        self.emb = nn.Embedding(vocab, dim, padding_idx=0)
        nn.init.uniform_(self.emb.weight, -0.25, 0.25)
        with torch.no_grad():
            self.emb.weight[0].zero_()
        self.convs = nn.ModuleList(nn.Conv1d(dim, filters, w) for w in WIDTHS)
        self.drop = nn.Dropout(dropout)
        self.out = nn.Linear(filters * len(WIDTHS), classes)

    def forward(self, x, lp):
        # x: [B, L] ids, L ≥ max width; lp: [B] padded lengths max(len, 5).
        e = self.emb(x).transpose(1, 2)  # [B, D, L]
        pooled = []
        for w, conv in zip(WIDTHS, self.convs):
            a = conv(e)  # [B, F, L−w+1]
            t = torch.arange(a.shape[2])
            invalid = t[None, :] > (lp - w)[:, None]
            a = a.masked_fill(invalid[:, None, :], float("-inf"))
            pooled.append(F.relu(a.max(dim=2).values))
        return self.out(self.drop(torch.cat(pooled, 1)))


def batch_tensor(idx, lens, flat, offs):
    L = max(int(lens[idx].max()), max(WIDTHS))
    x = np.zeros((len(idx), L), dtype=np.int64)
    for r, i in enumerate(idx):
        x[r, :lens[i]] = flat[offs[i]:offs[i + 1]]
    lp = np.maximum(lens[idx], max(WIDTHS))
    return torch.from_numpy(x), torch.from_numpy(lp)


def make_batches(rng, pool, lens, bs, chunk=100):
    order = rng.permutation(pool)
    batches = []
    for c in range(0, len(order), bs * chunk):
        part = order[c:c + bs * chunk]
        part = part[np.argsort(lens[part], kind="stable")]
        batches += [part[b:b + bs] for b in range(0, len(part), bs)]
    return [batches[i] for i in rng.permutation(len(batches))]


def infer_only(args):
    """The eval-mode forward alone on ids prepared beforehand (see the module doc)."""
    vocab, classes, lens, labels, flat, offs = read_ids(os.path.join(args.dir, "ids.bin"))
    model = KimCNN(vocab, classes)
    model.eval()
    m = min(lens.size, args.infer_max)
    batches = [batch_tensor(np.arange(lo, min(m, lo + 100)), lens, flat, offs) for lo in range(0, m, 100)]
    secs = []
    with torch.no_grad():
        for _ in range(2):
            start = time.perf_counter()
            for x, lp in batches:
                F.softmax(model(x, lp), dim=1)
            secs.append(time.perf_counter() - start)
    r = dict(impl="torch-forward", case=args.case, texts=int(m), seconds=secs[1], first_pass_seconds=secs[0],
             threads=args.threads, loadavg=loadavg(), torch=torch.__version__)
    emit(args.json, r)


TOKEN = re.compile(r"\w+|[^\w\s]")


def tokenize(text):
    return TOKEN.findall(unicodedata.normalize("NFKC", text).lower())


def stratified_split(labels, frac, rng):
    """Indexes of the training and dev parts: round(frac·n) of each label held out."""
    dev = []
    for y in sorted(set(labels)):
        idx = [i for i, l in enumerate(labels) if l == y]
        rng.shuffle(idx)
        dev += idx[:min(len(idx) - 1, int(round(frac * len(idx))))]
    held = set(dev)
    return [i for i in range(len(labels)) if i not in held], sorted(dev)


def encode(token_lists, index, max_len):
    """Ids as bench's flat layout: lengths, flat ids, offsets (unknown words → 1)."""
    ids = [[index.get(t, 1) for t in toks[:max_len]] for toks in token_lists]
    lens = np.array([len(t) for t in ids], dtype=np.int64)
    flat = np.fromiter((i for t in ids for i in t), dtype=np.int64, count=int(lens.sum()))
    offs = np.zeros(len(ids) + 1, dtype=np.int64)
    np.cumsum(lens, out=offs[1:])
    return lens, flat, offs


def macro_f1(gold, pred, classes):
    f1 = []
    for c in range(classes):
        tp = np.sum((pred == c) & (gold == c))
        fp = np.sum((pred == c) & (gold != c))
        fn = np.sum((pred != c) & (gold == c))
        f1.append(0.0 if tp == 0 else 2 * tp / (2 * tp + fp + fn))
    return float(np.mean(f1))


def train_text(args):
    """The training script end to end from labeled text (see the module doc)."""
    with open(args.text, encoding="utf-8") as f:
        rows = [json.loads(line) for line in f if line.strip()]
    texts = [r["text"] for r in rows]
    names = sorted({r["label"] for r in rows})
    y = np.array([names.index(r["label"]) for r in rows], dtype=np.int64)
    rng = np.random.default_rng(args.seed)
    tr, dv = stratified_split(list(y), args.dev_frac, rng)
    start = time.perf_counter()
    toks = [tokenize(t) for t in texts]
    counts = collections.Counter(w for i in tr for w in toks[i])
    words = sorted(counts, key=lambda w: (-counts[w], w))
    index = {w: i + 2 for i, w in enumerate(words)}
    lens, flat, offs = encode([toks[i] for i in tr], index, args.max_len)
    dlens, dflat, doffs = encode([toks[i] for i in dv], index, args.max_len)
    tokenize_secs = time.perf_counter() - start
    ytr, ydv = torch.from_numpy(y[tr]), y[dv]
    model = KimCNN(len(words) + 2, len(names))
    opt = torch.optim.Adam(model.parameters(), lr=1e-3)
    pool = np.arange(len(tr))
    epoch_secs, best, best_state, dev_scores = [], -1.0, None, []
    for _ in range(args.epochs):
        model.train()
        start = time.perf_counter()
        for b in make_batches(rng, pool, lens, 50):
            x, lp = batch_tensor(b, lens, flat, offs)
            opt.zero_grad()
            F.cross_entropy(model(x, lp), ytr[b]).backward()
            opt.step()
        epoch_secs.append(time.perf_counter() - start)
        model.eval()
        pred = []
        with torch.no_grad():
            for lo in range(0, len(dv), 100):
                x, lp = batch_tensor(np.arange(lo, min(len(dv), lo + 100)), dlens, dflat, doffs)
                pred.append(model(x, lp).argmax(1).numpy())
        pred = np.concatenate(pred)
        f1 = macro_f1(ydv, pred, len(names))
        dev_scores.append(dict(accuracy=float(np.mean(pred == ydv)), macro_f1=f1))
        if f1 > best:
            best, best_state = f1, {k: v.detach().clone() for k, v in model.state_dict().items()}
    torch.save(best_state, args.out or os.path.splitext(args.text)[0] + ".reference.pt")
    steady = epoch_secs[1:] or epoch_secs
    r = dict(impl="torch-text", texts=len(texts), train_texts=len(tr), dev_texts=len(dv), vocab=len(words) + 2,
             epochs=args.epochs, tokenize_seconds=tokenize_secs, epoch_seconds=epoch_secs,
             steady_eps=len(tr) * len(steady) / sum(steady), best_dev_macro_f1=best, dev=dev_scores,
             threads=args.threads, peak_rss_mb=peak_rss_mb(), loadavg=loadavg(), torch=torch.__version__)
    print(json.dumps(r), flush=True)


def emit(path, r):
    line = json.dumps(r)
    print(line, flush=True)
    if path:
        with open(path, "a") as f:
            f.write(line + "\n")


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--dir", help="prepared corpus folder (ids.bin)")
    ap.add_argument("--infer-only", action="store_true", help="time the eval-mode forward alone")
    ap.add_argument("--case", default="", help="--infer-only: the table row group")
    ap.add_argument("--text", help="train end to end from this labeled JSON-lines file")
    ap.add_argument("--dev-frac", type=float, default=0.1)
    ap.add_argument("--max-len", type=int, default=400)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--out", default="", help="--text: where the best weights go")
    ap.add_argument("--epochs", type=int, default=3)
    ap.add_argument("--threads", type=int, default=os.cpu_count())
    ap.add_argument("--epoch-texts", type=int, default=0,
                    help="train each epoch on this many texts (a seeded subset) only: throughput, not a full run")
    ap.add_argument("--infer-max", type=int, default=20000)
    ap.add_argument("--json", default="")
    args = ap.parse_args()
    torch.set_num_threads(args.threads)
    torch.manual_seed(1)
    if args.text:
        return train_text(args)
    if not args.dir:
        ap.error("--dir or --text is required")
    if args.infer_only:
        return infer_only(args)
    rng = np.random.default_rng(1)
    with open(os.path.join(args.dir, "meta.json")) as f:
        meta = json.load(f)
    vocab, classes, lens, labels, flat, offs = read_ids(os.path.join(args.dir, "ids.bin"))
    n = lens.size
    pool = np.arange(n)
    if 0 < args.epoch_texts < n:
        pool = np.sort(rng.choice(n, args.epoch_texts, replace=False))
    model = KimCNN(vocab, classes)
    opt = torch.optim.Adam(model.parameters(), lr=1e-3)
    y_all = torch.from_numpy(labels)
    epoch_secs, loss = [], 0.0
    for _ in range(args.epochs):
        model.train()
        batches = make_batches(rng, pool, lens, 50)
        start = time.perf_counter()
        total = 0.0
        for b in batches:
            x, lp = batch_tensor(b, lens, flat, offs)
            opt.zero_grad()
            l = F.cross_entropy(model(x, lp), y_all[b])
            l.backward()
            opt.step()
            total += l.item() * len(b)
        epoch_secs.append(time.perf_counter() - start)
        loss = total / len(pool)
    torch.save(model.state_dict(), os.path.join(args.dir, "reference_model.pt"))
    e2e = since_process_start()
    rss = peak_rss_mb()
    steady = epoch_secs[1:] or epoch_secs
    steady_eps = len(pool) * len(steady) / sum(steady)

    model.eval()
    m = min(n, args.infer_max)
    eps = []
    for _ in range(2):  # the first pass warms up; the second is reported
        start = time.perf_counter()
        with torch.no_grad():
            for lo in range(0, m, 100):
                idx = np.arange(lo, min(m, lo + 100))
                x, lp = batch_tensor(idx, lens, flat, offs)
                F.softmax(model(x, lp), dim=1)
        eps.append(m / (time.perf_counter() - start))
    r = dict(impl="torch", corpus=meta["corpus"], threads=args.threads, texts=int(n), tokens=int(meta["tokens"]),
             epochs=args.epochs, epoch_seconds=epoch_secs, epoch_texts=[int(len(pool))] * args.epochs,
             steady_eps=steady_eps, e2e_seconds=e2e, infer_eps=eps[1], infer_cold_eps=eps[0], infer_texts=int(m), peak_rss_mb=rss,
             loadavg=loadavg(), loss=loss, torch=torch.__version__)
    line = json.dumps(r)
    print(line, flush=True)
    if args.json:
        with open(args.json, "a") as f:
            f.write(line + "\n")


if __name__ == "__main__":
    main()

"""Trains small sentence CNNs (Kim 2014) with Debian's python3-torch and saves
their state_dicts with torch.save, for the import test.

usage: kim_train.py DIR

DIR/in.json holds the vocabulary size, the padding and unknown ids and the
token ids of the training and evaluation texts (SpamAssassin mails). For each
variant, DIR/VARIANT.pt is the state_dict and out.json holds the logits of
every evaluation text, computed in float64 from the saved float32 weights,
one text at a time, padded on the right with the padding id to the widest
filter when shorter.
"""
import json
import os
import sys

import torch
import torch.nn as nn
import torch.nn.functional as F

d = sys.argv[1]
with open(os.path.join(d, "in.json")) as f:
    cfg = json.load(f)
V, PAD = cfg["vocab_size"], cfg["pad"]
DIM, MAPS, WIDTHS = 12, 6, (3, 4, 5)
torch.manual_seed(1)
torch.set_num_threads(1)


class Conv1dCNN(nn.Module):  # embedding (batch, len, dim) -> transpose -> Conv1d(dim, m, k)
    def __init__(self, outputs=2, padding_idx=PAD):
        super().__init__()
        self.embedding = nn.Embedding(V, DIM, padding_idx=padding_idx)
        self.convs = nn.ModuleList(nn.Conv1d(DIM, MAPS, k) for k in WIDTHS)
        self.dropout = nn.Dropout(0.5)
        self.fc = nn.Linear(MAPS * len(WIDTHS), outputs)

    def forward(self, ids):
        x = self.embedding(ids).transpose(1, 2)
        h = [F.relu(c(x)).max(dim=2).values for c in self.convs]
        return self.fc(self.dropout(torch.cat(h, dim=1)))


class Conv2dCNN(nn.Module):  # embedding (batch, 1, len, dim) -> Conv2d(1, m, (k, dim))
    def __init__(self):
        super().__init__()
        self.embed = nn.Embedding(V, DIM, padding_idx=PAD)
        self.convs1 = nn.ModuleList(nn.Conv2d(1, MAPS, (k, DIM)) for k in WIDTHS)
        self.dropout = nn.Dropout(0.5)
        self.fc1 = nn.Linear(MAPS * len(WIDTHS), 2)

    def forward(self, ids):
        x = self.embed(ids).unsqueeze(1)
        h = [F.relu(c(x)).squeeze(3).max(dim=2).values for c in self.convs1]
        return self.fc1(self.dropout(torch.cat(h, dim=1)))


class MultichannelCNN(nn.Module):  # a static and a trained table as two channels
    def __init__(self):
        super().__init__()
        self.static = nn.Embedding(V, DIM, padding_idx=PAD)
        self.static.weight.requires_grad = False
        self.nonstatic = nn.Embedding(V, DIM, padding_idx=PAD)
        self.convs = nn.ModuleList(nn.Conv2d(2, MAPS, (k, DIM)) for k in WIDTHS)
        self.out = nn.Linear(MAPS * len(WIDTHS), 2)

    def forward(self, ids):
        x = torch.stack([self.static(ids), self.nonstatic(ids)], dim=1)
        h = [F.relu(c(x)).squeeze(3).max(dim=2).values for c in self.convs]
        return self.out(torch.cat(h, dim=1))


def batches(ids, labels, size=32):
    order = torch.randperm(len(ids)).tolist()
    for i in range(0, len(order), size):
        part = [ids[j] for j in order[i:i + size]]
        n = max(max(len(t) for t in part), max(WIDTHS))
        x = torch.full((len(part), n), PAD, dtype=torch.long)
        for r, t in enumerate(part):
            x[r, :len(t)] = torch.tensor(t, dtype=torch.long)
        yield x, torch.tensor([labels[j] for j in order[i:i + size]])


def train(model, sigmoid=False):
    opt = torch.optim.Adam([p for p in model.parameters() if p.requires_grad], lr=0.01)
    model.train()
    for _ in range(3):
        for x, y in batches(cfg["train_ids"], cfg["train_labels"]):
            opt.zero_grad()
            z = model(x)
            if sigmoid:
                loss = F.binary_cross_entropy_with_logits(z[:, 0], y.float())
            else:
                loss = F.cross_entropy(z, y)
            loss.backward()
            opt.step()
    model.eval()
    return model


def logits(model):
    m = model.double()
    out = []
    with torch.no_grad():
        for t in cfg["eval_ids"]:
            t = t + [PAD] * max(0, max(WIDTHS) - len(t))
            out.append(m(torch.tensor([t], dtype=torch.long))[0].tolist())
    return out


variants = {
    "conv1d": (train(Conv1dCNN()), {}),
    "conv2d": (train(Conv2dCNN()), {}),
    "multichannel": (train(MultichannelCNN()), {}),
    "sigmoid_legacy": (train(Conv1dCNN(outputs=1), sigmoid=True), {"_use_new_zipfile_serialization": False}),
    "nopad": (train(Conv1dCNN(padding_idx=None)), {}),
}
result = {"torch": torch.__version__, "variants": {}}
for name, (model, kw) in variants.items():
    torch.save(model.state_dict(), os.path.join(d, name + ".pt"), **kw)
    result["variants"][name] = logits(model)
torch.save({"epoch": 3, "model_state_dict": variants["conv1d"][0].state_dict()}, os.path.join(d, "checkpoint.pt"))
with open(os.path.join(d, "out.json"), "w") as f:
    json.dump(result, f)

"""Reference forward and backward of the sentence CNN with character-aware
word vectors in PyTorch.

Usage: /usr/bin/python3 cnn/testdata/charcnn_check.py DIR

Reads DIR/in.json (a list of cases written by the Go test
TestCharTorchCrossCheck: word table, character layer, the character ids of
every vocabulary word as the Go layer reads them, the network's weights, a
batch with dropout scales), builds in float64 from torch.nn.functional the
character part of every word (character embedding, conv1d, max over
windows, tanh; zero for PAD and UNK), the word vectors
[word table ; character part], then the sentence CNN exactly as
torch_check.py does, and writes the logits, the loss and the gradients of
the word table, the character layer and the network to DIR/out.json.
"""
import json
import sys

import torch
import torch.nn.functional as F


def char_part(inp, cemb, cW, cB):
    rows = []
    for wid, cs in enumerate(inp["char_ids"]):
        if wid < 2:  # PAD, UNK
            rows.append(torch.zeros(cB.shape[0], dtype=cB.dtype))
            continue
        x = F.embedding(torch.tensor([cs]), cemb, padding_idx=0).transpose(1, 2)  # (1, CD, L)
        a = F.conv1d(x, cW.permute(0, 2, 1), cB)  # (1, CF, L-w+1)
        rows.append(torch.tanh(a.max(dim=2).values[0]))
    return torch.stack(rows)


def case(inp):
    dt = torch.float64
    V, WD, Fn, C = inp["vocab"], inp["word_dim"], inp["filters"], inp["classes"]
    CR, CD, CF, CW = inp["char_rows"], inp["char_dim"], inp["char_filters"], inp["char_width"]
    widths = inp["widths"]
    D = WD + CF
    wemb = torch.tensor(inp["word_emb"], dtype=dt).reshape(V, WD).requires_grad_()
    cemb = torch.tensor(inp["char_emb"], dtype=dt).reshape(CR, CD).requires_grad_()
    cW = torch.tensor(inp["char_w"], dtype=dt).reshape(CF, CW, CD).requires_grad_()
    cB = torch.tensor(inp["char_b"], dtype=dt).requires_grad_()
    convW = [torch.tensor(w, dtype=dt).reshape(Fn, wd, D).requires_grad_() for w, wd in zip(inp["conv_w"], widths)]
    convB = [torch.tensor(b, dtype=dt).requires_grad_() for b in inp["conv_b"]]
    outW = torch.tensor(inp["out_w"], dtype=dt).reshape(C, Fn * len(widths)).requires_grad_()
    outB = torch.tensor(inp["out_b"], dtype=dt).requires_grad_()
    table = torch.cat([wemb, char_part(inp, cemb, cW, cB)], dim=1)
    texts, labels = inp["texts"], inp["labels"]
    maxw = max(widths)
    lens = [max(len(t), maxw) for t in texts]
    Lb = max(lens)
    ids = torch.zeros(len(texts), Lb, dtype=torch.long)  # PAD = 0
    for i, t in enumerate(texts):
        if t:
            ids[i, : len(t)] = torch.tensor(t)
    x = F.embedding(ids, table, padding_idx=0).transpose(1, 2)
    pooled = []
    for wd, W, b in zip(widths, convW, convB):
        a = F.conv1d(x, W.permute(0, 2, 1), b)
        nwin = a.shape[2]
        mask = torch.tensor([[t > lp - wd for t in range(nwin)] for lp in lens])
        a = a.masked_fill(mask[:, None, :], float("-inf"))
        pooled.append(F.relu(a.max(dim=2).values))
    h = torch.cat(pooled, dim=1)
    if inp["drop"]:
        h = h * torch.tensor(inp["drop"], dtype=dt).reshape(h.shape)
    logits = F.linear(h, outW, outB)
    loss = F.cross_entropy(logits, torch.tensor(labels))
    loss.backward()
    return {
        "logits": logits.detach().flatten().tolist(),
        "loss": loss.item(),
        "word_emb": wemb.grad.flatten().tolist(),
        "char_emb": cemb.grad.flatten().tolist(),
        "char_w": cW.grad.flatten().tolist(),
        "char_b": cB.grad.tolist(),
        "conv_w": [W.grad.flatten().tolist() for W in convW],
        "conv_b": [b.grad.tolist() for b in convB],
        "out_w": outW.grad.flatten().tolist(),
        "out_b": outB.grad.tolist(),
        "torch": torch.__version__,
    }


def main(d):
    with open(d + "/in.json") as f:
        cases = json.load(f)
    with open(d + "/out.json", "w") as f:
        json.dump([case(c) for c in cases], f)


if __name__ == "__main__":
    main(sys.argv[1])

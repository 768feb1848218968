import re

import numpy as np
import torch
import torch.nn as nn


class TelltaleCNN(nn.Module):
    """A sentence CNN (Kim 2014) exported by `telltale export`.

    forward(ids, lengths): ids is a LongTensor (batch, length) of token ids
    (line numbers of vocab.txt) right-padded with 0, lengths each text's
    token count. Windows reaching past a text's end are left out (a text
    shorter than the widest filter is padded to it with id 0, whose
    embedding is zero), so a text's logits do not depend on its batch.
    A model trained with --wide adds the mean of its word weights over the
    text's ids other than 0, or the unknown word's (id 1) for a text with
    none.
    """

    def __init__(self, vocab_size, dim, widths, filters, classes, wide=False):
        super().__init__()
        self.embedding = nn.Embedding(vocab_size, dim, padding_idx=0)
        self.convs = nn.ModuleList(nn.Conv1d(dim, filters, w) for w in widths)
        self.output = nn.Linear(filters * len(widths), classes)
        self.wide = None
        if wide:
            self.wide = nn.EmbeddingBag(vocab_size, classes, mode="mean", padding_idx=0)

    @classmethod
    def load(cls, folder):
        arrays = np.load(f"{folder}/state_dict.npz", allow_pickle=False)
        state = {k: torch.from_numpy(arrays[k]) for k in arrays.files}
        vocab_size, dim = state["embedding.weight"].shape
        n = sum(1 for k in state if k.startswith("convs.") and k.endswith(".weight"))
        widths = [state[f"convs.{i}.weight"].shape[2] for i in range(n)]
        classes, features = state["output.weight"].shape
        model = cls(vocab_size, dim, widths, features // n, classes, "wide.weight" in state)
        model.load_state_dict(state)
        with open(f"{folder}/vocab.txt", encoding="utf-8") as f:
            model.vocab = {w: i for i, w in enumerate(f.read().split("\n")[:-1])}
        with open(f"{folder}/labels.txt", encoding="utf-8") as f:
            model.labels = f.read().split("\n")[:-1]
        return model.eval()

    def encode(self, text, lower=True, max_tokens=0):
        """Token ids of text, as telltale splits ASCII text without control
        characters: at white space, and around each punctuation or symbol
        character; unknown words get id 1."""
        tokens = re.findall(r"[A-Za-z0-9]+|[!-/:-@\[-`{-~]", text.lower() if lower else text)
        if max_tokens > 0:
            tokens = tokens[:max_tokens]
        return [self.vocab.get(t, 1) for t in tokens]

    def forward(self, ids, lengths):
        widest = max(c.kernel_size[0] for c in self.convs)
        if ids.shape[1] < widest:
            ids = nn.functional.pad(ids, (0, widest - ids.shape[1]))
        x = self.embedding(ids).transpose(1, 2)  # (batch, dim, length)
        end = lengths.clamp(min=widest)
        pooled = []
        for conv in self.convs:
            a = conv(x)  # (batch, filters, windows)
            start = torch.arange(a.shape[2], device=ids.device)
            inside = start[None, :] + conv.kernel_size[0] <= end[:, None]
            a = a.masked_fill(~inside[:, None, :], float("-inf"))
            pooled.append(torch.relu(a.amax(dim=2)))
        logits = self.output(torch.cat(pooled, dim=1))
        if self.wide is not None:
            none = (ids == 0).all(dim=1, keepdim=True)  # padding_idx leaves id 0 out of the mean
            logits = logits + torch.where(none, self.wide.weight[1], self.wide(ids))
        return logits

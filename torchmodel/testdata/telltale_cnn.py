import re

import numpy as np
import torch
import torch.nn as nn


class CharCNN(nn.Module):
    """The character part of word vectors of a model trained with --chars:
    tanh of the max over a word's windows of a Conv1d over its character
    vectors (Kim, Jernite, Sontag & Rush 2016). word_chars holds each
    vocabulary word's character ids: 1, a character's id (3 + its position
    in alphabet, from 1; 3 if absent), 2, then 0; an all-0 row is a word
    without characters (ids 0 and 1), whose part is zero."""

    def __init__(self, vocab_size, letters, row, dim, filters, width):
        super().__init__()
        self.register_buffer("alphabet", torch.zeros(letters, dtype=torch.long))
        self.register_buffer("word_chars", torch.zeros(vocab_size, row, dtype=torch.long))
        self.embed = nn.Embedding(letters + 4, dim, padding_idx=0)
        self.conv = nn.Conv1d(dim, filters, width)

    def spell(self, word):
        """Character ids of a word outside the vocabulary, as a row of word_chars."""
        index = {c: i + 4 for i, c in enumerate(self.alphabet.tolist())}
        row = self.word_chars.shape[1]
        ids = [1] + [index.get(ord(c), 3) for c in word[:row - 2]] + [2]
        return ids + [0] * (row - len(ids))

    def forward(self, chars):  # (..., row) character ids → (..., filters)
        c = chars.reshape(-1, chars.shape[-1])
        width = self.conv.kernel_size[0]
        if c.shape[1] < width:
            c = nn.functional.pad(c, (0, width - c.shape[1]))
        a = self.conv(self.embed(c).transpose(1, 2))  # (words, filters, windows)
        end = (c != 0).sum(dim=1).clamp(min=width)
        start = torch.arange(a.shape[2], device=c.device)
        a = a.masked_fill(~(start[None, :] + width <= end[:, None])[:, None, :], float("-inf"))
        part = torch.tanh(a.amax(dim=2)) * (c[:, :1] != 0)
        return part.reshape(*chars.shape[:-1], -1)


class TelltaleCNN(nn.Module):
    """A sentence CNN (Kim 2014) exported by `telltale export`.

    forward(ids, lengths): ids is a LongTensor (batch, length) of token ids
    (line numbers of vocab.txt) right-padded with 0, lengths each text's
    token count. Windows reaching past a text's end are left out (a text
    shorter than the widest filter is padded to it with id 0, whose
    embedding is zero), so a text's logits do not depend on its batch.
    A model trained with --wide adds the mean of its word weights over the
    text's ids other than 0, or the unknown word's (id 1) for a text with
    none; with --wide-bigrams the mean also runs over the weights of the
    text's pairs of adjacent ids found in bigram_keys (a * 2**32 + b,
    sorted). A model trained with --chars appends to each word's row its
    character part; forward(ids, lengths, chars) takes the tokens'
    character ids (batch, length, row), as encode(..., chars=True) gives
    them, so that unknown words get theirs rather than none.
    """

    def __init__(self, vocab_size, dim, widths, filters, classes, wide=False, chars=None, bigrams=0):
        super().__init__()
        self.embedding = nn.Embedding(vocab_size, dim, padding_idx=0)
        self.chars = None
        if chars is not None:  # (letters, row, dim, filters, width)
            self.chars = CharCNN(vocab_size, *chars)
            dim += chars[3]
        self.convs = nn.ModuleList(nn.Conv1d(dim, filters, w) for w in widths)
        self.output = nn.Linear(filters * len(widths), classes)
        self.wide = None
        if wide:
            self.wide = nn.EmbeddingBag(vocab_size, classes, mode="mean", padding_idx=0)
        self.wide_bigram = None
        if bigrams:
            self.wide_bigram = nn.Embedding(bigrams, classes)
            self.register_buffer("bigram_keys", torch.zeros(bigrams, dtype=torch.long))

    @classmethod
    def load(cls, folder):
        arrays = np.load(f"{folder}/state_dict.npz", allow_pickle=False)
        state = {k: torch.from_numpy(arrays[k]) for k in arrays.files}
        vocab_size, dim = state["embedding.weight"].shape
        n = sum(1 for k in state if k.startswith("convs.") and k.endswith(".weight"))
        widths = [state[f"convs.{i}.weight"].shape[2] for i in range(n)]
        classes, features = state["output.weight"].shape
        chars = None
        if "chars.conv.weight" in state:
            filters, char_dim, width = state["chars.conv.weight"].shape
            chars = (len(state["chars.alphabet"]), state["chars.word_chars"].shape[1], char_dim, filters, width)
        bigrams = state["wide_bigram.weight"].shape[0] if "wide_bigram.weight" in state else 0
        model = cls(vocab_size, dim, widths, features // n, classes, "wide.weight" in state, chars, bigrams)
        model.load_state_dict(state)
        with open(f"{folder}/vocab.txt", encoding="utf-8") as f:
            model.vocab = {w: i for i, w in enumerate(f.read().split("\n")[:-1])}
        with open(f"{folder}/labels.txt", encoding="utf-8") as f:
            model.labels = f.read().split("\n")[:-1]
        return model.eval()

    def encode(self, text, lower=True, max_tokens=0, chars=False):
        """Token ids of text, as telltale splits ASCII text without control
        characters: at white space, and around each punctuation or symbol
        character; unknown words get id 1. With chars, also the tokens'
        character ids (a model trained with --chars)."""
        tokens = re.findall(r"[A-Za-z0-9]+|[!-/:-@\[-`{-~]", text.lower() if lower else text)
        if max_tokens > 0:
            tokens = tokens[:max_tokens]
        ids = [self.vocab.get(t, 1) for t in tokens]
        if not chars:
            return ids
        return ids, self.spell(tokens)

    def spell(self, tokens):
        """Character ids of tokens (strings): a vocabulary word's row of
        word_chars, another word's own."""
        return [self.chars.word_chars[self.vocab[t]].tolist() if t in self.vocab else self.chars.spell(t)
                for t in tokens]

    def forward(self, ids, lengths, chars=None):
        widest = max(c.kernel_size[0] for c in self.convs)
        if ids.shape[1] < widest:
            ids = nn.functional.pad(ids, (0, widest - ids.shape[1]))
        x = self.embedding(ids)  # (batch, length, dim)
        if self.chars is not None:
            if chars is None:
                chars = self.chars.word_chars[ids]
            elif chars.shape[1] < ids.shape[1]:
                chars = nn.functional.pad(chars, (0, 0, 0, ids.shape[1] - chars.shape[1]))
            x = torch.cat([x, self.chars(chars)], dim=2)
        x = x.transpose(1, 2)  # (batch, dim, length)
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
            mean = self.wide(ids) if self.wide_bigram is None else self.bigram_mean(ids)
            logits = logits + torch.where(none, self.wide.weight[1], mean)
        return logits

    def bigram_mean(self, ids):
        """The mean of the word weights of ids other than 0 and the weights
        of their pairs of adjacent ids found in bigram_keys (neither id 0
        nor 1)."""
        words = (ids != 0).sum(dim=1, keepdim=True)
        a, b = ids[:, :-1], ids[:, 1:]
        key = a * 2**32 + b
        row = torch.searchsorted(self.bigram_keys, key).clamp(max=len(self.bigram_keys) - 1)
        found = (a > 1) & (b > 1) & (self.bigram_keys[row] == key)
        total = self.wide(ids) * words + (self.wide_bigram(row) * found[..., None]).sum(dim=1)
        return total / (words + found.sum(dim=1, keepdim=True)).clamp(min=1)

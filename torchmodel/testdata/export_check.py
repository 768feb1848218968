"""Loads a model written by `telltale export` with the README's PyTorch module
(testdata/telltale_cnn.py, Debian's python3-torch) and computes its logits,
for the export test.

usage: export_check.py DIR

DIR/in.json holds the export folder, token ids from telltale's encoder with
the tokens' text, raw ASCII texts and the model's token limit. out.json
gets, in float64 from the exported float32 weights: the logits of the ids,
run in padded batches of 16 (so that each batch holds texts of different
lengths); for a model with a character layer also the logits of the ids
with the tokens' character ids (the module's spell()); and the logits of
the raw texts as the module's own encode() reads them (with their
characters for a model with a character layer). The module's state_dict,
as loaded, is saved with torch.save as DIR/module.pt.
"""
import json
import os
import sys

import torch

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from telltale_cnn import TelltaleCNN  # noqa: E402

d = sys.argv[1]
with open(os.path.join(d, "in.json")) as f:
    cfg = json.load(f)
model = TelltaleCNN.load(cfg["folder"])
torch.save(model.state_dict(), os.path.join(d, "module.pt"))
model = model.double()


def run(texts, spellings=None):
    out = []
    with torch.no_grad():
        for i in range(0, len(texts), 16):
            part = texts[i:i + 16]
            n = max(1, max(len(t) for t in part))
            ids = torch.zeros((len(part), n), dtype=torch.long)
            for r, t in enumerate(part):
                ids[r, :len(t)] = torch.tensor(t, dtype=torch.long)
            lengths = torch.tensor([len(t) for t in part])
            chars = None
            if spellings is not None:
                row = model.chars.word_chars.shape[1]
                chars = torch.zeros((len(part), n, row), dtype=torch.long)
                for r, s in enumerate(spellings[i:i + 16]):
                    if s:
                        chars[r, :len(s)] = torch.tensor(s, dtype=torch.long)
            out += model(ids, lengths, chars).tolist()
    return out


result = {"batch_logits": run(cfg["ids"]), "labels": model.labels, "torch": torch.__version__}
if model.chars is None:
    encoded = [model.encode(t, max_tokens=cfg["max_tokens"]) for t in cfg["texts"]]
    result["text_logits"] = run(encoded)
else:
    result["char_logits"] = run(cfg["ids"], [model.spell(toks) for toks in cfg["tokens"]])
    pairs = [model.encode(t, max_tokens=cfg["max_tokens"], chars=True) for t in cfg["texts"]]
    encoded = [ids for ids, _ in pairs]
    result["text_logits"] = run(encoded, [s for _, s in pairs])
result["text_ids"] = encoded
with open(os.path.join(d, "out.json"), "w") as f:
    json.dump(result, f)

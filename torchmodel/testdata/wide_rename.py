"""Saves exported models under another key for their word weights, as a
PyTorch user's module might name them, for the import test.

usage: wide_rename.py DIR

DIR/in.json holds export folders (written by `telltale export` for models
trained with --wide), the key to give the word weights, and token ids. For
each folder, the README's module (testdata/telltale_cnn.py, Debian's
python3-torch) loads it and its state_dict is saved with torch.save as
FOLDER/renamed.pt, "wide.weight" renamed, in the module's order; out.json
gets the module's logits (float64) of the ids, one text at a time.
"""
import collections
import json
import os
import sys

import torch

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from telltale_cnn import TelltaleCNN  # noqa: E402

d = sys.argv[1]
with open(os.path.join(d, "in.json")) as f:
    cfg = json.load(f)
logits = []
for folder in cfg["folders"]:
    model = TelltaleCNN.load(folder)
    state = collections.OrderedDict((cfg["key"] if k == "wide.weight" else k, v) for k, v in model.state_dict().items())
    torch.save(state, os.path.join(folder, "renamed.pt"))
    model = model.double()
    with torch.no_grad():
        logits.append([model(torch.tensor([ids], dtype=torch.long), torch.tensor([len(ids)])).tolist()[0]
                       for ids in cfg["ids"]])
with open(os.path.join(d, "out.json"), "w") as f:
    json.dump({"logits": logits, "torch": torch.__version__}, f)

"""Writes torch.save files for the statedict tests (Debian's python3-torch).

usage: save_files.py OUTDIR

Each FILE.pt gets its expected content in expected.json: for every key of
the state_dict, the shape, the dtype and the values as PyTorch reads them
(converted to float32 the way the Go reader converts them: float64 rounded
to nearest, float16 exact).
"""
import json
import os
import sys

import torch
import torch.nn as nn

out = sys.argv[1]
torch.manual_seed(7)


class Kim(nn.Module):
    def __init__(self):
        super().__init__()
        self.emb = nn.Embedding(10, 4, padding_idx=0)
        self.convs = nn.ModuleList([nn.Conv1d(4, 3, k) for k in (2, 3)])
        self.fc = nn.Linear(6, 2)


class Evil:
    def __reduce__(self):
        return (os.system, ("echo the pickle ran a command",))


m = Kim()
sd = m.state_dict()
base = torch.arange(24, dtype=torch.float64).reshape(4, 6) / 7
mixed = {
    "strided64": base.t()[1:, ::2],  # a transposed, sliced view: offset and strides
    "half": (torch.arange(5, dtype=torch.float32) / 3).half(),
    "bf16": (torch.arange(4, dtype=torch.float32) / 3).bfloat16(),
    "shared_a": base[0],  # two views of one storage
    "shared_b": base[2, 1:4],
    "count": torch.tensor(5),  # an int64 tensor (as BatchNorm's num_batches_tracked)
    "ids": (torch.arange(12).reshape(3, 4) * (1 << 33)).t()[1:],  # a strided int64 view beyond 32 bits
}
files = {
    "zip.pt": (sd, {}),
    "legacy.pt": (sd, {"_use_new_zipfile_serialization": False}),
    "mixed.pt": (mixed, {}),
    "mixed_legacy.pt": (mixed, {"_use_new_zipfile_serialization": False}),
    "checkpoint.pt": ({"epoch": 3, "model_state_dict": sd,
                       "optimizer_state_dict": torch.optim.Adam(m.parameters()).state_dict()}, {}),
    "params.pt": (dict(m.named_parameters()), {}),
}
expected = {}
for name, (obj, kw) in files.items():
    torch.save(obj, os.path.join(out, name), **kw)
    sdict = obj.get("model_state_dict", obj)
    exp = []
    for k, t in sdict.items():
        t = t.detach()
        vals = t.float().flatten().tolist() if t.is_floating_point() else None
        ints = t.flatten().tolist() if t.dtype == torch.int64 else None
        exp.append({"key": k, "shape": list(t.shape), "dtype": str(t.dtype).replace("torch.", ""), "values": vals,
                    "ints": ints})
    expected[name] = exp
torch.save(m, os.path.join(out, "whole_module.pt"))
torch.save({"weights": sd["fc.weight"], "payload": Evil()}, os.path.join(out, "evil.pt"))
with open(os.path.join(out, "expected.json"), "w") as f:
    json.dump({"files": expected, "torch": torch.__version__}, f)

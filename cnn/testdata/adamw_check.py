#!/usr/bin/python3
"""torch.optim.AdamW steps on given gradients, for the weight-decay check.

Run with Debian's Python and python3-torch:

    /usr/bin/python3 cnn/testdata/adamw_check.py < in.json

The input is {"params": [[...], ...], "decay": [true, ...], "grads":
[[[...], ...], ...] (one list of gradients per step, one per parameter),
"lr": LR, "weight_decay": WD}. The parameters are float32 tensors in two
groups: those marked decay with weight_decay=WD, the others with 0 (the
biases); betas (0.9, 0.999), eps 1e-8. Before each opt.step() the step's
gradients are set on .grad. Prints {"params": [[...], ...], "torch": version}.
"""

import json
import sys

import torch


def main():
    inp = json.load(sys.stdin)
    ps = [torch.tensor(p, dtype=torch.float32, requires_grad=True) for p in inp["params"]]
    decay = [p for p, d in zip(ps, inp["decay"]) if d]
    other = [p for p, d in zip(ps, inp["decay"]) if not d]
    opt = torch.optim.AdamW([{"params": decay, "weight_decay": inp["weight_decay"]},
                             {"params": other, "weight_decay": 0.0}],
                            lr=inp["lr"], betas=(0.9, 0.999), eps=1e-8)
    for step in inp["grads"]:
        for p, g in zip(ps, step):
            p.grad = torch.tensor(g, dtype=torch.float32)
        opt.step()
    print(json.dumps({"params": [p.detach().tolist() for p in ps], "torch": torch.__version__}))


if __name__ == "__main__":
    main()

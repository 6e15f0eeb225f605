"""Test driver for generated PyTorch code: one process runs every request of one sample file and input scale.

Usage: python3 run_torch.py < REQUEST_JSON, where the request is
  {"module": "/path/generated_torch.py", "numpy_module": "/path/generated_numpy.py" or null, "ops": [...]}
and each op is one of
  {"op": "call", "fn": NAME, "args": [...], "kwargs": {...}, "dtype": "float64"|"float32",
   "grad": bool, "jit": bool, "lib": "torch"|"numpy"}
      -> {"value": ..., "grad": ... (autograd of the summed output with respect to args[0], when asked)}
      lib "numpy" calls the generated NumPy module instead (no autograd; its <name>_grad is a separate fn).
  {"op": "script", "fn": NAME} -> {"ok": true} or {"ok": false, "error": "..."} (torch.jit.script)
  {"op": "train", "fn": NAME, "input": "prob"|"score", "features": [[...]], "labels": [...],
   "query": [[...]], "steps": N, "recover": NAME or null}
      -> fits theta of the linear score s = features @ theta with the generated loss (pred = sigmoid(s) for
         probability input, pred = s for score input) by full-batch L-BFGS in float64 from theta = 0;
         returns theta, the scores and predictions at the query rows, the recovered posterior there (when a
         recovery function is named), the final gradient norm, and "constant": true when the loss does not
         depend on the parameters at all (autograd has nothing to follow).
Output: a JSON list with one result per op; non-finite numbers are the strings "inf", "-inf", "nan".
Errors are reported per op as {"error": "..."} (the test fails on them).
"""
import importlib.util
import json
import math
import sys

import numpy as np
import torch

DTYPES = {"float64": torch.float64, "float32": torch.float32}


def load(path, name):
    spec = importlib.util.spec_from_file_location(name, path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def encode(x):
    if isinstance(x, torch.Tensor):
        x = x.detach().cpu().double().tolist()
    elif isinstance(x, np.ndarray):
        x = x.astype(float).tolist()
    if isinstance(x, (list, tuple)):
        return [encode(v) for v in x]
    v = float(x)
    if math.isnan(v):
        return "nan"
    if math.isinf(v):
        return "inf" if v > 0 else "-inf"
    return v


def call(torch_mod, numpy_mod, scripted, op):
    if op.get("lib") == "numpy":
        fn = getattr(numpy_mod, op["fn"])
        conv = lambda a: np.asarray(a, dtype=float) if isinstance(a, list) else a
        args = [conv(a) for a in op.get("args", [])]
        kwargs = {k: conv(v) for k, v in op.get("kwargs", {}).items()}
        return {"value": encode(fn(*args, **kwargs))}
    dtype = DTYPES[op.get("dtype", "float64")]
    if op.get("jit"):
        if op["fn"] not in scripted:
            scripted[op["fn"]] = torch.jit.script(getattr(torch_mod, op["fn"]))
        fn = scripted[op["fn"]]
    else:
        fn = getattr(torch_mod, op["fn"])
    conv = lambda a: torch.tensor(a, dtype=dtype) if isinstance(a, list) else a
    args = [conv(a) for a in op.get("args", [])]
    kwargs = {k: conv(v) for k, v in op.get("kwargs", {}).items()}
    if not op.get("grad"):
        with torch.no_grad():
            return {"value": encode(fn(*args, **kwargs))}
    args[0] = args[0].clone().requires_grad_(True)
    out = fn(*args, **kwargs)
    total = out.sum()
    if total.requires_grad:
        total.backward()
        grad = args[0].grad
    else:
        # A loss built only from constant branches does not depend on pred: its gradient is zero everywhere,
        # which autograd reports as an error instead.
        grad = torch.zeros_like(args[0])
    return {"value": encode(out), "grad": encode(grad)}


def train(torch_mod, op):
    fn = getattr(torch_mod, op["fn"])
    f64 = torch.float64
    x = torch.tensor(op["features"], dtype=f64)
    y = torch.tensor(op["labels"], dtype=f64)
    xq = torch.tensor(op["query"], dtype=f64)
    link = torch.sigmoid if op["input"] == "prob" else (lambda s: s)
    theta = torch.zeros(x.shape[1], dtype=f64, requires_grad=True)
    if not fn(link(x @ theta), y).requires_grad:
        return {"constant": True}
    opt = torch.optim.LBFGS(
        [theta], lr=1.0, max_iter=100, history_size=20, tolerance_grad=1e-13, tolerance_change=1e-18, line_search_fn="strong_wolfe"
    )

    def closure():
        opt.zero_grad()
        loss = fn(link(x @ theta), y)
        loss.backward()
        return loss

    for _ in range(op["steps"]):
        opt.step(closure)
    opt.zero_grad()
    final = fn(link(x @ theta), y)
    final.backward()
    with torch.no_grad():
        scores = xq @ theta
        pred = link(scores)
        out = {
            "constant": False,
            "theta": encode(theta),
            "scores": encode(scores),
            "pred": encode(pred),
            "gradNorm": float(theta.grad.norm()),
            "loss": float(final),
        }
        if op.get("recover"):
            out["recovered"] = encode(getattr(torch_mod, op["recover"])(pred))
    return out


def main():
    request = json.load(sys.stdin)
    torch_mod = load(request["module"], "generated_torch")
    numpy_mod = load(request["numpy_module"], "generated_numpy") if request.get("numpy_module") else None
    scripted = {}
    results = []
    for op in request["ops"]:
        try:
            if op["op"] == "call":
                results.append(call(torch_mod, numpy_mod, scripted, op))
            elif op["op"] == "script":
                try:
                    scripted[op["fn"]] = torch.jit.script(getattr(torch_mod, op["fn"]))
                    results.append({"ok": True})
                except Exception as err:  # The test reports the first lines of TorchScript's message.
                    results.append({"ok": False, "error": f"{type(err).__name__}: {err}"[:600]})
            elif op["op"] == "train":
                results.append(train(torch_mod, op))
            else:
                results.append({"error": f"unknown op {op['op']}"})
        except Exception as err:  # Reported to the test, which fails on it.
            results.append({"error": f"{type(err).__name__}: {err}"[:600]})
    json.dump(results, sys.stdout)


if __name__ == "__main__":
    torch.set_num_threads(1)
    main()

"""Test driver: imports a generated NumPy module and evaluates calls given as JSON on stdin.

Input: {"module": "/path/to/module.py", "calls": [{"fn": "name", "args": [...], "kwargs": {...}}, ...]}.
Output: one JSON list with a result per call: a number, a list of numbers, or {"error": "..."}.
Non-finite numbers are written as the strings "inf", "-inf" and "nan" (JSON has no literal for them).
"""
import importlib.util
import json
import math
import sys

import numpy as np


def encode(x):
    if isinstance(x, np.ndarray):
        return [encode(v) for v in x.tolist()]
    if isinstance(x, (list, tuple)):
        return [encode(v) for v in x]
    v = float(x)
    if math.isnan(v):
        return "nan"
    if math.isinf(v):
        return "inf" if v > 0 else "-inf"
    return v


def main():
    request = json.load(sys.stdin)
    spec = importlib.util.spec_from_file_location("generated_module", request["module"])
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    results = []
    for c in request["calls"]:
        try:
            fn = getattr(module, c["fn"])
            args = [np.asarray(a, dtype=float) if isinstance(a, list) else a for a in c.get("args", [])]
            kwargs = {k: (np.asarray(v, dtype=float) if isinstance(v, list) else v) for k, v in c.get("kwargs", {}).items()}
            results.append(encode(fn(*args, **kwargs)))
        except Exception as err:  # Reported to the test, which fails on it.
            results.append({"error": f"{type(err).__name__}: {err}"})
    json.dump(results, sys.stdout)


if __name__ == "__main__":
    main()

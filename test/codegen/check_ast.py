"""Parses generated PyTorch / JAX modules with Python's `ast` and reports their shape as JSON.

Usage: python3 check_ast.py TARGET FILE [--run CALLS_JSON]
Checks: the module parses; imports are only the target's libraries; every public function has the
signature (pred, target, weight=None, reduction="mean") or (q) for recovery maps; for JAX, every `if`
tests only `weight` or `reduction` (no Python control flow on traced values).
With --run and the library importable, evaluates the calls like run_numpy.py; otherwise reports
"skipped" with the reason.
"""
import ast
import importlib
import json
import math
import sys

ALLOWED = {"torch": {"torch"}, "jax": {"jax", "jax.numpy", "jax.scipy.special"}}


def check(target, source):
    tree = ast.parse(source)
    problems = []
    functions = {}
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for a in node.names:
                if a.name not in ALLOWED[target]:
                    problems.append(f"unexpected import {a.name}")
        elif isinstance(node, ast.ImportFrom):
            problems.append(f"unexpected from-import {node.module}")
        elif isinstance(node, ast.If) and target == "jax":
            names = {n.id for n in ast.walk(node.test) if isinstance(n, ast.Name)}
            if not names <= {"weight", "reduction"}:
                problems.append(f"python `if` on {sorted(names)} at line {node.lineno}")
    for node in tree.body:
        if isinstance(node, ast.FunctionDef):
            args = [a.arg for a in node.args.args]
            defaults = [ast.literal_eval(d) for d in node.args.defaults]
            functions[node.name] = {"args": args, "defaults": defaults}
    return {"ok": not problems, "problems": problems, "functions": functions}


def encode(x):
    try:
        values = x.tolist()
    except AttributeError:
        values = x
    if isinstance(values, list):
        return [encode(v) for v in values]
    v = float(values)
    if math.isnan(v):
        return "nan"
    if math.isinf(v):
        return "inf" if v > 0 else "-inf"
    return v


def run(target, path, calls):
    lib = "torch" if target == "torch" else "jax"
    try:
        importlib.import_module(lib)
    except Exception as err:
        return {"skipped": f"{lib} is not importable ({type(err).__name__})"}
    if target == "jax":
        import jax

        jax.config.update("jax_enable_x64", True)
    spec = importlib.util.spec_from_file_location("generated_module", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    results = []
    for c in calls:
        try:
            if target == "torch":
                import torch

                conv = lambda a: torch.tensor(a, dtype=torch.float64) if isinstance(a, list) else a
            else:
                import jax.numpy as jnp

                conv = lambda a: jnp.asarray(a, dtype=jnp.float64) if isinstance(a, list) else a
            args = [conv(a) for a in c.get("args", [])]
            kwargs = {k: conv(v) for k, v in c.get("kwargs", {}).items()}
            results.append(encode(getattr(module, c["fn"])(*args, **kwargs)))
        except Exception as err:
            results.append({"error": f"{type(err).__name__}: {err}"})
    return {"results": results}


def main():
    target, path = sys.argv[1], sys.argv[2]
    with open(path, encoding="utf-8") as f:
        out = check(target, f.read())
    if len(sys.argv) > 3 and sys.argv[3] == "--run":
        out["run"] = run(target, path, json.load(sys.stdin))
    json.dump(out, sys.stdout)


if __name__ == "__main__":
    main()

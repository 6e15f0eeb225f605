"""Parses generated PyTorch / JAX modules with Python's `ast` and reports their shape as JSON.

Usage: python3 check_ast.py TARGET FILE [--run CALLS_JSON]
Checks: the module parses; imports are only the target's libraries; every public function has the
signature (pred, target, weight=None, reduction="mean") or (q) for recovery maps; for JAX, every `if`
tests only `weight` or `reduction` (no Python control flow on traced values).
With --run and the library importable, evaluates the calls like run_numpy.py (JAX under jax.jit with
x64 enabled; a call with "grad": true returns the autograd / jax.grad gradient of the summed per-sample
losses with respect to pred); otherwise reports "skipped" with the reason.
"""
import ast
import importlib
import json
import math
import sys

ALLOWED = {"torch": {"torch", "typing"}, "jax": {"jax", "jax.numpy", "jax.scipy.special"}}


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
            fn = getattr(module, c["fn"])
            if target == "torch":
                import torch

                conv = lambda a: torch.tensor(a, dtype=torch.float64) if isinstance(a, list) else a
                args = [conv(a) for a in c.get("args", [])]
                kwargs = {k: conv(v) for k, v in c.get("kwargs", {}).items()}
                if c.get("grad"):
                    # Autograd through the generated function: d(sum of per-sample losses)/d(pred).
                    args[0] = args[0].clone().requires_grad_(True)
                    total = fn(*args, **kwargs).sum()
                    if total.requires_grad:
                        total.backward()
                        results.append(encode(args[0].grad))
                    else:
                        # A loss built only from constant branches (e.g. the cost-weighted 0-1 loss) does not
                        # depend on pred at all: its gradient is identically zero, which autograd reports as an error.
                        results.append(encode(torch.zeros_like(args[0])))
                else:
                    results.append(encode(fn(*args, **kwargs)))
            else:
                import jax
                import jax.numpy as jnp

                conv = lambda a: jnp.asarray(a, dtype=jnp.float64) if isinstance(a, list) else a
                args = [conv(a) for a in c.get("args", [])]
                kwargs = {k: conv(v) for k, v in c.get("kwargs", {}).items()}
                static = {k: v for k, v in kwargs.items() if k == "reduction"}
                dynamic = {k: v for k, v in kwargs.items() if k != "reduction"}
                # Everything runs under jit with the reduction static, as the module header advises.
                jitted = jax.jit(lambda *a, **kw: fn(*a, **kw, **static))
                if c.get("grad"):
                    g = jax.grad(lambda p, *rest: jitted(p, *rest, **dynamic).sum())
                    results.append(encode(g(*args)))
                else:
                    results.append(encode(jitted(*args, **dynamic)))
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

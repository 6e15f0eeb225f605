/**
 * The arithmetic of the generated JAX code, executed through a NumPy-backed STAND-IN for JAX (no JAX is
 * installable here). The test writes a small package named `jax` into a temporary directory and puts it first
 * on sys.path; it provides only what the generated modules call: `jax.numpy` (forwarded to NumPy),
 * `jax.nn.sigmoid` and `jax.nn.softplus` (in the stable forms JAX documents: the logistic function and
 * logaddexp(x, 0)), and `jax.scipy.special.erf`, `ndtr`, `ndtri` (from Python's math and statistics).
 * This checks the formulas the JAX emitter prints, not JAX itself: no jit, no tracing, no jax.grad
 * (test/codegen/golden.test.ts parses the same modules and checks that they are jit-safe).
 * Values at the 1,200 points per label of execute.test.ts, against the engine's closures to 1e-10 relative.
 */
import { spawnSync } from "node:child_process";
import * as fs from "node:fs";
import * as path from "node:path";
import { describe, expect, it } from "vitest";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import { generate } from "../../server/src/codegen/index.js";
import { sanitiseName } from "../../server/src/codegen/names.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import { decode, HERE, probabilityPoints, PYTHON, pythonHas, sampleFiles, SAMPLES_DIR, scorePoints, tempDir, TOL, type PyCall, type PyValue } from "./support.js";
import { pointReference } from "./point-reference.js";

const HAS_NUMPY = pythonHas("numpy");
const N_POINTS = 1200;

/** The stand-in package: file path (relative to the temporary directory) → source. */
const STANDIN: Record<string, string> = {
  "jax/__init__.py": [
    '"""STAND-IN for JAX written by test/codegen/jax-standin.test.ts: NumPy behind the names the generated code uses."""',
    "from . import nn, numpy, scipy",
    "",
    "STANDIN = True",
    "",
  ].join("\n"),
  "jax/numpy.py": [
    '"""Stand-in for jax.numpy: every attribute is NumPy\'s (PEP 562 module __getattr__)."""',
    "import numpy as _np",
    "",
    "",
    "def __getattr__(name):",
    "    return getattr(_np, name)",
    "",
  ].join("\n"),
  "jax/nn.py": [
    '"""Stand-in for jax.nn: the stable forms (sigmoid through exp(-|x|), softplus as logaddexp(x, 0))."""',
    "import numpy as _np",
    "",
    "",
    "def sigmoid(x):",
    "    x = _np.asarray(x, dtype=float)",
    "    e = _np.exp(-_np.abs(x))",
    "    return _np.where(x >= 0, 1.0 / (1.0 + e), e / (1.0 + e))",
    "",
    "",
    "def softplus(x):",
    "    return _np.logaddexp(x, 0.0)",
    "",
  ].join("\n"),
  "jax/scipy/__init__.py": ['"""Stand-in for jax.scipy."""', "from . import special", ""].join("\n"),
  "jax/scipy/special.py": [
    '"""Stand-in for jax.scipy.special: erf, ndtr (Phi = erfc(-x/sqrt 2)/2) and ndtri, elementwise from the standard library."""',
    "import math",
    "import statistics",
    "",
    "import numpy as _np",
    "",
    "_ERF = _np.frompyfunc(math.erf, 1, 1)",
    "_ERFC = _np.frompyfunc(math.erfc, 1, 1)",
    "_NDTRI = _np.frompyfunc(lambda p: statistics.NormalDist().inv_cdf(p) if 0 < p < 1 else (-math.inf if p == 0 else math.inf if p == 1 else math.nan), 1, 1)",
    "",
    "",
    "def erf(x):",
    "    return _ERF(_np.asarray(x, dtype=float)).astype(float)",
    "",
    "",
    "def ndtr(x):",
    "    return 0.5 * _ERFC(-_np.asarray(x, dtype=float) / math.sqrt(2.0)).astype(float)",
    "",
    "",
    "def ndtri(p):",
    "    return _NDTRI(_np.asarray(p, dtype=float)).astype(float)",
    "",
  ].join("\n"),
};

/** Runs generated JAX code through run_numpy.py with the stand-in first on sys.path. */
function runWithStandin(code: string, calls: PyCall[]): PyValue[] {
  const dir = tempDir("propriety-jax-standin-");
  for (const [rel, src] of Object.entries(STANDIN)) {
    fs.mkdirSync(path.dirname(path.join(dir, rel)), { recursive: true });
    fs.writeFileSync(path.join(dir, rel), src);
  }
  const file = path.join(dir, "generated_jax.py");
  fs.writeFileSync(file, code);
  // The first call proves the stand-in, not a real JAX, was imported (a real JAX has no jax.STANDIN).
  const probe = `import sys; sys.path.insert(0, ${JSON.stringify(dir)}); import jax; assert jax.STANDIN; sys.argv = ["run_numpy.py"]; exec(open(${JSON.stringify(path.join(HERE, "run_numpy.py"))}).read())`;
  const r = spawnSync(PYTHON, ["-c", probe], { input: JSON.stringify({ module: file, calls }), encoding: "utf8", maxBuffer: 64 * 1024 * 1024 });
  fs.rmSync(dir, { recursive: true, force: true });
  if (r.status !== 0) throw new Error(`the JAX stand-in run failed: ${r.stderr}`);
  return JSON.parse(r.stdout) as PyValue[];
}

describe("generated JAX arithmetic through a NumPy-backed stand-in for JAX (checks the formulas, not JAX)", () => {
  for (const file of sampleFiles()) {
    const doc = analyseDocument(fs.readFileSync(path.join(SAMPLES_DIR, file), "utf8"));
    for (const input of ["prob", "score"] as const) {
      it(`${file} (${input} input): values match the engine at ${N_POINTS} points per label`, (ctx) => {
        if (!HAS_NUMPY) ctx.skip("python3 cannot import numpy: the JAX stand-in cannot run");
        const r = generate(doc, { target: "jax", input, allowImproper: true, sourceName: file });
        if (!r.ok) {
          expect(r.message.length).toBeGreaterThan(0);
          ctx.skip(`nothing to generate on the ${input} scale: ${r.message}`);
          return;
        }
        const points = input === "prob" ? probabilityPoints(N_POINTS) : scorePoints(N_POINTS);
        const refs = new Map(doc.losses.filter((l) => l.compiled).map((l) => [l, pointReference(l, input, points)]));
        const losses = doc.losses.filter((l) => l.compiled && r.code.includes(`loss \`${l.info.name}\` from`) && refs.get(l));
        if (file !== "mistakes.loss") expect(losses.length).toBeGreaterThanOrEqual(input === "prob" ? 5 : 2);
        const pred = [...points, ...points];
        const labels = [...points.map(() => 1), ...points.map(() => 0)];
        const calls: PyCall[] = losses.map((l) => ({ fn: sanitiseName(l.info.name, "python"), args: [pred, labels], kwargs: { reduction: "none" } }));
        // One reduction with weights, to run the module's _reduce as well.
        calls.push({ fn: sanitiseName(losses[0]!.info.name, "python"), args: [pred, labels], kwargs: { weight: pred.map(() => 2), reduction: "sum" } });
        const res = runWithStandin(r.code, calls);
        const n = points.length;
        losses.forEach((l, i) => {
          const ref = refs.get(l)!;
          const vals = decode(res[i]!) as number[];
          const bad = points.flatMap((x, j) => {
            const out: string[] = [];
            if (!nearlyEqual(vals[j]!, ref.l1(x), TOL.valueRel, TOL.valueAbs)) out.push(`y=1 at ${x}: ${vals[j]} vs ${ref.l1(x)}`);
            if (!nearlyEqual(vals[n + j]!, ref.l0(x), TOL.valueRel, TOL.valueAbs)) out.push(`y=0 at ${x}: ${vals[n + j]} vs ${ref.l0(x)}`);
            return out;
          });
          expect(bad.slice(0, 5), l.info.name).toEqual([]);
        });
        const first = decode(res[0]!) as number[];
        const sum = decode(res[losses.length]!) as number;
        const want = 2 * first.reduce((s, v) => s + v, 0);
        // 2,400 terms in float64: rounding ≤ 2400 · 1.1e-16 relative to the sum of magnitudes.
        expect(Math.abs(sum - want) <= 1e-12 * 2 * first.reduce((s, v) => s + Math.abs(v), 0)).toBe(true);
      });
    }
  }

  it("the stand-in's special functions agree with closed values (so a failure above is about the generated formulas)", (ctx) => {
    if (!HAS_NUMPY) ctx.skip("python3 cannot import numpy: the JAX stand-in cannot run");
    const code = [
      "import jax",
      "import jax.numpy as jnp",
      "import jax.scipy.special",
      "def probe(pred, target, weight=None, reduction=\"none\"):",
      "    x = jnp.asarray(pred)",
      "    return jnp.concatenate([jax.nn.sigmoid(x), jax.nn.softplus(x), jax.scipy.special.erf(x), jax.scipy.special.ndtr(x), jax.scipy.special.ndtri(jax.scipy.special.ndtr(x))])",
      "",
    ].join("\n");
    const xs = [-800, -3, 0, 0.5, 3, 800];
    const out = decode(runWithStandin(code, [{ fn: "probe", args: [xs, xs] }])[0]!) as number[];
    const k = xs.length;
    // sigmoid(0) = 1/2, softplus(0) = ln 2, erf(0) = 0, Φ(0) = 1/2; sigmoid and softplus finite at ±800.
    expect(out[2]).toBe(0.5);
    expect(nearlyEqual(out[k + 2]!, Math.LN2, 1e-15, 0)).toBe(true);
    expect(out[2 * k + 2]).toBe(0);
    expect(out[3 * k + 2]).toBe(0.5);
    expect([out[0], out[5], out[k], out[k + 5]]).toEqual([0, 1, 0, 800]);
    // erf(0.5) = 0.5204998778130465, Φ(3) = 0.9986501019683699 (from memory; both as Python's math module gives them).
    expect(nearlyEqual(out[2 * k + 3]!, 0.5204998778130465, 1e-15, 0)).toBe(true);
    expect(nearlyEqual(out[3 * k + 4]!, 0.9986501019683699, 1e-15, 0)).toBe(true);
    // ndtri inverts ndtr where Φ is not saturated.
    for (const j of [1, 3, 4]) expect(nearlyEqual(out[4 * k + j]!, xs[j]!, 1e-12, 1e-12)).toBe(true);
  });
});

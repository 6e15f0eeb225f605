/**
 * Bad input for the generators: loss names that are Python or TypeScript keywords, built-ins, the array
 * libraries' module names or the generated module's own helpers, and a source file name carrying line
 * terminators. The generated modules must parse, define one distinct function per loss, and keep the
 * helpers they rely on intact (each loss is executed and compared with its closed form).
 */
import { spawnSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { generate } from "../../server/src/codegen/index.js";
import { commentSafe } from "../../server/src/codegen/names.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import { decode, loadTs, PYTHON, pythonHas, runNumpy } from "./support.js";

const HAS_NUMPY = pythonHas("numpy");

/** Names that collide with keywords, built-ins, library modules or the generated module's helpers. */
const BAD = ["lambda", "import", "np", "torch", "__import__", "Math", "_reduce", "_normcdf", "check_lengths", "scale_grad", "a", "a_grad", "aGrad"];

/**
 * Loss k is the log loss scaled by k + 1, so every function computes a distinct value: at q, y = 1 it is
 * −(k + 1)·ln q (the log loss, Good 1952, "Rational decisions", JRSS B 14).
 */
const TEXT = BAD.map((n, k) => `loss ${n} {\n  l1(q) = -${k + 1} * ln(q)\n  l0(q) = -${k + 1} * ln(1 - q)\n}\n`).join("");

describe("loss names that collide with keywords, built-ins and helpers", () => {
  // Names are what is tested here, not the engine: compile only.
  const doc = analyseDocument(TEXT, { skipAnalysis: true });

  it("the .loss file itself is accepted (every name is a loss)", () => {
    expect(doc.losses.map((l) => l.info.name)).toEqual(BAD);
    expect(doc.losses.every((l) => !l.info.hasErrors)).toBe(true);
  });

  for (const target of ["numpy", "torch", "jax"] as const) {
    it(`${target}: the module parses and defines ${BAD.length} distinct loss functions, none shadowing a keyword, built-in or helper`, () => {
      const r = generate(doc, { target, sourceName: "bad.loss" });
      expect(r.ok).toBe(true);
      if (!r.ok) return;
      const defs = [...r.code.matchAll(/^def ([A-Za-z_][A-Za-z0-9_]*)\(/gm)].map((m) => m[1]!);
      expect(new Set(defs).size).toBe(defs.length);
      // Each name is defined once (the helpers included), and no loss took a reserved name.
      const losses = [...r.code.matchAll(/^# loss `[^`]+` from .* generated as ([A-Za-z0-9_]+)$/gm)].map((m) => m[1]!);
      expect(losses).toHaveLength(BAD.length);
      for (const bad of ["lambda", "import", "np", "torch", "__import__", "_reduce", "_normcdf"]) expect(losses).not.toContain(bad);
      expect(defs.filter((d) => d === "_reduce")).toHaveLength(1);
      const py = spawnSync(PYTHON, ["-c", "import ast,sys; ast.parse(sys.stdin.read())"], { input: r.code, encoding: "utf8" });
      expect(py.status, py.stderr).toBe(0);
    });
  }

  it.skipIf(!HAS_NUMPY)("numpy: each loss computes its own value and _reduce is the module's helper", () => {
    const r = generate(doc, { target: "numpy", sourceName: "bad.loss" });
    if (!r.ok) throw new Error(r.message);
    const fns = [...r.code.matchAll(/^# loss `([^`]+)` from .* generated as ([A-Za-z0-9_]+)$/gm)].map((m) => ({ loss: m[1]!, fn: m[2]! }));
    expect(fns.map((f) => f.loss)).toEqual(BAD);
    const out = runNumpy(r.code, fns.map((f) => ({ fn: f.fn, args: [[0.3], [1]] })));
    fns.forEach((_, k) => expect(decode(out[k]!)).toBeCloseTo(-(k + 1) * Math.log(0.3), 12));
  });

  it("ts: the module compiles, and each loss computes its own value", async () => {
    const r = generate(doc, { target: "ts", sourceName: "bad.loss" });
    if (!r.ok) throw new Error(r.message);
    const fns = [...r.code.matchAll(/^\/\/ loss `([^`]+)` from .* generated as ([A-Za-z0-9_$]+)$/gm)].map((m) => ({ loss: m[1]!, fn: m[2]! }));
    expect(fns.map((f) => f.loss)).toEqual(BAD);
    expect(new Set(fns.map((f) => f.fn)).size).toBe(BAD.length);
    for (const bad of ["import", "Math", "checkLengths", "scaleGrad"]) expect(fns.map((f) => f.fn)).not.toContain(bad);
    const mod = await loadTs(r.code);
    fns.forEach((f, k) => expect(mod[f.fn]!([0.3], [1])).toBeCloseTo(-(k + 1) * Math.log(0.3), 12));
  });
});

describe("a source file name with line terminators", () => {
  const doc = analyseDocument("loss brier {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n", { skipAnalysis: true });
  const evil = "x.loss\nimport os; os.system('echo pwned')\r\u2028\u2029 // */";

  it("commentSafe escapes every line terminator and control character", () => {
    expect(commentSafe("a\nb\rc\u2028d\u2029e\u000bf\u0085g")).toBe("a\\u000ab\\u000dc\\u2028d\\u2029e\\u000bf\\u0085g");
  });

  for (const target of ["numpy", "torch", "jax", "ts"] as const) {
    it(`${target}: no line of the output starts outside a comment because of the name`, () => {
      const r = generate(doc, { target, sourceName: evil });
      if (!r.ok) throw new Error(r.message);
      expect(r.code).not.toMatch(/[\r\u2028\u2029]/);
      expect(r.code.split("\n").some((l) => l.startsWith("import os"))).toBe(false);
      expect(r.code).toContain("x.loss\\u000aimport os");
    });
  }
});

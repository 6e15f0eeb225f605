/**
 * The target-neutral parts of code generation: closed-form weight integrals, stable rewrites, identifier
 * sanitising, the lowering's refusals and header facts, and `generate`'s error results.
 */
import { describe, expect, it } from "vitest";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import { generate } from "../../server/src/codegen/index.js";
import { CLAMP_EPS, lowerLoss } from "../../server/src/codegen/model.js";
import { sanitiseName, tsFunctionName } from "../../server/src/codegen/names.js";
import { rewriteStable } from "../../server/src/codegen/rewrite.js";
import { integrateWeight } from "../../server/src/semantics/derived/weight-integral.js";
import { compileExpr } from "../../server/src/semantics/compile.js";
import { printExpr } from "../../server/src/semantics/symbolic.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import { parse } from "../../server/src/syntax/parse.js";
import type { Expr } from "../../server/src/syntax/ast.js";
import { decode, loadTs, pythonHas, runNumpy } from "./support.js";

/** Parses `loss t { weight(q) = <w> }` and returns the weight expression. */
function expr(text: string): Expr {
  const doc = analyseDocument(`loss t {\n  l1(q) = ${text}\n  l0(q) = q\n}\n`, { skipAnalysis: true });
  const f = doc.losses[0]!.compiled!.forms.l1!;
  return f.expr;
}
const evalIn = (e: Expr, x: string) => {
  const f = compileExpr(e, { variable: x, paramSlots: new Map(), defs: new Map() });
  return (v: number) => f(v, new Float64Array(0));
};
/** Closed-form polynomials and logarithms evaluated two ways: a few ulps. */
const CLOSED_FORM_TOL = 1e-12;
const GRID = [1e-6, 0.01, 0.1, 0.25, 0.5, 0.7, 0.9, 0.99, 1 - 1e-6];

describe("weight integrals (Reid & Williamson 2010, JMLR 11, Thm 6 eq. (5))", () => {
  it("w = 1/(q(1−q)) gives log loss: l1 = −ln q, l0 = −ln(1−q) (RW10 Table 1)", () => {
    const r = integrateWeight(expr("1 / (q * (1 - q))"));
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    // Evaluated after the stable rewrites, as emitted (ln(1 − q) becomes log1p(−q)).
    const l1 = evalIn(rewriteStable(r.l1, "q"), "q");
    const l0 = evalIn(rewriteStable(r.l0, "q"), "q");
    for (const q of GRID) {
      expect(nearlyEqual(l1(q), -Math.log(q), CLOSED_FORM_TOL, 0)).toBe(true);
      expect(nearlyEqual(l0(q), -Math.log1p(-q), CLOSED_FORM_TOL, 1e-18)).toBe(true);
    }
  });

  it("w = q(1−q), Beta(2,2): l1 = 1/12 − q²/2 + 2q³/3 − q⁴/4, l0 = q³/3 − q⁴/4 (test/reference/proper-losses.md row L10c, computed by RW10 Thm 6 eq. (5))", () => {
    const r = integrateWeight(expr("q^(2 - 1) * (1 - q)^(2 - 1)"));
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    const l1 = evalIn(r.l1, "q");
    const l0 = evalIn(r.l0, "q");
    for (const q of GRID) {
      expect(nearlyEqual(l1(q), 1 / 12 - q ** 2 / 2 + (2 * q ** 3) / 3 - q ** 4 / 4, 1e-9, 1e-15)).toBe(true);
      expect(nearlyEqual(l0(q), q ** 3 / 3 - q ** 4 / 4, CLOSED_FORM_TOL, 1e-18)).toBe(true);
    }
  });

  it("near its vanishing end each partial keeps its relative accuracy (expanded in powers of 1−q and q)", () => {
    const r = integrateWeight(expr("q * (1 - q)"));
    if (!r.ok) throw new Error(r.reason);
    // With u = 1 − q the row-L10c l1 is u³/3 − u⁴/4 (computed by substituting q = 1 − u); the expanded
    // polynomial 1/12 − q²/2 + … would cancel O(1) terms down to ~3e-19 and lose every digit.
    const u = 1e-6;
    const want = u ** 3 / 3 - u ** 4 / 4;
    expect(nearlyEqual(evalIn(r.l1, "q")(1 - u), want, 1e-6, 0)).toBe(true);
  });

  it("w = 2 gives the Brier partials (1−q)², q² (test/reference/proper-losses.md row L3; RW10 Thm 6 eq. (5))", () => {
    const r = integrateWeight(expr("2"));
    if (!r.ok) throw new Error(r.reason);
    for (const q of GRID) {
      expect(nearlyEqual(evalIn(r.l1, "q")(q), (1 - q) ** 2, CLOSED_FORM_TOL, 1e-18)).toBe(true);
      expect(nearlyEqual(evalIn(r.l0, "q")(q), q ** 2, CLOSED_FORM_TOL, 1e-18)).toBe(true);
    }
  });

  it("w = (q(1−q))^(−3/2) with a negative integer power after baking: a rational weight with poles of order 3 (RW10 Table 1 boosting, scale 1)", () => {
    // Only integer exponents are integrated; the boosting weight has a half-integer one and is refused below.
    const r = integrateWeight(expr("1 / (q^2 * (1 - q))"));
    // ∫_0^q c·w = ∫_0^q 1/(c(1−c)) diverges at 0, so the generator must refuse this one.
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.reason).toMatch(/diverges at c = 0/);
  });

  it("refuses fractional powers and transcendental weights with a reason", () => {
    const half = integrateWeight(expr("q^(-0.5) * (1 - q)^(-0.5)"));
    expect(half).toEqual({ ok: false, reason: expect.stringMatching(/not an integer/) });
    const sine = integrateWeight(expr("sin(q) + 1"));
    expect(sine).toEqual({ ok: false, reason: expect.stringMatching(/`sin`/) });
  });

  it("a loss with a non-elementary weight is refused by generate, suggesting `bayes` or the partials", () => {
    const doc = analyseDocument("loss arcsine {\n  weight(q) = (q * (1 - q))^(-0.5)\n}\n");
    const r = generate(doc, { target: "numpy" });
    expect(r.ok).toBe(false);
    if (!r.ok) {
      expect(r.message).toMatch(/no closed-form integral/);
      expect(r.message).toMatch(/bayes\(q\)/);
      expect(r.message).toMatch(/l1\(q\)/);
    }
  });
});

describe("stable rewrites", () => {
  const rw = (text: string, x = "v") => printExpr(rewriteStable(expr(text.replaceAll("V", x)), x));
  it.each([
    ["-ln(sigmoid(v))", "softplus(-v)"],
    ["-ln(1 - sigmoid(v))", "softplus(v)"],
    ["ln(1 + exp(v))", "softplus(v)"],
    ["ln(exp(2*v) + exp(v))", "2 * v + softplus(v - 2 * v)"],
    ["1 / (1 + exp(-v))", "sigmoid(v)"],
    ["exp(v) - 1", "expm1(v)"],
    ["sigmoid(-v) / sigmoid(v)", "exp(-v)"],
    ["ln(exp(v))", "v"],
  ])("%s → %s", (from, to) => {
    // Built in q, since the parse helper writes an l1(q) clause; the variable name is irrelevant to the rules.
    expect(printExpr(rewriteStable(expr(from.replaceAll("v", "q")), "q"))).toBe(to.replaceAll("v", "q"));
    void rw;
  });
  it("ln(1 − q) → log1p(−q) and constants fold", () => {
    expect(printExpr(rewriteStable(expr("-ln(1 - q) + ln(2)"), "q"))).toMatch(/^-log1p\(-q\) \+ 0\.69314718055994\d*$/);
  });
});

describe("identifier sanitising", () => {
  it.each([
    ["lambda", "python", "lambda_"],
    ["class", "python", "class_"],
    ["def", "python", "def_"],
    ["in", "python", "in_"],
    ["sum", "python", "sum_"],
    ["abs", "python", "abs_"],
    ["np", "python", "np_"],
    ["log_loss", "python", "log_loss"],
    ["function", "ts", "function_"],
    ["in", "ts", "in_"],
    ["Math", "ts", "Math_"],
    ["softplus", "ts", "softplus_"],
  ] as const)("%s in %s → %s", (raw, lang, want) => {
    expect(sanitiseName(raw, lang)).toBe(want);
  });
  it("TypeScript names are camelCase, then sanitised", () => {
    expect(tsFunctionName("log_loss")).toBe("logLoss");
    expect(tsFunctionName("focal", "Grad")).toBe("focalGrad");
    expect(tsFunctionName("class")).toBe("class_");
  });

  const BAD_NAMES = `param class = 2 in [1, 3]
param abs = 1
loss lambda {
  l1(q) = class * (1 - q)^2
  l0(q) = class * abs * q^2
}
loss sum {
  l1(q) = (1 - q)^2
  l0(q) = q^2
}
loss Math {
  l1(q) = -ln(q)
  l0(q) = -ln(1 - q)
}
`;

  it("keyword and built-in names generate importable NumPy code that runs", (ctx) => {
    const doc = analyseDocument(BAD_NAMES);
    const r = generate(doc, { target: "numpy", sourceName: "bad-names.loss" });
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.code).toMatch(/^def lambda_\(pred, target, weight=None, reduction="mean"\):/m);
    expect(r.code).toMatch(/^def sum_\(/m);
    expect(r.code).toContain("parameters (baked in): class = 2, abs = 1");
    // Parameters are baked in as numbers, so a parameter named like a keyword or built-in never becomes an identifier.
    expect(r.code).not.toMatch(/\bclass\b\s*\*/);
    if (!pythonHas("numpy")) ctx.skip("python3 cannot import numpy: the module is not executed");
    const [a, b] = runNumpy(r.code, [
      { fn: "lambda_", args: [[0.25], [1]], kwargs: { reduction: "sum" } },
      { fn: "sum_", args: [[0.25], [0]], kwargs: { reduction: "sum" } },
    ]);
    // class · (1 − q)² = 2 · 0.5625 and q² = 0.0625 (by hand).
    expect(decode(a!)).toBe(1.125);
    expect(decode(b!)).toBe(0.0625);
  });

  it("keyword and global names generate TypeScript that loads and runs", async () => {
    const r = generate(analyseDocument(BAD_NAMES), { target: "ts" });
    if (!r.ok) throw new Error(r.message);
    const mod = await loadTs(r.code);
    expect(typeof mod.Math_).toBe("function");
    expect(mod.lambda!([0.25], [1], { reduction: "sum" })).toBe(1.125);
    expect(Math.abs((mod.Math_!([0.5], [1]) as number) - Math.LN2)).toBeLessThan(1e-15);
  });
});

describe("lowering and generate", () => {
  const FLOOD = `param alert = 0.2 in [0.05, 0.5]
loss focal(g = 2 in [0, 5]) {
  l1(q) = -(1 - q)^g * ln(q)
  l0(q) = -q^g * ln(1 - q)
  threshold = alert
  expect improper
}
loss brier {
  l1(q) = (1 - q)^2
  l0(q) = q^2
}
loss hinge {
  margin(v) = max(0, 1 - v)
}
loss focal_unclaimed(g = 2 in [0, 5]) {
  l1(q) = -(1 - q)^g * ln(q)
  l0(q) = -q^g * ln(1 - q)
}
`;
  const doc = analyseDocument(FLOOD);

  it("an improper loss is refused without allowImproper, and generated with a WARNING and a recovery map with it", () => {
    // Without consent: the loss does not say `expect improper` (that claim is consent, as in `check`).
    const refused = generate(doc, { target: "numpy", loss: "focal_unclaimed" });
    expect(refused.ok).toBe(false);
    if (!refused.ok) expect(refused.message).toMatch(/--allow-improper/);
    const r = generate(doc, { target: "numpy", loss: "focal", allowImproper: true });
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.code).toMatch(/^# WARNING: improper loss/m);
    expect(r.code).toMatch(/^def focal_recover_posterior\(q\):/m);
    expect(r.code).toContain("decision threshold: 0.2");
    // The engine's verdict when it decides, else the file's own claim stands in for it.
    expect(r.code).toMatch(/^# verdict: (improper|properness unknown)/m);
    expect(r.fileName).toBe("focal_numpy.py");
  });

  it("without --loss, losses that cannot be generated are listed and the rest emitted", () => {
    const r = generate(doc, { target: "ts", sourceName: "flood.loss" });
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.code).toMatch(/not generated: `focal_unclaimed`: .*improper/);
    // `focal` says `expect improper`: generated, with its WARNING.
    expect(r.code).toMatch(/^\/\/ WARNING: improper loss .*`expect improper`/m);
    expect(r.code).toMatch(/not generated: `hinge`: .*(improper|no implied link)/);
    expect(r.code).toContain("export function brier(");
    expect(r.fileName).toBe("flood_ts.ts");
  });

  it("parameter overrides are baked in, range-checked, and the header's figures are re-analysed at the values baked in", () => {
    const r = lowerLoss(doc.losses[0]!, { allowImproper: true, overrides: { g: 1 } });
    expect(r.ok).toBe(true);
    if (r.ok) {
      expect(r.loss.params).toEqual([{ name: "g", value: 1 }, { name: "alert", value: 0.2 }]);
      expect(r.loss.overridden).toBe(true);
    }
    const out = generate(doc, { target: "jax", loss: "focal", allowImproper: true, overrides: { g: 1 } });
    expect(out.ok && out.code.includes("(re-analysed at the parameter values baked in)")).toBe(true);
    expect(lowerLoss(doc.losses[0]!, { allowImproper: true, overrides: { g: 7 } })).toEqual({ ok: false, message: expect.stringMatching(/outside its declared range/) });
    expect(generate(doc, { target: "jax", overrides: { nope: 1 } })).toEqual({ ok: false, message: expect.stringMatching(/unknown parameter `nope`/) });
  });

  it("clamping only where a singularity remains, with the float32 EPS", () => {
    const brier = lowerLoss(doc.losses[1]!);
    const focal = lowerLoss(doc.losses[0]!, { allowImproper: true });
    expect(brier.ok && brier.loss.clamp).toBe(null);
    expect(focal.ok && focal.loss.clamp).toEqual({ lo: CLAMP_EPS, hi: 1 - CLAMP_EPS });
    expect(CLAMP_EPS).toBe(1e-7);
  });

  it("the hinge margin loss has no invertible link: probability input is refused with the reason", () => {
    const r = generate(doc, { target: "numpy", loss: "hinge", allowImproper: true });
    expect(r).toEqual({ ok: false, message: expect.stringMatching(/no implied link/) });
  });

  it("score input maps through the link, and refuses without one", () => {
    const r = generate(doc, { target: "numpy", loss: "brier", input: "score" });
    expect(r).toEqual({ ok: false, message: expect.stringMatching(/score input needs a link/) });
    const hinge = generate(doc, { target: "numpy", loss: "hinge", input: "score", allowImproper: true });
    expect(hinge.ok && hinge.code.includes("np.maximum(0, 1 - v)")).toBe(true);
  });

  it("score input through the canonical link when asked: w = 1/(q(1−q)) has ψ = logit (RW10 §6.1), so the loss becomes softplus", () => {
    const byWeight = analyseDocument("loss log_by_weight {\n  weight(q) = 1 / (q * (1 - q))\n}\n");
    expect(generate(byWeight, { target: "jax", input: "score" })).toEqual({ ok: false, message: expect.stringMatching(/score input needs a link/) });
    const r = generate(byWeight, { target: "jax", input: "score", link: "canonical" });
    expect(r.ok).toBe(true);
    if (r.ok) {
      expect(r.code).toContain("loss = y * jax.nn.softplus(-v) + (1 - y) * jax.nn.softplus(v)");
      expect(r.code).toMatch(/canonical link/);
    }
  });

  it("unknown targets, unknown losses and files with errors are errors, not crashes", () => {
    expect(generate(doc, { target: "fortran" as never })).toEqual({ ok: false, message: expect.stringMatching(/unknown target 'fortran'/) });
    expect(generate(doc, { target: "ts", loss: "nope" })).toEqual({ ok: false, message: expect.stringMatching(/no loss named `nope`/) });
    const broken = analyseDocument("loss typo {\n  l1(q) = (1 - q)^2 + cc\n  l0(q) = q^2\n}\n");
    expect(generate(broken, { target: "torch" })).toEqual({ ok: false, message: expect.stringMatching(/has errors/) });
    expect(parse("").ast.items.length).toBe(0);
    expect(generate(analyseDocument(""), { target: "ts" })).toEqual({ ok: false, message: expect.stringMatching(/defines no loss/) });
  });
});

/**
 * Numerical stability and API behaviour of the generated NumPy and TypeScript code: extreme scores where
 * the naive formulas overflow, probabilities exactly 0 and 1 (clamped), reductions and sample weights, and
 * the posterior-recovery map of the focal loss.
 */
import * as fs from "node:fs";
import * as path from "node:path";
import { describe, expect, it } from "vitest";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import { generate, type GenerateOptions } from "../../server/src/codegen/index.js";
import { CLAMP_EPS } from "../../server/src/codegen/model.js";
import { normcdf as normcdfRef, sigmoid, softplus } from "../../server/src/semantics/builtins.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import { checkAst, decode, loadTs, pythonHas, runNumpy, SAMPLES_DIR } from "./support.js";

const HAS_NUMPY = pythonHas("numpy");
/** Stable closed forms against stable closed forms: a few ulps. */
const EXTREME_REL = 1e-12;
/** q* in test/reference/proper-losses.md, table F, is given to 10 digits; |dη/dq| ≈ 1–2 there, so η is good to ~2e-10. */
const RECOVERY_TOL = 1e-9;

const docs = new Map<string, ReturnType<typeof analyseDocument> | null>();
function sampleDoc(name: string) {
  if (!docs.has(name)) {
    const file = path.join(SAMPLES_DIR, name);
    docs.set(name, fs.existsSync(file) ? analyseDocument(fs.readFileSync(file, "utf8")) : null);
  }
  return docs.get(name)!;
}

function code(docName: string, options: Omit<GenerateOptions, "sourceName">): string {
  const doc = sampleDoc(docName);
  if (!doc) throw new Error(`sample ${docName} is missing`);
  const r = generate(doc, { ...options, sourceName: docName });
  if (!r.ok) throw new Error(r.message);
  return r.code;
}

/**
 * Extreme scores: for the logistic family −ln σ(v) = softplus(−v) and −ln(1 − σ(v)) = softplus(v) (an
 * exact identity, common practice), with derivatives −σ(−v) and σ(v). At v = ±800 e^{|v|} overflows
 * doubles, so the naive −ln(1/(1 + e^{−v})) gives ∞ or 0 there.
 */
const EXTREME_SCORES = [-800, -50, -30, 30, 50, 800];
const LOGISTIC_FAMILY: { file: string; loss: string; py: string; ts: string }[] = [
  { file: "flood-desk.loss", loss: "log_loss", py: "log_loss", ts: "logLoss" },
  { file: "forms.loss", loss: "logistic", py: "logistic", ts: "logistic" },
  { file: "forms.loss", loss: "logistic_scores", py: "logistic_scores", ts: "logisticScores" },
];

function expectExtremes(values: number[], grads: number[], what: string): void {
  const n = EXTREME_SCORES.length;
  EXTREME_SCORES.forEach((v, i) => {
    const checks: [number, number, string][] = [
      [values[i]!, softplus(-v), "l1"],
      [values[n + i]!, softplus(v), "l0"],
      [grads[i]!, -sigmoid(-v), "dl1"],
      [grads[n + i]!, sigmoid(v), "dl0"],
    ];
    for (const [got, want, part] of checks) {
      expect(Number.isFinite(got), `${what} ${part} at v = ${v} is finite`).toBe(true);
      expect(nearlyEqual(got, want, EXTREME_REL, 0), `${what} ${part} at v = ${v}: ${got} vs ${want}`).toBe(true);
    }
  });
  // The naive formula really does overflow at the ends (so the check above is about stability).
  expect(-Math.log(1 / (1 + Math.exp(800)))).toBe(Infinity);
}

const extremeArgs = () => ({
  pred: [...EXTREME_SCORES, ...EXTREME_SCORES],
  target: [...EXTREME_SCORES.map(() => 1), ...EXTREME_SCORES.map(() => 0)],
});

describe("extreme scores", () => {
  for (const c of LOGISTIC_FAMILY) {
    it(`NumPy ${c.loss} stays finite and exact at |v| up to 800`, (ctx) => {
      if (!HAS_NUMPY) ctx.skip("python3 cannot import numpy: not executed");
      const src = code(c.file, { target: "numpy", input: "score", loss: c.loss });
      const { pred, target } = extremeArgs();
      const [vals, grads] = runNumpy(src, [
        { fn: c.py, args: [pred, target], kwargs: { reduction: "none" } },
        { fn: `${c.py}_grad`, args: [pred, target], kwargs: { reduction: "none" } },
      ]);
      expectExtremes(decode(vals!) as number[], decode(grads!) as number[], `numpy ${c.loss}`);
    });
    it(`TypeScript ${c.loss} stays finite and exact at |v| up to 800`, async () => {
      const mod = await loadTs(code(c.file, { target: "ts", input: "score", loss: c.loss }));
      const { pred, target } = extremeArgs();
      const vals = Array.from(mod[c.ts]!(pred, target, { reduction: "none" }) as Float64Array);
      const grads = Array.from(mod[`${c.ts}Grad`]!(pred, target, { reduction: "none" }) as Float64Array);
      expectExtremes(vals, grads, `ts ${c.loss}`);
    });
  }

  for (const target of ["torch", "jax"] as const) {
    it(`${target}: the logistic family stays finite and exact at |v| up to 800 (values and autograd)`, (ctx) => {
      if (!pythonHas(target)) ctx.skip(`${target} is not importable by python3: not executed`);
      for (const c of LOGISTIC_FAMILY) {
        const { pred, target: labels } = extremeArgs();
        const res = checkAst(target, code(c.file, { target, input: "score", loss: c.loss }), [
          { fn: c.py, args: [pred, labels], kwargs: { reduction: "none" } },
          { fn: c.py, args: [pred, labels], kwargs: { reduction: "none" }, grad: true },
        ]);
        if (res.run?.skipped) ctx.skip(res.run.skipped);
        expectExtremes(decode(res.run!.results![0]!) as number[], decode(res.run!.results![1]!) as number[], `${target} ${c.loss}`);
      }
    });
  }

  it("the exponential margin loss at ±50 equals e^{∓v} (finite, no intermediate overflow)", async () => {
    const mod = await loadTs(code("flood-desk.loss", { target: "ts", input: "score", loss: "boosted_exp" }));
    const vals = Array.from(mod.boostedExp!([-50, 50, -50, 50], [1, 1, 0, 0], { reduction: "none" }) as Float64Array);
    expect(vals.map((x, i) => nearlyEqual(x, Math.exp(i < 2 ? -[-50, 50][i]! : [-50, 50][i - 2]!), EXTREME_REL, 0))).toEqual([true, true, true, true]);
  });
});

describe("probabilities at the ends of [0, 1]", () => {
  it("log loss is clamped to EPS: finite values, zero gradient outside the bounds (NumPy and TypeScript)", async (ctx) => {
    const want = -Math.log(CLAMP_EPS);
    const mod = await loadTs(code("flood-desk.loss", { target: "ts", loss: "log_loss" }));
    const vals = Array.from(mod.logLoss!([0, 1], [1, 0], { reduction: "none" }) as Float64Array);
    const grads = Array.from(mod.logLossGrad!([0, 1, 0.5], [1, 0, 1], { reduction: "none" }) as Float64Array);
    expect(nearlyEqual(vals[0]!, want, 1e-12, 0)).toBe(true);
    // −ln(1 − (1 − EPS)) in doubles: 1 − (1 − 1e-7) is 1e-7 up to the rounding of 1 − 1e-7 (about 1e-16 absolute).
    expect(nearlyEqual(vals[1]!, want, 1e-8, 0)).toBe(true);
    expect(grads).toEqual([0, 0, -2]);
    if (!HAS_NUMPY) ctx.skip("python3 cannot import numpy: the NumPy half is not executed");
    const [v, g] = runNumpy(code("flood-desk.loss", { target: "numpy", loss: "log_loss" }), [
      { fn: "log_loss", args: [[0, 1], [1, 0]], kwargs: { reduction: "none" } },
      { fn: "log_loss_grad", args: [[0, 1, 0.5], [1, 0, 1]], kwargs: { reduction: "none" } },
    ]);
    const nv = decode(v!) as number[];
    expect(nearlyEqual(nv[0]!, want, 1e-12, 0) && nearlyEqual(nv[1]!, want, 1e-8, 0)).toBe(true);
    expect(decode(g!)).toEqual([0, 0, -2]);
  });

  it("the Brier loss needs no clamping and says so", () => {
    const src = code("flood-desk.loss", { target: "numpy", loss: "brier" });
    expect(src).not.toContain("EPS =");
    expect(src).toContain("clamping: none");
  });
});

describe("reductions and weights", () => {
  const pred = [0.1, 0.35, 0.8, 0.6];
  const target = [0, 1, 1, 0];
  const weight = [1, 2, 0.5, 3];
  // Brier per-sample losses (y − q)², computed by hand: 0.01, 0.4225, 0.04, 0.36.
  const per = [0.01, 0.4225, 0.04, 0.36];
  const weighted = per.map((x, i) => x * weight[i]!);
  const sum = weighted.reduce((a, b) => a + b, 0);
  // d/dq (y − q)² = 2(q − y).
  const dper = pred.map((q, i) => 2 * (q - target[i]!));

  it("TypeScript: mean, sum and none agree with the per-sample values; gradients scale with the reduction", async () => {
    const mod = await loadTs(code("flood-desk.loss", { target: "ts", loss: "brier" }));
    const f = mod.brier!;
    const g = mod.brierGrad!;
    expect(nearlyEqual(f(pred, target, { weight, reduction: "sum" }) as number, sum, 1e-14, 0)).toBe(true);
    expect(nearlyEqual(f(pred, target, { weight }) as number, sum / 4, 1e-14, 0)).toBe(true);
    const none = Array.from(f(pred, target, { reduction: "none" }) as Float64Array);
    none.forEach((x, i) => expect(nearlyEqual(x, per[i]!, 1e-14, 1e-16)).toBe(true));
    const gm = Array.from(g(pred, target, { weight }) as Float64Array);
    gm.forEach((x, i) => expect(nearlyEqual(x, (dper[i]! * weight[i]!) / 4, 1e-14, 1e-16)).toBe(true));
    expect(() => f(pred, target.slice(1))).toThrow(/same length/);
    expect(() => f(pred, target, { reduction: "median" as never })).toThrow(/reduction/);
  });

  it("NumPy: the same figures", (ctx) => {
    if (!HAS_NUMPY) ctx.skip("python3 cannot import numpy: not executed");
    const res = runNumpy(code("flood-desk.loss", { target: "numpy", loss: "brier" }), [
      { fn: "brier", args: [pred, target], kwargs: { weight, reduction: "sum" } },
      { fn: "brier", args: [pred, target], kwargs: { weight } },
      { fn: "brier_grad", args: [pred, target], kwargs: { weight } },
      { fn: "brier", args: [pred, target], kwargs: { reduction: "median" } },
    ]);
    expect(nearlyEqual(decode(res[0]!) as number, sum, 1e-14, 0)).toBe(true);
    expect(nearlyEqual(decode(res[1]!) as number, sum / 4, 1e-14, 0)).toBe(true);
    (decode(res[2]!) as number[]).forEach((x, i) => expect(nearlyEqual(x, (dper[i]! * weight[i]!) / 4, 1e-14, 1e-16)).toBe(true));
    expect(res[3]).toMatchObject({ error: expect.stringContaining("reduction") });
  });
});

describe("posterior recovery for the focal loss", () => {
  // test/reference/proper-losses.md, rows F1–F4 (computed by minimising the focal risk at 40 digits; the map is
  // Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Cor. 12, as used by Charoenphakdee et al.
  // 2021, CVPR, for the focal loss): minimisers q* for γ = 2 and γ = 1 and the η they come from.
  const CASES = [
    { g: 2, qStar: 0.5784799858, eta: 0.7 },
    { g: 2, qStar: 0.6942128051, eta: 0.9 },
    { g: 1, qStar: 0.6172303148, eta: 0.7 },
    { g: 1, qStar: 0.7744253518, eta: 0.9 },
  ];
  it("TypeScript focalRecoverPosterior(q*) returns η", async () => {
    for (const c of CASES) {
      const mod = await loadTs(code("flood-desk.loss", { target: "ts", loss: "focal", allowImproper: true, overrides: { g: c.g } }));
      const eta = mod.focalRecoverPosterior!(c.qStar) as number;
      expect(Math.abs(eta - c.eta), `g = ${c.g}, q* = ${c.qStar}`).toBeLessThan(RECOVERY_TOL);
    }
  });
  it("NumPy focal_recover_posterior(q*) returns η", (ctx) => {
    if (!HAS_NUMPY) ctx.skip("python3 cannot import numpy: not executed");
    for (const g of [1, 2]) {
      const cs = CASES.filter((c) => c.g === g);
      const [r] = runNumpy(code("flood-desk.loss", { target: "numpy", loss: "focal", allowImproper: true, overrides: { g } }), [
        { fn: "focal_recover_posterior", args: [cs.map((c) => c.qStar)] },
      ]);
      (decode(r!) as number[]).forEach((eta, i) => expect(Math.abs(eta - cs[i]!.eta)).toBeLessThan(RECOVERY_TOL));
    }
  });
});

describe("special functions (erf, normcdf, probit) in NumPy helpers and TypeScript helpers", () => {
  // Each side has its own erf/normcdf/probit implementation (NumPy: math.erf, math.erfc and
  // statistics.NormalDist; TypeScript: the generated helpers); the engine uses server/src/semantics/builtins.ts.
  // Two double-precision implementations agree to ~1e-15; 1e-12 leaves margin for the Halley-refined probit.
  const SPECIAL_REL = 1e-12;
  const SPECIAL = `loss special {
  l1(q) = erf(1 - q) + probit(1 - q/2)
  l0(q) = erf(q) + normcdf(q)
}
loss probit_link {
  l1(q) = -ln(q)
  l0(q) = -ln(1 - q)
  link(q) = probit(q)
}
`;
  const d = analyseDocument(SPECIAL);
  const spec = d.losses[0]!.compiled!.family.instantiate({});
  const link = d.losses[1]!.compiled!.family.instantiate({});
  const qs = Array.from({ length: 50 }, (_, i) => 0.01 + (0.98 * i) / 49);
  const vs = Array.from({ length: 50 }, (_, i) => -6 + (12 * i) / 49);
  const wantQ = [...qs.map((q) => spec.l1!(q)), ...qs.map((q) => spec.l0!(q))];
  // Score input through the probit link: q = normcdf(v), so l1 = −ln Φ(v) and l0 = −ln Φ(−v) (Φ(−v) = 1 − Φ(v)).
  const wantV = [...vs.map((v) => link.l1!(normcdfRef(v))), ...vs.map((v) => -Math.log(normcdfRef(-v)))];
  const target_ = (n: number) => [...new Array<number>(n).fill(1), ...new Array<number>(n).fill(0)];
  /** The points where the two implementations disagree (empty when they agree). */
  const agree = (got: number[], want: number[]) => got.map((g, i) => [i, g, want[i]!]).filter(([, g, w]) => !nearlyEqual(g!, w!, SPECIAL_REL, 1e-15));

  it("TypeScript", async () => {
    const a = generate(d, { target: "ts", loss: "special", allowImproper: true });
    const b = generate(d, { target: "ts", loss: "probit_link", input: "score", allowImproper: true });
    if (!a.ok || !b.ok) throw new Error(`${a.ok ? "" : a.message} ${b.ok ? "" : b.message}`);
    const ma = await loadTs(a.code);
    const mb = await loadTs(b.code);
    expect(agree(Array.from(ma.special!([...qs, ...qs], target_(qs.length), { reduction: "none" }) as Float64Array), wantQ)).toEqual([]);
    expect(agree(Array.from(mb.probitLink!([...vs, ...vs], target_(vs.length), { reduction: "none" }) as Float64Array), wantV)).toEqual([]);
  });

  for (const target of ["torch", "jax"] as const) {
    it(`${target} (parsed always; executed when importable)`, (ctx) => {
      const a = generate(d, { target, loss: "special", allowImproper: true });
      const b = generate(d, { target, loss: "probit_link", input: "score", allowImproper: true });
      if (!a.ok || !b.ok) throw new Error("generation failed");
      if (target === "jax") expect(a.code).toContain("import jax.scipy.special");
      const ra = checkAst(target, a.code, [{ fn: "special", args: [[...qs, ...qs], target_(qs.length)], kwargs: { reduction: "none" } }]);
      const rb = checkAst(target, b.code, [{ fn: "probit_link", args: [[...vs, ...vs], target_(vs.length)], kwargs: { reduction: "none" } }]);
      expect(ra.problems.concat(rb.problems)).toEqual([]);
      if (ra.run?.skipped) ctx.skip(`${ra.run.skipped}: parsed only`);
      expect(agree(decode(ra.run!.results![0]!) as number[], wantQ)).toEqual([]);
      expect(agree(decode(rb.run!.results![0]!) as number[], wantV)).toEqual([]);
    });
  }

  it("NumPy", (ctx) => {
    if (!HAS_NUMPY) ctx.skip("python3 cannot import numpy: not executed");
    const a = generate(d, { target: "numpy", loss: "special", allowImproper: true });
    const b = generate(d, { target: "numpy", loss: "probit_link", input: "score", allowImproper: true });
    if (!a.ok || !b.ok) throw new Error("generation failed");
    // The helpers are array code (Cody's rational approximations), so no standard-library import and no np.vectorize.
    expect(a.code).toMatch(/^import numpy as np$/m);
    expect(a.code).not.toMatch(/^import (math|statistics)$|np\.vectorize/m);
    const [ra] = runNumpy(a.code, [{ fn: "special", args: [[...qs, ...qs], target_(qs.length)], kwargs: { reduction: "none" } }]);
    const [rb] = runNumpy(b.code, [{ fn: "probit_link", args: [[...vs, ...vs], target_(vs.length)], kwargs: { reduction: "none" } }]);
    expect(agree(decode(ra!) as number[], wantQ)).toEqual([]);
    expect(agree(decode(rb!) as number[], wantV)).toEqual([]);
  });
});

/**
 * Generated PyTorch, executed with PyTorch (Debian's python3-torch; see torch-python.ts for which Python).
 * One Python process per sample file and input scale (test/codegen/run_torch.py) runs every request:
 * - values in float64 at 1,200 points per label against the engine's closures (1e-10 relative), autograd
 *   gradients against the engine's symbolic derivatives, and against central differences of the generated
 *   loss itself (the same plan as the NumPy and TypeScript execution tests, support.ts);
 * - the same in float32, against the engine at the float32-rounded inputs, to a looser stated tolerance;
 * - every reduction ("mean", "sum", "none") with per-sample weights, values and the autograd gradient of "mean";
 * - stability on scores at ±50 and ±800 (finite where the true value is representable, equal to the
 *   generated NumPy module, whose extremes stability.test.ts checks against closed forms, and monotone towards the limits);
 * - torch.jit.script acceptance (the module header says whether it claims TorchScript; 1.13 has no torch.compile);
 * - a training smoke test per loss: a logistic-linear model fitted with the generated loss recovers the true
 *   posterior η(x) (proper losses), or recovers it after the generated posterior-recovery map (improper ones).
 * Outside CI a missing PyTorch skips with a visible message; with CI=true test/tools.test.ts fails instead.
 */
import { spawnSync } from "node:child_process";
import * as fs from "node:fs";
import * as path from "node:path";
import { describe, expect, it } from "vitest";
import { seededRandom } from "../../server/src/analysis/numeric/sampling.js";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import { generate } from "../../server/src/codegen/index.js";
import { lowerLoss, type LoweredLoss } from "../../server/src/codegen/model.js";
import { sanitiseName } from "../../server/src/codegen/names.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import type { DocumentAnalysis, LossReport } from "../../server/src/pipeline/stages.js";
import { logit, sigmoid } from "../../server/src/semantics/builtins.js";
import {
  comparePlan, decode, fdPointsFor, HERE, MARGIN_LINK_K, planArrays, probabilityPoints, referenceFor, sampleFiles, SAMPLES_DIR,
  scorePoints, tempDir, type Executed, type Plan, type PyValue,
} from "./support.js";
import { pointReference } from "./point-reference.js";
import { torchPython } from "./torch-python.js";

const PY = torchPython();
const SKIP = "PyTorch is not importable (apt-get install python3-torch, for /usr/bin/python3): generated PyTorch is not executed";

/** Points per loss and label, as in execute.test.ts: over 1000, across (0, 1) and both decades next to the ends. */
const N_POINTS = 1200;
/** Known kinks and jumps of the samples (finite differences skip their neighbourhood), as in execute.test.ts. */
const KINKS: Record<string, { prob?: number[]; score?: number[] }> = {
  cost_weighted: { prob: [0.3] },
  squared_hinge: { prob: [0, 1], score: [-1, 1] },
};

/**
 * float32 against the engine at the float32-rounded inputs: unit roundoff 6e-8 per operation, a few dozen
 * operations, and the Savage form of `entropy` cancels terms up to |ln EPS| ≈ 16 times its value near the
 * ends; 1e-4 relative with an absolute floor of 1e-5 times max(1, |value|) bounds that with margin.
 */
const F32 = { rel: 1e-4, abs: 1e-5 };
/** Reductions: sums of 2,400 weighted terms in float64, rounding ≤ 2400 · 1.1e-16 ≈ 3e-13 relative to Σ|terms|. */
const SUM_REL = 1e-12;
/**
 * Autograd of the weighted mean vs (per-sample gradient) · w / N: autograd carries w / N into the chain rule, so
 * the O(1) terms that cancel in a derivative (polynomials of the Beta weight, the spherical loss near q = 1) round
 * differently; as in the engine comparisons, 1e-10 relative with an absolute floor of 1e-12 / N.
 */
const GRAD_REL = 1e-10;
/** Scripted vs eager: the same ATen kernels on the same inputs, so the same doubles up to reassociation. */
const JIT_REL = 1e-14;
/** Extreme scores: the generated torch and NumPy modules evaluate the same stable rewrites in doubles. */
const EXTREME_REL = 1e-10;
const EXTREME_SCORES = [-800, -50, 50, 800];
/**
 * Known defect, pinned so its fix is noticed (then delete the entry): every target combines the partial losses as
 * y * l1 + (1 - y) * l0, so where the inactive partial overflows (e^800 of the exponential loss) the value is
 * 0 * inf = NaN instead of e^-800 ≈ 0, and autograd's gradient too. Fixing it needs the inactive branch
 * evaluated at a masked score in the shared Python skeleton (and in NumPy's closed-form gradient and TypeScript).
 */
const KNOWN_NAN: Record<string, [v: number, y: 0 | 1][]> = { boosted_exp: [[800, 1], [-800, 0]] };

/**
 * Training: soft labels y = η(x) (the expected label), so the empirical risk is the expected risk over the
 * labels at each x and has no sampling noise. For a strictly proper loss each term is minimised exactly by
 * q = η(x) (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Sec. 3), and the model contains
 * η(x) = sigmoid(A + B x), so the true parameters are the unique minimiser; what remains is the optimiser's
 * stopping error. L-BFGS (strong-Wolfe line search) ends at gradient norms of 1e-11 … 1e-9 here; with the
 * risk's curvature at the truth of order 1e-3 … 1 (the smallest for the Beta-weight loss, whose weight is
 * small away from its threshold) that leaves errors in η of a few 1e-9 (6e-9 at most when this test was
 * written); 1e-7 keeps a margin of ten and would still catch a loss whose minimiser is off by anything visible.
 */
const TRAIN = { A: -1, B: 2.5, n: 400, seed: 2024, steps: 10, tol: 1e-7, query: [0.1, 0.5, 0.9] };
/**
 * Improper losses: the minimiser q*(η) need not be logit-linear in x, so they are fitted with one
 * indicator feature per distinct x (a saturated logistic-linear model), whose fit at each x is q*(η(x))
 * itself; the recovery map then returns η(x) (RW10 Cor. 12) up to the optimiser's error, as above.
 */
const SATURATED_X = [0.1, 0.3, 0.7, 0.95];

const eta = (x: number) => sigmoid(TRAIN.A + TRAIN.B * x);

interface Case { file: string; input: "prob" | "score"; doc: DocumentAnalysis }

function cases(): Case[] {
  const out: Case[] = [];
  for (const file of sampleFiles()) {
    const doc = analyseDocument(fs.readFileSync(path.join(SAMPLES_DIR, file), "utf8"));
    for (const input of ["prob", "score"] as const) out.push({ file, input, doc });
  }
  return out;
}

/** How a loss is expected to train, from what the generator lowered (verdict and recovery map). */
type TrainKind = "proper" | "recover" | "decisions" | "flat";
function trainKind(l: LoweredLoss): TrainKind {
  if (l.engine.verdict === "strictly-proper") return "proper";
  if (l.engine.verdict === "proper") return "flat";
  return l.recover ? "recover" : "decisions";
}

/** k with inverse link sigmoid(k v) on the score scale, or null (then a linear score is not logistic-linear in η). */
function logitScale(report: LossReport): number | null {
  const k = MARGIN_LINK_K[report.info.name];
  if (k !== undefined) return k;
  const spec = report.compiled!.family.instantiate({});
  if (!spec.link || spec.form === "margin") return null;
  const ks = [0.2, 0.35, 0.7].map((q) => logit(q) / spec.link!(q));
  return ks.every((x) => nearlyEqual(x, ks[0]!, 1e-9, 0)) ? ks[0]! : null;
}

interface LossPlan {
  report: LossReport;
  lowered: LoweredLoss;
  fn: string;
  plan: Plan | null;
  kind: TrainKind;
  /** Inverse link for score-input training: η = sigmoid(k v); null when the score scale is not logit-linear. */
  k: number | null;
}

interface Run {
  code: string;
  plans: LossPlan[];
  claimsScript: boolean;
  results: PyValue[][];
  /** Index of the first op of each group, per loss. */
  index: Map<string, Record<string, number>>;
  weights: number[];
}

type Op = Record<string, unknown>;

const runs = new Map<string, Run | string>();

/** Generates, plans and executes one case (memoised: every test of the case reads the same run). */
function execute(c: Case): Run | string {
  const key = `${c.file}:${c.input}`;
  const have = runs.get(key);
  if (have !== undefined) return have;
  const r = generate(c.doc, { target: "torch", input: c.input, allowImproper: true, sourceName: c.file });
  if (!r.ok) {
    runs.set(key, r.message);
    return r.message;
  }
  const np = generate(c.doc, { target: "numpy", input: c.input, allowImproper: true, sourceName: c.file });
  const plans: LossPlan[] = [];
  for (const report of c.doc.losses) {
    if (!report.compiled || !r.code.includes(`loss \`${report.info.name}\` from`)) continue;
    const lowered = lowerLoss(report, { input: c.input, allowImproper: true });
    if (!lowered.ok) continue;
    // float32-representable points, so the float64 and float32 runs share inputs and engine values.
    const points = (c.input === "prob" ? probabilityPoints(N_POINTS) : scorePoints(N_POINTS)).map(Math.fround);
    const ref = pointReference(report, c.input, points);
    const fn = sanitiseName(report.info.name, "python");
    const plan: Plan | null = ref ? {
      loss: report.info.name, fn, grad: `${fn}_grad`, ref, points,
      fdPoints: fdPointsFor(c.input, KINKS[report.info.name]?.[c.input] ?? []),
    } : null;
    plans.push({ report, lowered: lowered.loss, fn, plan, kind: trainKind(lowered.loss), k: c.input === "score" ? logitScale(report) : 1 });
  }
  const rnd = seededRandom(99);
  const weights = Array.from({ length: 2 * N_POINTS }, () => 0.5 + 1.5 * rnd());
  const ops: Op[] = [];
  const index = new Map<string, Record<string, number>>();
  const at = (loss: string, what: string) => {
    const rec = index.get(loss) ?? {};
    rec[what] = ops.length;
    index.set(loss, rec);
  };
  const xs = (() => {
    const rx = seededRandom(TRAIN.seed);
    return Array.from({ length: TRAIN.n }, () => rx());
  })();
  const claimsScript = /torch\.jit\.script/.test(r.code.split("\n").filter((l) => l.startsWith("#")).join("\n"));
  for (const p of plans) {
    const none = { reduction: "none" };
    if (p.plan) {
      const a = planArrays(p.plan);
      at(p.fn, "f64");
      ops.push({ op: "call", fn: p.fn, args: [a.pred, a.target], kwargs: none });
      ops.push({ op: "call", fn: p.fn, args: [a.gradPred, a.gradTarget], kwargs: none, grad: true });
      ops.push({ op: "call", fn: p.fn, args: [a.fdPred, a.fdTarget], kwargs: none });
      at(p.fn, "f32");
      const f32 = a.gradPred.map((x) => Math.fround(x));
      ops.push({ op: "call", fn: p.fn, args: [f32, a.gradTarget], kwargs: none, grad: true, dtype: "float32" });
      at(p.fn, "reduce");
      for (const reduction of ["none", "mean", "sum"]) ops.push({ op: "call", fn: p.fn, args: [a.pred, a.target], kwargs: { weight: weights, reduction }, grad: reduction === "mean" });
      ops.push({ op: "call", fn: p.fn, args: [a.pred, a.target], kwargs: {} });
    }
    at(p.fn, "script");
    ops.push({ op: "script", fn: p.fn });
    if (p.plan) {
      const a = planArrays(p.plan);
      ops.push({ op: "call", fn: p.fn, args: [a.pred, a.target], kwargs: { weight: weights, reduction: "none" }, jit: true });
    }
    if (c.input === "score" && np.ok) {
      at(p.fn, "extreme");
      const pred = [...EXTREME_SCORES, ...EXTREME_SCORES];
      const target = [...EXTREME_SCORES.map(() => 1), ...EXTREME_SCORES.map(() => 0)];
      ops.push({ op: "call", fn: p.fn, args: [pred, target], kwargs: none, grad: true });
      ops.push({ op: "call", fn: p.fn, args: [pred, target], kwargs: none, lib: "numpy" });
      ops.push({ op: "call", fn: `${p.fn}_grad`, args: [pred, target], kwargs: none, lib: "numpy" });
    }
    if (c.input === "prob" && p.lowered.clamp) {
      at(p.fn, "ends");
      ops.push({ op: "call", fn: p.fn, args: [[0, 1, 0, 1], [1, 1, 0, 0]], kwargs: none, grad: true });
    }
    if (p.k !== null) {
      at(p.fn, "train");
      const saturated = p.kind !== "proper";
      const rows = saturated ? xs.map((_, i) => SATURATED_X.map((_, j) => (j === i % SATURATED_X.length ? 1 : 0))) : xs.map((x) => [1, x]);
      const rowX = saturated ? xs.map((_, i) => SATURATED_X[i % SATURATED_X.length]!) : xs;
      const query = saturated ? SATURATED_X.map((_, j) => SATURATED_X.map((_, i) => (i === j ? 1 : 0))) : TRAIN.query.map((x) => [1, x]);
      ops.push({
        op: "train", fn: p.fn, input: c.input, features: rows, labels: rowX.map(eta), query, steps: TRAIN.steps,
        recover: p.kind === "recover" ? `${p.fn}_recover_posterior` : null,
      });
    }
  }
  const dir = tempDir("propriety-torch-");
  const module = path.join(dir, "generated_torch.py");
  const numpyModule = path.join(dir, "generated_numpy.py");
  fs.writeFileSync(module, r.code);
  if (np.ok) fs.writeFileSync(numpyModule, np.code);
  const out = spawnSync(PY!, [path.join(HERE, "run_torch.py")], {
    input: JSON.stringify({ module, numpy_module: np.ok ? numpyModule : null, ops }), encoding: "utf8", maxBuffer: 256 * 1024 * 1024,
  });
  fs.rmSync(dir, { recursive: true, force: true });
  if (out.status !== 0) throw new Error(`run_torch.py failed: ${out.stderr}`);
  const raw = JSON.parse(out.stdout) as Record<string, PyValue>[];
  const run: Run = { code: r.code, plans, claimsScript, results: raw as unknown as PyValue[][], index, weights };
  runs.set(key, run);
  return run;
}

/** One op's result, failing the test on a Python error. */
function res(run: Run, i: number): Record<string, PyValue> {
  const r = run.results[i] as unknown as Record<string, PyValue>;
  if ("error" in r) throw new Error(`python error in op ${i}: ${String(r.error)}`);
  return r;
}
const nums = (v: PyValue | undefined) => decode(v!) as number[];
const num = (v: PyValue | undefined) => decode(v!) as number;

function ready(c: Case, ctx: { skip: (m: string) => void }): Run {
  if (!PY) ctx.skip(SKIP);
  const run = execute(c);
  if (typeof run === "string") {
    // A sample file may have nothing to generate on a scale; that must be a stated reason.
    expect(run.length).toBeGreaterThan(0);
    ctx.skip(`nothing to generate on the ${c.input} scale: ${run}`);
  }
  return run as Run;
}

describe("generated PyTorch, executed with PyTorch", () => {
  for (const c of cases()) {
    const name = `${c.file} (${c.input} input)`;

    it(`${name}: float64 values and autograd gradients match the engine`, (ctx) => {
      const run = ready(c, ctx);
      const planned = run.plans.filter((p) => p.plan);
      if (c.file !== "mistakes.loss") expect(planned.length).toBeGreaterThanOrEqual(c.input === "prob" ? 5 : 2);
      for (const p of planned) {
        const i = run.index.get(p.fn)!.f64!;
        const out: Executed = { values: nums(res(run, i).value), grads: nums(res(run, i + 1).grad), fdValues: nums(res(run, i + 2).value) };
        const { failures, compared } = comparePlan(p.plan!, out, (a, b, rel, abs) => nearlyEqual(a, b, rel, abs));
        expect(failures, p.fn).toEqual([]);
        expect(compared).toBeGreaterThanOrEqual(2 * N_POINTS);
      }
    });

    it(`${name}: float32 input stays float32 and matches the engine at the rounded inputs to ${F32.rel} relative`, (ctx) => {
      const run = ready(c, ctx);
      for (const p of run.plans.filter((q) => q.plan)) {
        const i = run.index.get(p.fn)!.f32!;
        const r = res(run, i);
        const a = planArrays(p.plan!);
        const vals = nums(r.value);
        const grads = nums(r.grad);
        const bad: string[] = [];
        a.gradPred.forEach((x0, j) => {
          const x = Math.fround(x0);
          const y = a.gradTarget[j]!;
          const want = y === 1 ? p.plan!.ref.l1(x) : p.plan!.ref.l0(x);
          // float32 holds values up to 3.4e38; the checked values are all far inside that range.
          if (!nearlyEqual(vals[j]!, want, F32.rel, F32.abs * Math.max(1, Math.abs(want)))) bad.push(`value y=${y} at ${x}: ${vals[j]} vs ${want}`);
          expect(vals[j]).toBe(Math.fround(vals[j]!));
          const dref = y === 1 ? p.plan!.ref.dl1 : p.plan!.ref.dl0;
          const dwant = dref?.(x);
          if (dwant !== undefined && Number.isFinite(dwant) && !(KINKS[p.fn]?.[c.input] ?? []).some((k) => Math.abs(x - k) < 1e-3)) {
            if (!nearlyEqual(grads[j]!, dwant, F32.rel, F32.abs * Math.max(1, Math.abs(dwant)))) bad.push(`gradient y=${y} at ${x}: ${grads[j]} vs ${dwant}`);
          }
        });
        expect(bad.slice(0, 5), p.fn).toEqual([]);
      }
    });

    it(`${name}: every reduction with per-sample weights (values and the autograd gradient of "mean")`, (ctx) => {
      const run = ready(c, ctx);
      for (const p of run.plans.filter((q) => q.plan)) {
        const i = run.index.get(p.fn)!.reduce!;
        const base = nums(res(run, run.index.get(p.fn)!.f64!).value);
        const grad = nums(res(run, run.index.get(p.fn)!.f64! + 1).grad).slice(0, base.length);
        const w = run.weights;
        const weighted = base.map((v, j) => v * w[j]!);
        const none = nums(res(run, i).value);
        expect(none.every((v, j) => nearlyEqual(v, weighted[j]!, 1e-15, 0)), `${p.fn} none`).toBe(true);
        const sum = weighted.reduce((s, v) => s + v, 0);
        const scale = weighted.reduce((s, v) => s + Math.abs(v), 0);
        const mean = num(res(run, i + 1).value);
        expect(Math.abs(mean - sum / base.length) <= SUM_REL * scale / base.length, `${p.fn} mean ${mean} vs ${sum / base.length}`).toBe(true);
        const gMean = nums(res(run, i + 1).grad);
        const badG = gMean.flatMap((g, j) => (nearlyEqual(g, (grad[j]! * w[j]!) / base.length, GRAD_REL, 1e-12 / base.length) ? [] : [`at ${p.plan!.points[j % N_POINTS]}: ${g} vs ${(grad[j]! * w[j]!) / base.length}`]));
        expect(badG.slice(0, 3), `${p.fn} gradient of the weighted mean`).toEqual([]);
        const total = num(res(run, i + 2).value);
        expect(Math.abs(total - sum) <= SUM_REL * scale, `${p.fn} sum ${total} vs ${sum}`).toBe(true);
        // The defaults: no weights, reduction "mean".
        const plain = num(res(run, i + 3).value);
        const plainSum = base.reduce((s, v) => s + v, 0);
        expect(Math.abs(plain - plainSum / base.length) <= SUM_REL * base.reduce((s, v) => s + Math.abs(v), 0) / base.length, `${p.fn} default reduction`).toBe(true);
      }
    });

    it(`${name}: torch.jit.script accepts every loss when the module says so, and the scripted loss equals the eager one`, (ctx) => {
      const run = ready(c, ctx);
      expect(run.claimsScript, "the module header states TorchScript support").toBe(true);
      for (const p of run.plans) {
        const i = run.index.get(p.fn)!.script!;
        const r = run.results[i] as unknown as { ok: boolean; error?: string };
        expect(r.ok, `${p.fn}: ${r.error ?? ""}`).toBe(true);
        if (!p.plan) continue;
        const scripted = nums(res(run, i + 1).value);
        const eager = nums(res(run, run.index.get(p.fn)!.reduce!).value);
        expect(scripted.every((v, j) => nearlyEqual(v, eager[j]!, JIT_REL, 0)), p.fn).toBe(true);
      }
    });

    if (c.input === "score") {
      it(`${name}: scores at ±50 and ±800 give finite values and gradients (where representable) equal to the NumPy module, monotone towards the limits`, (ctx) => {
        const run = ready(c, ctx);
        const n = EXTREME_SCORES.length;
        for (const p of run.plans) {
          const i = run.index.get(p.fn)?.extreme;
          if (i === undefined) continue;
          const t = res(run, i);
          const vals = nums(t.value);
          const grads = nums(t.grad);
          const npVals = nums(res(run, i + 1).value);
          const npGrads = nums(res(run, i + 2).value);
          const sref = referenceFor(p.report, "score");
          vals.forEach((v, j) => {
            const x = EXTREME_SCORES[j % n]!;
            const where = `${p.fn} at v = ${x}, y = ${j < n ? 1 : 0}`;
            if ((KNOWN_NAN[p.fn] ?? []).some(([kv, ky]) => kv === x && ky === (j < n ? 1 : 0))) {
              expect(Number.isNaN(v) && Number.isNaN(npVals[j]!), `${where}: the known 0 * inf defect is gone (${v}); delete its KNOWN_NAN entry`).toBe(true);
              return;
            }
            // The true value overflows a double only when the engine's own closure does too (e.g. e^800).
            const engine = j < n ? sref?.l1(x) : sref?.l0(x);
            if (!Number.isFinite(v)) expect(engine === Infinity && npVals[j] === Infinity, `${where}: ${v}`).toBe(true);
            else expect(nearlyEqual(v, npVals[j]!, EXTREME_REL, 1e-300), `${where}: ${v} vs NumPy ${npVals[j]}`).toBe(true);
            if (Number.isFinite(v)) {
              expect(Number.isFinite(grads[j]!), `${where}: gradient ${grads[j]}`).toBe(true);
              expect(nearlyEqual(grads[j]!, npGrads[j]!, EXTREME_REL, 1e-300), `${where}: gradient ${grads[j]} vs NumPy ${npGrads[j]}`).toBe(true);
            }
          });
          // Towards +∞ the y = 1 loss does not grow and the y = 0 loss does not shrink (and the mirror at −∞).
          if (KNOWN_NAN[p.fn]) continue;
          expect(vals[3]! <= vals[2]! && vals[n + 3]! >= vals[n + 2]!, `${p.fn} monotone at +∞`).toBe(true);
          expect(vals[0]! >= vals[1]! && vals[n]! <= vals[n + 1]!, `${p.fn} monotone at −∞`).toBe(true);
        }
      });
    } else {
      it(`${name}: probabilities exactly 0 and 1 give finite values and gradients where the loss is clamped`, (ctx) => {
        const run = ready(c, ctx);
        for (const p of run.plans) {
          const i = run.index.get(p.fn)?.ends;
          if (i === undefined) continue;
          const r = res(run, i);
          expect(nums(r.value).every(Number.isFinite), `${p.fn} values ${JSON.stringify(r.value)}`).toBe(true);
          expect(nums(r.grad).every(Number.isFinite), `${p.fn} gradients ${JSON.stringify(r.grad)}`).toBe(true);
        }
      });
    }

    it(`${name}: ${TRAIN.steps} L-BFGS steps of a logistic-linear model recover the true posterior (after the recovery map when improper)`, (ctx) => {
      const run = ready(c, ctx);
      let trained = 0;
      for (const p of run.plans) {
        const i = run.index.get(p.fn)?.train;
        if (i === undefined) continue;
        const r = res(run, i) as unknown as { constant: boolean; pred: PyValue[]; scores: PyValue[]; recovered?: PyValue[]; gradNorm: number };
        if (p.kind === "flat") {
          // Proper but not strictly (piecewise constant, e.g. cost-weighted 0-1): autograd has nothing to follow.
          expect(r.constant, `${p.fn}: a piecewise-constant loss does not depend on the parameters`).toBe(true);
          continue;
        }
        expect(r.constant, p.fn).toBe(false);
        trained++;
        const scores = nums(r.scores);
        const xs = p.kind === "proper" ? TRAIN.query : SATURATED_X;
        const fitted = c.input === "prob" ? nums(r.pred) : scores.map((v) => sigmoid(p.k! * v));
        if (p.kind === "proper") {
          xs.forEach((x, j) => expect(Math.abs(fitted[j]! - eta(x)), `${p.fn} at x = ${x}: fitted ${fitted[j]}, true ${eta(x)}`).toBeLessThanOrEqual(TRAIN.tol));
        } else if (p.kind === "recover") {
          const rec = nums(r.recovered);
          xs.forEach((x, j) => {
            // The fit is pulled away from η (the loss is improper) and the map brings it back.
            expect(Math.abs(fitted[j]! - eta(x)), `${p.fn} at x = ${x}: the raw fit ${fitted[j]} differs from η`).toBeGreaterThan(100 * TRAIN.tol);
            expect(Math.abs(rec[j]! - eta(x)), `${p.fn} at x = ${x}: recovered ${rec[j]}, true ${eta(x)}`).toBeLessThanOrEqual(TRAIN.tol);
          });
        } else {
          // Improper without a recovery map (e.g. the hinge loss on probabilities): only the decisions are right.
          xs.forEach((x, j) => expect(fitted[j]! > 0.5, `${p.fn} at x = ${x}: decision`).toBe(eta(x) > 0.5));
        }
      }
      if (c.input === "prob" && c.file !== "mistakes.loss") expect(trained).toBeGreaterThanOrEqual(5);
    });
  }
});

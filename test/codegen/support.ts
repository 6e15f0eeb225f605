/**
 * Shared machinery for the code-generation tests: loading samples, running generated NumPy through
 * python3, loading generated TypeScript through esbuild, and the engine-side reference values the
 * generated code is compared with.
 */
import { spawnSync } from "node:child_process";
import * as fs from "node:fs";
import * as os from "node:os";
import * as path from "node:path";
import { pathToFileURL } from "node:url";
import { transform } from "esbuild";
import { integrate } from "../../server/src/analysis/numeric/quadrature.js";
import { seededRandom } from "../../server/src/analysis/numeric/sampling.js";
import type { LossSpec } from "../../server/src/loss-model.js";
import { logit, sigmoid } from "../../server/src/semantics/builtins.js";
import type { LossReport } from "../../server/src/pipeline/stages.js";

export const ROOT = path.resolve(__dirname, "../..");
export const SAMPLES_DIR = path.join(ROOT, "samples");
export const HERE = __dirname;
/**
 * The Python used to execute generated code: `python3` on PATH, or PROPRIETY_TEST_PYTHON (e.g. a virtual
 * environment that has torch and jax, so those targets are executed instead of only parsed).
 */
export const PYTHON = process.env.PROPRIETY_TEST_PYTHON ?? "python3";

/** The sample files that exist right now (the golden test iterates over them). */
export function sampleFiles(): string[] {
  if (!fs.existsSync(SAMPLES_DIR)) return [];
  return fs.readdirSync(SAMPLES_DIR).filter((f) => f.endsWith(".loss")).sort();
}

export function tempDir(prefix: string): string {
  return fs.mkdtempSync(path.join(os.tmpdir(), prefix));
}

const importable = new Map<string, boolean>();

/** True when `python3 -c "import <module>"` succeeds (PYTHON, to be exact). */
export function pythonHas(module: string): boolean {
  // Importing torch or jax takes seconds; ask once per module and test file.
  let has = importable.get(module);
  if (has === undefined) {
    has = spawnSync(PYTHON, ["-c", `import ${module}`], { encoding: "utf8" }).status === 0;
    importable.set(module, has);
  }
  return has;
}

export type PyValue = number | string | PyValue[] | { error: string };

/** Decodes the driver's JSON numbers ("inf", "-inf", "nan" are strings there). */
export function decode(x: PyValue): number | number[] {
  if (Array.isArray(x)) return x.map((v) => decode(v) as number);
  if (typeof x === "number") return x;
  if (typeof x === "string") return x === "inf" ? Infinity : x === "-inf" ? -Infinity : NaN;
  throw new Error(`python error: ${x.error}`);
}

export interface PyCall {
  fn: string;
  args: unknown[];
  kwargs?: Record<string, unknown>;
  /** check_ast.py only: return the autograd gradient of the summed losses with respect to pred. */
  grad?: boolean;
}

/** Runs generated NumPy code through test/codegen/run_numpy.py; one python process for all calls. */
export function runNumpy(code: string, calls: PyCall[]): PyValue[] {
  const dir = tempDir("propriety-np-");
  const file = path.join(dir, "generated.py");
  fs.writeFileSync(file, code);
  const r = spawnSync(PYTHON, [path.join(HERE, "run_numpy.py")], { input: JSON.stringify({ module: file, calls }), encoding: "utf8", maxBuffer: 64 * 1024 * 1024 });
  fs.rmSync(dir, { recursive: true, force: true });
  if (r.status !== 0) throw new Error(`run_numpy.py failed: ${r.stderr}`);
  return JSON.parse(r.stdout) as PyValue[];
}

/** Runs check_ast.py on generated torch/jax code; with calls, also executes them when the library imports. */
export function checkAst(target: "torch" | "jax", code: string, calls?: PyCall[]): {
  ok: boolean;
  problems: string[];
  functions: Record<string, { args: string[]; defaults: unknown[] }>;
  run?: { skipped?: string; results?: PyValue[] };
} {
  const dir = tempDir("propriety-ast-");
  const file = path.join(dir, "generated.py");
  fs.writeFileSync(file, code);
  const args = [path.join(HERE, "check_ast.py"), target, file, ...(calls ? ["--run"] : [])];
  const r = spawnSync(PYTHON, args, { input: calls ? JSON.stringify(calls) : "", encoding: "utf8", maxBuffer: 64 * 1024 * 1024 });
  fs.rmSync(dir, { recursive: true, force: true });
  if (r.status !== 0) throw new Error(`check_ast.py failed: ${r.stderr}`);
  return JSON.parse(r.stdout);
}

/** Transpiles generated TypeScript with esbuild's transform API and imports it from a temporary .mjs file. */
export async function loadTs(code: string): Promise<Record<string, (...args: unknown[]) => unknown>> {
  const js = await transform(code, { loader: "ts", format: "esm", target: "node20" });
  const dir = tempDir("propriety-ts-");
  const file = path.join(dir, "generated.mjs");
  fs.writeFileSync(file, js.code);
  try {
    return (await import(pathToFileURL(file).href)) as Record<string, (...args: unknown[]) => unknown>;
  } finally {
    fs.rmSync(dir, { recursive: true, force: true });
  }
}

/**
 * Probabilities for comparisons: seeded uniform points plus points crowded towards both ends
 * (10^-6 … 10^-1 and their mirrors), all inside the clamping bounds.
 */
export function probabilityPoints(n: number, seed = 7): number[] {
  const rnd = seededRandom(seed);
  const out: number[] = [];
  for (let i = 0; i < n; i++) {
    const kind = i % 3;
    const u = rnd();
    if (kind === 0) out.push(1e-6 + (1 - 2e-6) * u);
    else if (kind === 1) out.push(Math.pow(10, -6 + 5 * u));
    else out.push(1 - Math.pow(10, -6 + 5 * u));
  }
  return out;
}

/** Seeded scores in [−12, 12] (where the engine's naive closures are still accurate; ±50 is tested separately). */
export function scorePoints(n: number, seed = 11): number[] {
  const rnd = seededRandom(seed);
  const out: number[] = [];
  for (let i = 0; i < n; i++) out.push(-12 + 24 * rnd());
  return out;
}

/** Partial losses (and derivatives where the engine has them) on the input scale, from the engine's closures. */
export interface Reference {
  l1: (x: number) => number;
  l0: (x: number) => number;
  dl1: ((x: number) => number) | null;
  dl0: ((x: number) => number) | null;
}

/**
 * Implied links of the margin samples, ψ(q) = logit(q)/k: k = 1 for the logistic loss and k = 2 (half
 * logit) for the exponential loss (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Cor. 14).
 */
export const MARGIN_LINK_K: Record<string, number> = { logistic: 1, boosted_exp: 2 };

/**
 * Inverse canonical links of the samples declaring `link = canonical`: for the boosting loss
 * √((1−q)/q), √(q/(1−q)) the canonical link is ψ(q) = (2q−1)/√(q(1−q)) (Agarwal 2014, "Surrogate Regret
 * Bounds for Bipartite Ranking via Strongly Proper Losses", JMLR 15, Table 1), so q = ½(1 + v/√(v²+4)) (computed by solving ψ(q) = v).
 */
export const CANONICAL_INVERSE: Record<string, (v: number) => number> = {
  boosting_canonical: (v) => 0.5 * (1 + v / Math.sqrt(v * v + 4)),
};

/** Quadrature tolerances for the weight-form reference (tight, so the reference is good to ~1e-13). */
const QUAD_ABS = 1e-15;
const QUAD_REL = 1e-14;

/** The engine's values for a loss on the given input scale (null when the test has no independent reference). */
export function referenceFor(report: LossReport, input: "prob" | "score"): Reference | null {
  const spec: LossSpec = report.compiled!.family.instantiate({});
  const form = spec.form;
  if (input === "prob") {
    switch (form) {
      case "partials":
        return { l1: spec.l1!, l0: spec.l0!, dl1: spec.dl1 ?? null, dl0: spec.dl0 ?? null };
      case "score-partials": {
        const link = spec.link!;
        const dlink = spec.dlink!;
        return {
          l1: (q) => spec.l1!(link(q)), l0: (q) => spec.l0!(link(q)),
          dl1: (q) => spec.dl1!(link(q)) * dlink(q), dl0: (q) => spec.dl0!(link(q)) * dlink(q),
        };
      }
      case "bayes": {
        // Savage form (Reid & Williamson 2010, Thm 4): l1 = H + (1−q)H', l0 = H − qH'; l1' = (1−q)H'', l0' = −qH''.
        const H = spec.bayes!;
        const dH = spec.dbayes!;
        const d2H = spec.d2bayes!;
        return { l1: (q) => H(q) + (1 - q) * dH(q), l0: (q) => H(q) - q * dH(q), dl1: (q) => (1 - q) * d2H(q), dl0: (q) => -q * d2H(q) };
      }
      case "weight": {
        // Integral form (Reid & Williamson 2010, Thm 6 eq. (5)), by adaptive quadrature of the engine's weight.
        const w = spec.weight!;
        return {
          l1: (q) => integrate((c) => (1 - c) * w(c), q, 1, QUAD_ABS, QUAD_REL).value,
          l0: (q) => integrate((c) => c * w(c), 0, q, QUAD_ABS, QUAD_REL).value,
          dl1: (q) => -(1 - q) * w(q),
          dl0: (q) => q * w(q),
        };
      }
      case "margin": {
        const k = MARGIN_LINK_K[report.info.name];
        if (k === undefined) return null;
        const phi = spec.margin!;
        const dphi = spec.dmargin!;
        const link = (q: number) => logit(q) / k;
        const dlink = (q: number) => 1 / (k * q * (1 - q));
        return { l1: (q) => phi(link(q)), l0: (q) => phi(-link(q)), dl1: (q) => dphi(link(q)) * dlink(q), dl0: (q) => -dphi(-link(q)) * dlink(q) };
      }
    }
  }
  switch (form) {
    case "margin":
      return { l1: spec.margin!, l0: (v) => spec.margin!(-v), dl1: spec.dmargin ?? null, dl0: spec.dmargin ? (v) => -spec.dmargin!(-v) : null };
    case "score-partials":
      return { l1: spec.l1!, l0: spec.l0!, dl1: spec.dl1 ?? null, dl0: spec.dl0 ?? null };
    case "partials": {
      const inv = CANONICAL_INVERSE[report.info.name];
      if (spec.canonicalLink && inv) {
        // d/dv ½(1 + v/√(v²+4)) = 2/(v²+4)^(3/2) (computed by hand).
        const dinv = (v: number) => 2 / Math.pow(v * v + 4, 1.5);
        return {
          l1: (v) => spec.l1!(inv(v)), l0: (v) => spec.l0!(inv(v)),
          dl1: (v) => spec.dl1!(inv(v)) * dinv(v), dl0: (v) => spec.dl0!(inv(v)) * dinv(v),
        };
      }
      // Probability partials with the logit link: q = sigmoid(v), dq/dv = sigmoid(v)·sigmoid(−v).
      if (!spec.link || Math.abs(spec.link(0.3) - logit(0.3)) > 1e-12) return null;
      return {
        l1: (v) => spec.l1!(sigmoid(v)), l0: (v) => spec.l0!(sigmoid(v)),
        dl1: (v) => spec.dl1!(sigmoid(v)) * sigmoid(v) * sigmoid(-v), dl0: (v) => spec.dl0!(sigmoid(v)) * sigmoid(v) * sigmoid(-v),
      };
    }
    default:
      return null;
  }
}

/** Central finite difference with a step scaled to x (the error is O(h²) plus rounding O(eps/h)). */
export function centralDifference(f: (x: number) => number, x: number): number {
  const h = 1e-6 * Math.max(1, Math.abs(x));
  return (f(x + h) - f(x - h)) / (2 * h);
}

/** One generated loss to execute: its function names and the engine reference. */
export interface Plan {
  loss: string;
  fn: string;
  grad: string;
  ref: Reference;
  /** Points on the input scale; each is evaluated with y = 1 and with y = 0. */
  points: number[];
  /** Points for the finite-difference check (away from kinks and jumps). */
  fdPoints: number[];
}

/** What executing a plan gives back (reduction "none"): values at `pred`, gradients at `gradPred`, values at `fdPred` (see planArrays). */
export interface Executed {
  values: number[];
  grads: number[];
  /** Values at x ± h for the finite-difference points: [plus…, minus…] for y = 1, then the same for y = 0. */
  fdValues: number[];
}

export const FD_STEP = (x: number): number => 1e-6 * Math.max(1, Math.abs(x));

/** The request arrays of a plan: pred/target for values and gradients, and for the finite differences. */
export function planArrays(p: Plan): { pred: number[]; target: number[]; gradPred: number[]; gradTarget: number[]; fdPred: number[]; fdTarget: number[] } {
  const n = p.points.length;
  const m = p.fdPoints.length;
  const plus = p.fdPoints.map((x) => x + FD_STEP(x));
  const minus = p.fdPoints.map((x) => x - FD_STEP(x));
  return {
    pred: [...p.points, ...p.points],
    target: [...new Array<number>(n).fill(1), ...new Array<number>(n).fill(0)],
    gradPred: [...p.points, ...p.points, ...p.fdPoints, ...p.fdPoints],
    gradTarget: [...new Array<number>(n).fill(1), ...new Array<number>(n).fill(0), ...new Array<number>(m).fill(1), ...new Array<number>(m).fill(0)],
    fdPred: [...plus, ...minus, ...plus, ...minus],
    fdTarget: [...new Array<number>(2 * m).fill(1), ...new Array<number>(2 * m).fill(0)],
  };
}

/** Tolerances of the comparisons, each with its reason. */
export const TOL = {
  /** Generated vs engine closures: both evaluate the same closed form in doubles, through different but equivalent rewrites. */
  valueRel: 1e-10,
  /** Absolute floor for values that cancel O(1) terms (the Savage form, polynomial expansions). */
  valueAbs: 1e-12,
  /** Central differences with h = 1e-6·max(1,|x|): truncation O(h²) and rounding O(1e-16/h) give ~1e-9 relative; 1e-6 leaves margin. */
  fdRel: 1e-6,
  fdAbs: 1e-7,
};

/** Compares an executed plan with the engine; returns failure descriptions (empty when all agree) and the count of comparisons. */
export function comparePlan(p: Plan, out: Executed, near: (a: number, b: number, rel: number, abs: number) => boolean): { failures: string[]; compared: number } {
  const failures: string[] = [];
  let compared = 0;
  const n = p.points.length;
  const note = (what: string, x: number, got: number, want: number) => {
    if (failures.length < 8) failures.push(`${p.loss} ${what} at ${x}: generated ${got}, reference ${want}`);
  };
  for (let i = 0; i < n; i++) {
    const x = p.points[i]!;
    for (const [y, off] of [[1, 0], [0, n]] as const) {
      const got = out.values[i + off]!;
      const want = y === 1 ? p.ref.l1(x) : p.ref.l0(x);
      compared++;
      if (!near(got, want, TOL.valueRel, TOL.valueAbs)) note(`value (y=${y})`, x, got, want);
      const dref = y === 1 ? p.ref.dl1 : p.ref.dl0;
      if (dref) {
        const g = out.grads[i + off]!;
        const wantG = dref(x);
        if (Number.isFinite(wantG) && !near(g, wantG, TOL.valueRel, TOL.valueAbs * Math.max(1, Math.abs(wantG)))) note(`gradient vs engine derivative (y=${y})`, x, g, wantG);
      }
    }
  }
  const m = p.fdPoints.length;
  for (let j = 0; j < m; j++) {
    const x = p.fdPoints[j]!;
    const h = FD_STEP(x);
    for (const [y, base] of [[1, 0], [0, 2 * m]] as const) {
      const fd = (out.fdValues[base + j]! - out.fdValues[base + m + j]!) / (2 * h);
      // Gradients at the FD points follow the 2n main ones (y = 1 block, then y = 0).
      const g = out.grads[2 * n + (y === 1 ? j : m + j)]!;
      compared++;
      if (!near(g, fd, TOL.fdRel, TOL.fdAbs)) note(`gradient vs finite difference (y=${y})`, x, g, fd);
    }
  }
  return { failures, compared };
}

/** Interior points for finite differences, skipping a neighbourhood of known kinks. */
export function fdPointsFor(input: "prob" | "score", kinks: number[] = []): number[] {
  const raw = input === "prob" ? Array.from({ length: 99 }, (_, i) => 0.01 + 0.98 * (i / 98)) : Array.from({ length: 99 }, (_, i) => -8 + 16 * (i / 98));
  return raw.filter((x) => kinks.every((k) => Math.abs(x - k) > 1e-3));
}

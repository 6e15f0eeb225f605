/**
 * The sweep over declared parameter ranges: each ranged parameter is sampled with the others at their
 * defaults, boundaries between proper and improper samples are refined by bisection, and seeded joint
 * samples are added when there are several parameters. The outcome is a sentence ("improper for g > 0;
 * proper at g = 0") and, for a loss proper at its defaults, an "improper-in-range" finding.
 */
import type { Finding, LossFamily, ParamRange, RealFn } from "../loss-model.js";
import { fmt } from "../display.js";
import { probabilityGrid, seededRandom } from "./numeric/sampling.js";
import { analyseSpec, type PropernessVerdict } from "./verdict.js";
import type { Deadline } from "./budget.js";
import { improperAtJointFinding, improperInRangeFinding, rangesTimedOutFinding, type Counterexample } from "./messages.js";

/** Coarser grid used for each point of a parameter sweep. */
export const SWEEP_RESOLUTION = 100;
/** Uniform cells of the range of a loss's only parameter (each sample is one verdict at SWEEP_RESOLUTION). */
export const SWEEP_CELLS_SINGLE = 8;
/** Uniform cells per parameter when there are several (the joint samples cover the combinations). */
export const SWEEP_CELLS_EACH = 5;
/** Seeded random values per parameter, besides the grid (they break alignment with special values). */
export const SWEEP_RANDOM_SAMPLES = 2;
/** Parameters whose corners of the box are all sampled jointly (2^4 = 16 verdicts; further parameters only by random points). */
export const JOINT_CORNER_PARAMS = 4;

/** A parameter with a declared range. */
type RangedParam = ParamRange & { lo: number; hi: number };

/** The parameters with a declared range that can change properness (not threshold-only ones). */
function rangedParams(family: LossFamily): RangedParam[] {
  return family.params.filter(
    (p): p is ParamRange & { lo: number; hi: number } => p.lo !== undefined && p.hi !== undefined && p.hi >= p.lo && !p.thresholdOnly,
  );
}

/** The default value of every parameter of the family. */
export function defaultsOf(family: LossFamily): Record<string, number> {
  const v: Record<string, number> = {};
  for (const p of family.params) v[p.name] = p.default;
  return v;
}

type Status = "improper" | "proper" | "unknown";

interface SweepPoint {
  values: Record<string, number>;
  status: Status;
  counterexample: Counterexample | null;
}

/** Probe points near each endpoint for the power-law integrability test of a weight function. */
const WEIGHT_EDGE_PROBES = [1e-8, 1e-6] as const;
/** Local exponents this close to the borderline −1 are left to the full analysis. */
export const WEIGHT_EXPONENT_MARGIN = 0.05;

/**
 * A fast sweep verdict for a weight-defined loss: every w ≥ 0 whose integrals l1, l0 converge defines a
 * proper loss (Reid & Williamson 2010, Thm 6), so sampling the sign of w and the local power of c·w(c)
 * at 0 and (1−c)·w(c) at 1 suffices. Returns null (use the full analysis) when in doubt.
 */
function quickWeightStatus(w: RealFn): Status | null {
  for (const q of probabilityGrid(100, 6)) {
    const y = w(q);
    if (!Number.isFinite(y) || y < 0) return null;
  }
  const [near, far] = WEIGHT_EDGE_PROBES;
  for (const edge of [0, 1] as const) {
    const g = (t: number) => t * w(edge === 0 ? t : 1 - t);
    const a = g(near);
    const b = g(far);
    if (a === 0 && b === 0) continue;
    if (!(a > 0 && b > 0)) return null;
    const k = Math.log(b / a) / Math.log(far / near);
    if (!Number.isFinite(k) || k <= -1 + WEIGHT_EXPONENT_MARGIN) return null;
  }
  return "proper";
}

function statusAt(family: LossFamily, values: Record<string, number>, deadline: Deadline, seed: number): SweepPoint {
  try {
    const spec = family.instantiate(values);
    if (spec.form === "weight" && spec.weight) {
      const quick = quickWeightStatus(spec.weight);
      if (quick) return { values, status: quick, counterexample: null };
    }
    const r = analyseSpec(spec, deadline, seed, SWEEP_RESOLUTION, false);
    const status: Status = r.verdict === "improper" ? "improper" : r.verdict === "unknown" ? "unknown" : "proper";
    return { values, status, counterexample: r.counterexample };
  } catch {
    return { values, status: "unknown", counterexample: null };
  }
}

/** Bisection steps refining a boundary between a proper and an improper sample of one parameter. */
export const BOUNDARY_STEPS = 12;

interface Sweep1D {
  param: RangedParam;
  points: { x: number; status: Status }[];
  improper: SweepPoint[];
  /** Refined boundaries between runs of different status: (left status, right status, location). */
  boundaries: { x: number; left: Status; right: Status }[];
}

function fmtParam(x: number): string {
  return fmt(x, 4);
}

/** Text like "improper for g > 0; proper at g = 0" from a 1-D sweep. */
function describeSweep(s: Sweep1D): string {
  const { name, lo, hi } = s.param;
  const span = hi - lo;
  const pts = s.points;
  if (pts.length === 0) return "";
  if (pts.every((p) => p.status === pts[0]!.status)) return `${pts[0]!.status} for all ${name} in [${fmtParam(lo)}, ${fmtParam(hi)}] (sampled)`;
  // Runs of equal status between refined boundaries.
  interface Run {
    status: Status;
    from: number;
    to: number;
  }
  const runs: Run[] = [];
  let cur: Run = { status: pts[0]!.status, from: pts[0]!.x, to: pts[0]!.x };
  let bi = 0;
  for (let i = 1; i < pts.length; i++) {
    const p = pts[i]!;
    if (p.status === cur.status) {
      cur.to = p.x;
      continue;
    }
    const b = s.boundaries[bi++]?.x ?? 0.5 * (cur.to + p.x);
    cur.to = b;
    runs.push(cur);
    cur = { status: p.status, from: b, to: p.x };
  }
  runs.push(cur);
  const near = (a: number, b: number) => Math.abs(a - b) <= 1e-3 * Math.max(span, 1e-300);
  // A run that shrinks to one value (at an end, or between two refined boundaries) is a point: "proper at a = 1".
  const isPoint = (r: Run) => near(r.from, r.to);
  const pointAt = (r: Run) => (near(r.from, lo) ? lo : near(r.to, hi) ? hi : 0.5 * (r.from + r.to));
  const parts: { t: string; s: Status }[] = [];
  const [r0, r1, r2] = runs;
  if (runs.length === 3 && isPoint(r1!) && !isPoint(r0!) && !isPoint(r2!) && r0!.status === r2!.status) {
    // One status everywhere but at one interior value: "improper for a ≠ 1 in [0, 2]; proper at a = 1".
    const x = pointAt(r1!);
    parts.push({ t: `${r0!.status} for ${name} ≠ ${fmtParam(x)} in [${fmtParam(lo)}, ${fmtParam(hi)}]`, s: r0!.status }, { t: `${r1!.status} at ${name} = ${fmtParam(x)}`, s: r1!.status });
    runs.length = 0;
  }
  runs.forEach((r, i) => {
    const prev = runs[i - 1];
    const next = runs[i + 1];
    if (isPoint(r)) {
      parts.push({ t: `${r.status} at ${name} = ${fmtParam(pointAt(r))}`, s: r.status });
      return;
    }
    // A neighbouring point run makes this bound strict ("g > 0"); otherwise it is a refined boundary.
    const strictLeft = !!prev && isPoint(prev);
    const strictRight = !!next && isPoint(next);
    const leftAt = strictLeft ? pointAt(prev) : near(r.from, lo) ? null : r.from;
    const rightAt = strictRight ? pointAt(next) : near(r.to, hi) ? null : r.to;
    let t: string;
    if (leftAt === null && rightAt === null) t = `${r.status} for all ${name} in [${fmtParam(lo)}, ${fmtParam(hi)}]`;
    else if (leftAt !== null && rightAt !== null) t = `${r.status} for ${fmtParam(leftAt)} ${strictLeft ? "<" : "≤"} ${name} ${strictRight ? "<" : "≤"} ${fmtParam(rightAt)}`;
    else if (leftAt !== null) t = `${r.status} for ${name} ${strictLeft ? ">" : "≥"} ${fmtParam(leftAt)}`;
    else t = `${r.status} for ${name} ${strictRight ? "<" : "≤"} ${fmtParam(rightAt!)}`;
    parts.push({ t, s: r.status });
  });
  const order: Status[] = ["improper", "proper", "unknown"];
  const sorted = [...parts].sort((a, b) => order.indexOf(a.s) - order.indexOf(b.s));
  return sorted.map((x) => x.t).join("; ");
}

/** Sample values of one parameter: both ends, the default, a uniform grid and seeded random points. */
function paramSamples(p: RangedParam, rnd: () => number, uniform: number): number[] {
  const xs = new Set<number>([p.lo, p.hi, p.default]);
  if (p.hi > p.lo) {
    for (let k = 1; k < uniform; k++) xs.add(p.lo + ((p.hi - p.lo) * k) / uniform);
    for (let k = 0; k < SWEEP_RANDOM_SAMPLES; k++) xs.add(p.lo + (p.hi - p.lo) * rnd());
  }
  return [...xs].filter((x) => x >= p.lo && x <= p.hi).sort((a, b) => a - b);
}

export interface RangeOutcome {
  report: string;
  findings: Finding[];
}

/** What every sample of a sweep needs: the family, the other parameters' values, the budget and the seed. */
interface SweepContext {
  family: LossFamily;
  defaults: Record<string, number>;
  deadline: Deadline;
  seed: number;
}

/** Samples one parameter at `xs` (others at defaults); stops early when the time budget runs out. */
function sweepParam(ctx: SweepContext, p: RangedParam, xs: number[]): { sweep: Sweep1D; timedOut: boolean } {
  const sweep: Sweep1D = { param: p, points: [], improper: [], boundaries: [] };
  for (const x of xs) {
    if (ctx.deadline.expired()) return { sweep, timedOut: true };
    const sp = statusAt(ctx.family, { ...ctx.defaults, [p.name]: x }, ctx.deadline, ctx.seed);
    sweep.points.push({ x, status: sp.status });
    if (sp.status === "improper") sweep.improper.push(sp);
  }
  return { sweep, timedOut: false };
}

/** Refines every change of status between neighbouring samples by BOUNDARY_STEPS bisection steps; false when the time budget cut a refinement short. */
function refineBoundaries(ctx: SweepContext, sweep: Sweep1D): boolean {
  let complete = true;
  const name = sweep.param.name;
  for (let i = 0; i + 1 < sweep.points.length; i++) {
    const a = sweep.points[i]!;
    const b = sweep.points[i + 1]!;
    if (a.status === b.status) continue;
    let lo = a.x;
    let hi = b.x;
    for (let k = 0; k < BOUNDARY_STEPS; k++) {
      if (ctx.deadline.expired()) {
        complete = false;
        break;
      }
      const m = 0.5 * (lo + hi);
      const st = statusAt(ctx.family, { ...ctx.defaults, [name]: m }, ctx.deadline, ctx.seed).status;
      if (st === a.status) lo = m;
      else hi = m;
    }
    sweep.boundaries.push({ x: 0.5 * (lo + hi), left: a.status, right: b.status });
  }
  return complete;
}

/** Extra seeded samples beyond the corners of the parameter box, when there are several parameters. */
export const JOINT_RANDOM_SAMPLES = 6;

/** Joint samples of several parameters: the corners of the box (up to 4 parameters) and seeded random points; the improper ones. */
function jointSamples(ctx: SweepContext, params: RangedParam[], rnd: () => number): { improper: SweepPoint[]; timedOut: boolean } {
  const improper: SweepPoint[] = [];
  const corners = 1 << Math.min(params.length, JOINT_CORNER_PARAMS);
  for (let c = 0; c < corners + JOINT_RANDOM_SAMPLES; c++) {
    if (ctx.deadline.expired()) return { improper, timedOut: true };
    const values = { ...ctx.defaults };
    params.forEach((p, k) => {
      values[p.name] = c < corners ? ((c >> k) & 1 ? p.hi : p.lo) : p.lo + (p.hi - p.lo) * rnd();
    });
    const sp = statusAt(ctx.family, values, ctx.deadline, ctx.seed);
    if (sp.status === "improper") improper.push(sp);
  }
  return { improper, timedOut: false };
}

/** "improper-in-range" findings for a loss proper at its defaults: the first improper sample of each sweep, else of the joint samples. */
function improperInRange(sweeps: Sweep1D[], joint: SweepPoint[], params: RangedParam[]): Finding[] {
  const findings: Finding[] = [];
  for (const s of sweeps) {
    const bad = s.improper[0];
    if (!bad) continue;
    findings.push(improperInRangeFinding(s.param.name, bad.values[s.param.name]!, bad.counterexample, bad.values, describeSweep(s)));
  }
  if (joint.length > 0 && findings.length === 0) {
    const bad = joint[0]!;
    findings.push(improperAtJointFinding(params.map((p) => p.name), bad.values, bad.counterexample));
  }
  return findings;
}

/**
 * Sweeps each ranged parameter (others at defaults), refines the boundaries between proper and improper
 * samples by bisection, and adds seeded joint samples when there are several parameters.
 */
export function analyseRanges(family: LossFamily, defaultVerdict: PropernessVerdict, deadline: Deadline, seed: number): RangeOutcome {
  const params = rangedParams(family);
  const findings: Finding[] = [];
  if (params.length === 0) return { report: "", findings };
  const ctx: SweepContext = { family, defaults: defaultsOf(family), deadline, seed };
  const rnd = seededRandom(seed ^ 0x5bd1e995);
  const sweeps: Sweep1D[] = [];
  let timedOut = false;
  const uniform = params.length === 1 ? SWEEP_CELLS_SINGLE : SWEEP_CELLS_EACH;
  for (const p of params) {
    // The samples are drawn for every parameter, also after a time-out, so the seeded sequence does not depend on time.
    const r = sweepParam(ctx, p, paramSamples(p, rnd, uniform));
    if (r.timedOut) timedOut = true;
    if (!refineBoundaries(ctx, r.sweep)) timedOut = true;
    sweeps.push(r.sweep);
  }
  let joint: SweepPoint[] = [];
  if (params.length > 1 && !timedOut) {
    const j = jointSamples(ctx, params, rnd);
    joint = j.improper;
    if (j.timedOut) timedOut = true;
  }
  // A sample analysed while the deadline passed may have stopped early (status unknown): the clock never
  // goes back, so a deadline passed anywhere in the sweep is still passed here.
  if (deadline.expired()) timedOut = true;
  const texts = sweeps.map(describeSweep).filter((t) => t.length > 0);
  if (joint.length > 0) {
    const v = joint[0]!.values;
    texts.push(`improper at (${params.map((p) => `${p.name} = ${fmtParam(v[p.name]!)}`).join(", ")})`);
  }
  if (timedOut) {
    texts.push("range only partly sampled (time limit)");
    findings.push(rangesTimedOutFinding(params[0]!.name));
  }
  if (defaultVerdict === "proper" || defaultVerdict === "strictly-proper") findings.push(...improperInRange(sweeps, joint, params));
  return { report: texts.join("; "), findings };
}

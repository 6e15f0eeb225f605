/**
 * Curvature analysis of a proper loss: the weight function w = −H'' (with its point masses and zero
 * intervals), the strong-properness constant λ = inf w, the modulus of convexity δ** of f = −H near 0,
 * and the surrogate-regret bounds by three routes with their exponents and an inverse table.
 *
 * Sources:
 * - Agarwal 2014, "Surrogate Regret Bounds for Bipartite Ranking via Strongly Proper Losses", JMLR 15,
 *   Def. 7 / Thm 10: λ-strongly proper ⇔ R(η,q) ≥ (λ/2)(η−q)² ⇔ w ≥ λ.
 * - Bao 2023, "Proper Losses, Moduli of Convexity, and Surrogate Regret Bounds", COLT, Def. 4, Thm 6,
 *   Cor. 7, Def. 9, Thm 10 (the modulus route).
 * - Reid & Williamson 2009, "Surrogate Regret Bounds for Proper Losses", ICML, Thm 3 (= RW11 JMLR 12
 *   Thm 25, with min in place of the printed max; proper-losses.md §3) (the direct route).
 * - Bartlett, Jordan & McAuliffe 2006, "Convexity, Classification, and Risk Bounds", JASA 101 (ψ-transform).
 */
import type { Finding, LossFunctions, RealFn } from "../loss-model.js";
import { fmt } from "../display.js";
import { goldenMin } from "./numeric/minimise.js";
import { probabilityGrid } from "./numeric/sampling.js";
import { boundedUnitFn } from "./numeric/limits.js";
import { fitPowerLawAtZero, type PowerLaw, snapRational } from "./numeric/fits.js";
import { shanksLimit } from "./numeric/extrapolation.js";
import { buildModulusModel, ROUNDING_GAP_TOL, sampleUnitGrid, type ModulusModel, type SimonenkoRange, type UnitGrid } from "./modulus.js";
import { buildDirectBound, buildPsiTransform, modulusRouteBound, type DirectBoundModel, type PsiTransformModel } from "./bounds.js";

/** A point mass of w at q (a kink of H: the jump of H' there is −mass). */
export interface PointMass {
  q: number;
  mass: number;
}

export interface WeightFeatures {
  pointMasses: PointMass[];
  /** Intervals on which H is affine (w = 0), to rounding (midpoint gaps within ROUNDING_GAP_TOL). */
  zeroIntervals: [number, number][];
}

/** One row of the inverse table: the surrogate regret that guarantees a decision regret. */
export interface InverseTableRow {
  /** Target cost-c regret (at c = ½: half the usual 0-1 regret). */
  decisionRegret: number;
  /** 2·δ**(target) (Bao 2023, Cor. 7); null when δ** = 0 there (vacuous). */
  viaModulus: number | null;
  /** ψ_RW**(target) at the loss's threshold (RW09 Thm 3); null when no regret guarantees it. */
  direct: number | null;
  /** ψ_BJM(2·target) for margin losses at c = ½ (θ = 2α, BJM06); null otherwise. */
  psiTransform: number | null;
}

export interface CurvatureResult {
  /** λ = inf over (0,1) of w (Agarwal 2014 convention); null when undetermined. */
  lambda: number | null;
  /** Where the infimum is attained, or approached (an endpoint limit counts as approached at 0 or 1). */
  lambdaAt: { q: number; approached: boolean } | null;
  weightFeatures: WeightFeatures;
  /** δ**(ε) ≈ coefficient·ε^power near 0. */
  modulus: { coefficient: number; power: number } | null;
  /** δ** = 0 on (0, ε0]: the modulus bound is vacuous below ε0. */
  vacuousBelow: number | null;
  /** Bound exponents: decision regret = O(R^exponent). */
  exponents: { viaModulus: number | null; direct: number | null; explanation: string | null };
  threshold: number;
  inverseTable: InverseTableRow[];
  findings: Finding[];
  /** One line for a code lens, e.g. "λ = 4 · δ** ≈ 0.5ε² · exponents ½ / ½". */
  summary: string;
  /** Units of the numbers above. */
  units: { decisionRegret: string; surrogateRegret: string; psiTransform: string };
  /** Bao 2023 Thm 10 constants at ε* = ½ (null when vacuous). */
  simonenko: SimonenkoRange | null;
  /** Statements for hovers and reports: strong properness, bound comparisons, numerical notes. */
  notes: string[];
}

export interface CurvatureOptions {
  /** Time budget in milliseconds (default 2000); stages not reached become analysis-unknown findings. */
  deadlineMs?: number;
  /**
   * Target absolute accuracy of δ (default 1e-8). It sets the midpoint tolerance of every exact δ
   * evaluation; the defaults already give ≈1e-13 on the §7 losses, so only stricter targets change it.
   */
  accuracy?: number;
}

/** Decision-regret targets of the inverse table (cost-c units). */
export const INVERSE_TABLE_TARGETS = [0.1, 0.05, 0.01, 0.001];
/**
 * A second difference of f on the grid below ZERO_CURVATURE_TOL·(1+max|f|) counts as zero curvature:
 * its rounding is ≈ 4N·ulp(max|f|) ≈ 5e-13·max|f| for N = 512, while w·h for the §6 losses is ≥ 1e-7.
 */
const ZERO_CURVATURE_TOL = 1e-10;
/** A grid second difference this many times its neighbours' is a candidate kink (a smooth w gives a ratio near 1–2). */
const KINK_CANDIDATE_RATIO = 4;
/** Successive point-mass estimates (step shrunk 8×) must agree to 2%: a smooth w changes them 8×. */
const KINK_CONFIRM_REL = 0.02;
/** At most this many kink candidates are refined (bounds the work for noisy H). */
const MAX_KINK_CANDIDATES = 16;
/** |λ| below this (relative to 1 + w(½)) is reported as 0: closed-form weights are exact to rounding, the endpoint extrapolation to ~1e-12. */
const LAMBDA_ZERO_TOL_CLOSURE = 1e-10;
/** The same for weights from second differences of H, whose rounding is ≈ 4·ulp·|H|/h² ≈ 1e-7 at h = 1e-4. */
const LAMBDA_ZERO_TOL_NUMERIC = 1e-6;
/** Two exponents closer than this are "the same" (they are snapped rationals or estimates good to 1e-3). */
const EXPONENT_SAME_TOL = 1e-3;

/** The models built by one analysis, reused by `sampleCurves`. */
export interface CurvatureModels {
  f: RealFn;
  grid: UnitGrid;
  weight: RealFn;
  weightIsNumeric: boolean;
  modulus: ModulusModel | null;
  direct: DirectBoundModel | null;
  psi: PsiTransformModel | null;
}

const modelCache = new WeakMap<LossFunctions, CurvatureModels>();

/** The models of the last `analyseCurvature` call on this LossFunctions object, if any. */
export function cachedCurvatureModels(fns: LossFunctions): CurvatureModels | undefined {
  return modelCache.get(fns);
}

/** w from second differences of f = −H, with a step that stays inside (0,1) and balances truncation and rounding. */
export function numericWeight(f: RealFn): RealFn {
  return (q: number) => {
    if (!(q > 0 && q < 1)) return NaN;
    const h = Math.min(1e-4, q / 2, (1 - q) / 2);
    return (f(q + h) - 2 * f(q) + f(q - h)) / (h * h);
  };
}

/** f'(c) = l0(c) − l1(c) for f = −H (Savage: H' = l1 − l0), or undefined when not finite. */
export function savageSlope(fns: LossFunctions, c: number): number | undefined {
  try {
    const s = fns.l0(c) - fns.l1(c);
    return Number.isFinite(s) ? s : undefined;
  } catch {
    return undefined;
  }
}

function safeFn(g: RealFn): RealFn {
  return (x: number) => {
    try {
      return g(x);
    } catch {
      return NaN;
    }
  };
}

/** Midpoint gap of f on [a, b]: zero iff f is affine on [a, b] (f convex). */
function intervalGap(f: RealFn, a: number, b: number): number {
  return 0.5 * (f(a) + f(b)) - f(0.5 * (a + b));
}

/**
 * Locates a kink of the convex f near [lo, hi]: golden-section maximisation of the midpoint gap (a tent
 * around the kink) with half-widths shrinking 8× per round; the mass is 2·gap/d, which is stable across
 * rounds for a kink and shrinks 8× for smooth curvature.
 */
function locateKink(f: RealFn, lo: number, hi: number, massTol: number): PointMass | null {
  let c = 0.5 * (lo + hi);
  let d = hi - lo;
  const masses: number[] = [];
  for (let round = 0; round < 5; round++) {
    const a = Math.max(d, c - d);
    const b = Math.min(1 - d, c + d);
    if (!(b > a)) return null;
    // Early rounds only need the kink well within the next, 8× smaller half-width (d/2000); the last
    // round sets the mass, whose relative error is the location error over d, so it is located tightly.
    const tol = round < 4 ? d / 2000 / (1 + a + b) : 1e-14;
    const m = goldenMin((x) => -intervalGap(f, x - d, x + d), a, b, tol);
    c = m.x;
    masses.push((2 * -m.fx) / d);
    d /= 8;
  }
  const last = masses[masses.length - 1]!;
  const prev = masses[masses.length - 2]!;
  if (!(last > massTol) || Math.abs(last - prev) > KINK_CONFIRM_REL * Math.abs(prev)) return null;
  return { q: c, mass: last };
}

/** Point masses and zero intervals of w from the grid samples of f = −H (none found when the scan fails; never throws). */
export function detectWeightFeatures(grid: UnitGrid): WeightFeatures {
  try {
    return scanWeightFeatures(grid);
  } catch {
    return { pointMasses: [], zeroIntervals: [] };
  }
}

function scanWeightFeatures(grid: UnitGrid): WeightFeatures {
  const { n, values: F, f } = grid;
  const scale = 1 + grid.scale;
  const curv = new Float64Array(n + 1);
  for (let k = 1; k < n; k++) curv[k] = n * (F[k + 1]! - 2 * F[k]! + F[k - 1]!);
  const zeroTol = ZERO_CURVATURE_TOL * scale;

  // Point masses: a local maximum of the second difference standing well above its surroundings.
  const candidates: { k: number; size: number }[] = [];
  for (let k = 3; k <= n - 3; k++) {
    const ck = curv[k]!;
    if (!(ck >= curv[k - 1]! && ck >= curv[k + 1]!)) continue;
    const pair = ck + Math.max(curv[k - 1]!, curv[k + 1]!);
    const background = Math.max(curv[k - 3]!, curv[k + 3]!, 0);
    if (pair > KINK_CANDIDATE_RATIO * 2 * background + zeroTol) candidates.push({ k, size: pair });
  }
  candidates.sort((a, b) => b.size - a.size);
  const pointMasses: PointMass[] = [];
  for (const cand of candidates.slice(0, MAX_KINK_CANDIDATES)) {
    const pm = locateKink(f, (cand.k - 2) / n, (cand.k + 2) / n, zeroTol);
    if (pm && !pointMasses.some((p) => Math.abs(p.q - pm.q) < 1e-6)) pointMasses.push(pm);
  }
  pointMasses.sort((a, b) => a.q - b.q);

  // Zero intervals: runs of (near-)zero second differences, confirmed by the midpoint gap of the whole run
  // being at the rounding level (a high-order zero of w, e.g. w ~ t³ at an endpoint, leaves gaps above it).
  const gapTol = ROUNDING_GAP_TOL * scale;
  const zeroIntervals: [number, number][] = [];
  let k = 1;
  while (k < n) {
    if (Math.abs(curv[k]!) > zeroTol) {
      k++;
      continue;
    }
    const k1 = k;
    while (k + 1 < n && Math.abs(curv[k + 1]!) <= zeroTol) k++;
    const k2 = k;
    k++;
    if (k2 - k1 < 2) continue;
    let a = (k1 - 1) / n;
    let b = (k2 + 1) / n;
    if (intervalGap(f, a, b) > gapTol) continue;
    a = extendAffine(f, a, b, -1, (k1 - 2) / n, pointMasses, gapTol);
    b = extendAffine(f, a, b, 1, (k2 + 2) / n, pointMasses, gapTol);
    zeroIntervals.push([a, b]);
  }
  return { pointMasses, zeroIntervals };
}

/** Extends the affine interval [a, b] towards `limit` (one grid cell away) by bisection, stopping at a point mass. */
function extendAffine(f: RealFn, a: number, b: number, dir: -1 | 1, limit: number, masses: PointMass[], gapTol: number): number {
  const end = dir < 0 ? a : b;
  if (dir < 0 && end <= 0) return 0;
  if (dir > 0 && end >= 1) return 1;
  const far = Math.min(1, Math.max(0, limit));
  const lo = Math.min(far, end);
  const hi = Math.max(far, end);
  const kink = masses.find((p) => p.q >= lo - 1e-9 && p.q <= hi + 1e-9);
  if (kink) return kink.q;
  const affine = (x: number) => (dir < 0 ? intervalGap(f, x, b) : intervalGap(f, a, x)) <= gapTol;
  if (affine(far)) return far;
  let good = end;
  let bad = far;
  for (let i = 0; i < 50 && Math.abs(bad - good) > 1e-13; i++) {
    const m = 0.5 * (good + bad);
    if (affine(m)) good = m;
    else bad = m;
  }
  return good;
}

/** Relative disagreement between a supplied weight and second differences of H beyond which the latter is preferred near an endpoint (the numeric estimate is good to ≈1e-3 even for √q-type endpoint behaviour). */
const LAMBDA_CROSSCHECK_REL = 1e-2;

/** True when the infimum of w came from a sample within 1e-4 of an endpoint (where second differences of H are not sampled). */
function isExtreme(lam: LambdaEstimate): boolean {
  return lam.extremeAt !== null;
}

interface LambdaEstimate {
  /** The sample within 1e-4 of an endpoint that set λ, if any. */
  extremeAt: number | null;
  lambda: number | null;
  at: { q: number; approached: boolean } | null;
  /** w ~ A·t^k next to where λ = 0 sits (t = distance), when λ = 0 and not on a zero interval. */
  vanishingOrder: PowerLaw | null;
  negativeAt: number | null;
  nonFiniteAt: number | null;
}

/** λ = inf w on (0,1) with where it is attained or approached (Agarwal 2014 convention, proper-losses.md §1.6). */
function estimateLambda(w: RealFn, numeric: boolean, features: WeightFeatures): LambdaEstimate {
  const grid = numeric ? probabilityGrid(200, 4) : probabilityGrid(200, 8);
  const vals = grid.map((q) => w(q));
  let nonFiniteAt: number | null = null;
  let iMin = -1;
  for (let i = 0; i < grid.length; i++) {
    const v = vals[i]!;
    if (Number.isNaN(v)) {
      if (nonFiniteAt === null) nonFiniteAt = grid[i]!;
      continue;
    }
    if (iMin < 0 || v < vals[iMin]!) iMin = i;
  }
  if (iMin < 0) return { lambda: null, at: null, vanishingOrder: null, negativeAt: null, nonFiniteAt, extremeAt: null };
  const qMin = grid[iMin]!;
  const extremeAt = qMin < 1e-4 || qMin > 1 - 1e-4 ? qMin : null;
  const typical = Math.abs(w(0.5));
  const zeroTol = (numeric ? LAMBDA_ZERO_TOL_NUMERIC : LAMBDA_ZERO_TOL_CLOSURE) * (1 + (Number.isFinite(typical) ? typical : 0));
  const minVal = vals[iMin]!;
  // Ties (constant w, or a zero interval) prefer an interior point, the one nearest ½.
  const tieTol = numeric ? zeroTol : 1e-9 * Math.abs(minVal) + 1e-12;
  let chosen = -1;
  for (let i = 0; i < grid.length; i++) {
    const q = grid[i]!;
    if (q < 0.01 || q > 0.99 || !(vals[i]! <= minVal + tieTol)) continue;
    if (chosen < 0 || Math.abs(q - 0.5) < Math.abs(grid[chosen]! - 0.5)) chosen = i;
  }
  let lambda: number;
  let at: { q: number; approached: boolean };
  if (features.zeroIntervals.length > 0 && minVal <= zeroTol) {
    const [a, b] = features.zeroIntervals[0]!;
    lambda = 0;
    at = { q: 0.5 * (a + b), approached: false };
  } else if (chosen >= 0 || (iMin > 0 && iMin < grid.length - 1)) {
    const i = chosen >= 0 ? chosen : iMin;
    const lo = grid[Math.max(0, i - 1)]!;
    const hi = grid[Math.min(grid.length - 1, i + 1)]!;
    const r = goldenMin(w, lo, hi, 1e-12);
    lambda = Math.min(vals[i]!, r.fx);
    at = { q: r.fx < vals[i]! ? r.x : grid[i]!, approached: false };
  } else {
    // The infimum is approached at an endpoint: extrapolate w(t) as t → 0 (Shanks on a geometric ladder).
    const atZero = iMin === 0;
    // Five points so that Shanks' iterated Aitken removes two error terms (e.g. a·t + b·t², or a·√t + b·t).
    const ladder = numeric ? [1e-2, 10 ** -2.5, 1e-3, 10 ** -3.5, 1e-4] : [1e-6, 10 ** -7.5, 1e-9, 10 ** -10.5, 1e-12];
    const seq = ladder.map((t) => w(atZero ? t : 1 - t));
    let lim = seq.every(Number.isFinite) ? shanksLimit(seq) : minVal;
    // The limit of non-negative samples is non-negative: a negative value is extrapolation overshoot (e.g. w ~ √t).
    if (seq.every((v) => v >= 0)) lim = Math.max(0, lim);
    lambda = Math.min(minVal, lim);
    at = { q: atZero ? 0 : 1, approached: true };
  }
  let negativeAt: number | null = null;
  if (Math.abs(lambda) <= zeroTol) {
    lambda = 0;
    // When w is zero to within its noise all the way from an endpoint to the minimiser, the infimum is
    // the endpoint limit (second differences of H cannot resolve w ~ t^k with large k near the endpoint).
    if (!at.approached && features.zeroIntervals.length === 0) {
      const upTo = (from: number, to: number) => {
        const lo = Math.min(from, to);
        const hi = Math.max(from, to);
        for (let i = 0; i < grid.length; i++) if (grid[i]! >= lo && grid[i]! <= hi && !(vals[i]! <= zeroTol)) return false;
        return true;
      };
      if (at.q < 0.5 && upTo(grid[0]!, at.q)) at = { q: 0, approached: true };
      else if (at.q > 0.5 && upTo(at.q, grid[grid.length - 1]!)) at = { q: 1, approached: true };
    }
  }
  else if (lambda < 0) negativeAt = at.q;
  let vanishingOrder: PowerLaw | null = null;
  if (lambda === 0 && features.zeroIntervals.length === 0) {
    const q0 = at.q;
    const toward = q0 >= 1 ? (t: number) => w(1 - t) : q0 <= 0 ? (t: number) => w(t) : (t: number) => w(Math.min(1, q0 + t));
    // Second differences of H carry ≈ 4·ulp·|H|/h² ≈ 1e-7 of rounding; below 1e-5·(1 + w(½)) they are noise.
    vanishingOrder = fitPowerLawAtZero(toward, numeric ? 1e-2 : 1e-3, 8, numeric ? 1e-5 * (1 + (Number.isFinite(typical) ? typical : 0)) : 0);
  }
  return { lambda, at, vanishingOrder, negativeAt, nonFiniteAt, extremeAt };
}

const FRACTIONS: Record<string, string> = { "1/2": "½", "1/3": "⅓", "2/3": "⅔", "1/4": "¼", "3/4": "¾", "1/5": "⅕", "1/6": "⅙", "1/8": "⅛" };
const SUPERSCRIPTS = "⁰¹²³⁴⁵⁶⁷⁸⁹";

/** An exponent 1/p (p the power) as a short fraction when p is rational with a small denominator. */
export function formatExponent(power: number | null): string {
  if (power === null || !Number.isFinite(power) || power <= 0) return "—";
  const p = snapRational(power, 1e-9);
  if (p !== null) {
    for (let d = 1; d <= 4; d++) {
      const num = Math.round(p * d);
      if (Math.abs(num / d - p) < 1e-9) {
        // Exponent 1/p = d/num, reduced.
        const g = gcd(d, num);
        const key = `${d / g}/${num / g}`;
        if (num / g === 1) return String(d / g);
        return FRACTIONS[key] ?? key;
      }
    }
  }
  return fmt(1 / power, 3);
}

function gcd(a: number, b: number): number {
  return b === 0 ? a : gcd(b, a % b);
}

/** "ε²", "ε³", "ε^2.5". */
function formatPower(p: number): string {
  if (Number.isInteger(p) && p >= 0 && p < 10) return "ε" + SUPERSCRIPTS[p]!;
  return `ε^${fmt(p, 4)}`;
}

function internalError(where: string, err: unknown): Finding {
  return {
    code: "internal-error",
    clause: "loss",
    message: `Internal error in the curvature analysis (${where}): ${err instanceof Error ? err.message : String(err)}`,
  };
}

function emptyResult(threshold: number, findings: Finding[], reason: string): CurvatureResult {
  return {
    lambda: null,
    lambdaAt: null,
    weightFeatures: { pointMasses: [], zeroIntervals: [] },
    modulus: null,
    vacuousBelow: null,
    exponents: { viaModulus: null, direct: null, explanation: null },
    threshold,
    inverseTable: INVERSE_TABLE_TARGETS.map((t) => ({ decisionRegret: t, viaModulus: null, direct: null, psiTransform: null })),
    findings,
    summary: `curvature not analysed: ${reason}`,
    units: unitsFor(threshold),
    simonenko: null,
    notes: [],
  };
}

function unitsFor(c: number): CurvatureResult["units"] {
  return {
    decisionRegret: `cost-weighted regret at threshold c = ${fmt(c)}: |η − c| when η and q are on opposite sides of c (at c = ½ this is half the usual 0-1 regret |2η − 1|)`,
    surrogateRegret: "regret of the loss itself, in the units of its Bayes risk H",
    psiTransform: "BJM's θ is the usual {0,1}-valued 0-1 regret |2η − 1| = 2·(cost-½ regret)",
  };
}

/**
 * Analyses the curvature of a loss and its surrogate-regret bounds. Never throws: failures become
 * findings ("internal-error", "analysis-unknown") and the affected fields are null.
 */
export function analyseCurvature(fns: LossFunctions, options?: CurvatureOptions): CurvatureResult {
  const findings: Finding[] = [];
  let threshold = 0.5;
  try {
    const start = Date.now();
    const budget = options?.deadlineMs ?? 2000;
    const overBudget = (stage: string): boolean => {
      if (Date.now() - start <= budget) return false;
      findings.push({ code: "analysis-unknown", clause: "loss", message: `The curvature analysis ran out of its ${fmt(budget)} ms budget before ${stage}.` });
      return true;
    };
    threshold = fns.threshold;
    if (!(threshold > 0 && threshold < 1)) {
      findings.push({ code: "analysis-unknown", clause: "threshold", message: `The threshold ${fmt(threshold)} is outside (0, 1); the direct bound uses c = ½.` });
      threshold = 0.5;
    }
    const f = boundedUnitFn((q) => -fns.bayes(q));
    const grid = sampleUnitGrid(f);
    if (grid.nonFiniteAt !== null) {
      findings.push({
        code: "analysis-unknown",
        clause: "bayes",
        message: `The Bayes risk is not finite at q = ${fmt(grid.nonFiniteAt)}, so its curvature cannot be analysed.`,
        data: { q: grid.nonFiniteAt },
      });
      return emptyResult(threshold, findings, "the Bayes risk is not finite");
    }
    const notes: string[] = [];
    const weightIsNumeric = fns.weight === null;
    const weight = fns.weight ? safeFn(fns.weight) : numericWeight(f);
    if (weightIsNumeric) notes.push("w computed by second differences of H (no closed-form weight available).");

    let features: WeightFeatures = { pointMasses: [], zeroIntervals: [] };
    try {
      features = scanWeightFeatures(grid);
    } catch (err) {
      findings.push(internalError("weight features", err));
    }

    let lam: LambdaEstimate | null = null;
    try {
      lam = estimateLambda(weight, weightIsNumeric, features);
    } catch (err) {
      findings.push(internalError("λ", err));
    }
    if (lam && lam.lambda !== null && !weightIsNumeric && isExtreme(lam)) {
      // A supplied weight may itself be a finite difference that loses its digits within 1e-4 of an
      // endpoint. When the infimum comes from there, cross-check with second differences of H whose
      // step stays away from the endpoints, and prefer those when they disagree.
      try {
        const own = estimateLambda(numericWeight(f), true, features);
        const gap = own.lambda === null ? 0 : own.lambda - lam.lambda;
        if (own.lambda !== null && own.negativeAt === null && gap > LAMBDA_CROSSCHECK_REL * (1 + Math.abs(own.lambda))) {
          notes.push(
            `The weight function gives w = ${fmt(lam.lambda)} near q = ${fmt(lam.extremeAt ?? NaN)}, but second differences of H give λ = ${fmt(own.lambda)}; the weight looks inaccurate that close to the endpoint, so λ is taken from second differences of H.`,
          );
          lam = own;
        }
      } catch (err) {
        findings.push(internalError("λ (second differences)", err));
      }
    }
    let lambda: number | null = lam?.lambda ?? null;
    let lambdaAt = lam?.at ?? null;
    if (lam && lam.nonFiniteAt !== null) {
      findings.push({ code: "analysis-unknown", clause: "weight", message: `The weight function is not finite at q = ${fmt(lam.nonFiniteAt)}; λ uses the finite samples only.`, data: { q: lam.nonFiniteAt } });
    }
    if (lam && lam.negativeAt !== null && lambda !== null) {
      findings.push({
        code: "analysis-unknown",
        clause: "weight",
        message: `w is negative (${fmt(lambda)}) near q = ${fmt(lam.negativeAt)}: H is not concave there, so λ and the bounds assume a properness the loss lacks.`,
        data: { q: lam.negativeAt, w: lambda },
      });
      lambda = null;
      lambdaAt = null;
    }

    let modulus: ModulusModel | null = null;
    if (!overBudget("the modulus of convexity")) {
      try {
        modulus = buildModulusModel(f, grid, { accuracy: options?.accuracy });
      } catch (err) {
        findings.push(internalError("modulus of convexity", err));
      }
    }
    let direct: DirectBoundModel | null = null;
    if (!overBudget("the direct bound")) {
      try {
        const kinkAtC = features.pointMasses.some((p) => Math.abs(p.q - threshold) < 1e-6);
        direct = buildDirectBound(f, threshold, savageSlope(fns, threshold), kinkAtC);
      } catch (err) {
        findings.push(internalError("direct bound", err));
      }
    }
    let psi: PsiTransformModel | null = null;
    if (fns.margin && !overBudget("the ψ-transform")) {
      try {
        psi = buildPsiTransform(safeFn(fns.margin), boundedUnitFn(fns.bayes));
        if (!psi.calibrated) {
          findings.push({ code: "analysis-unknown", clause: "margin", message: "ψ̃(θ) = 0 for some θ > 0: the margin loss does not look classification-calibrated, so the ψ-transform bound is vacuous there." });
        }
      } catch (err) {
        findings.push(internalError("ψ-transform", err));
      }
    }
    modelCache.set(fns, { f, grid, weight, weightIsNumeric, modulus, direct, psi });

    const vacuousBelow = modulus?.vacuousBelow ?? null;
    const near = modulus?.nearZero ?? null;
    if (vacuousBelow !== null) {
      findings.push({
        code: "vacuous-bound",
        clause: "loss",
        message: `δ** = 0 on (0, ${fmt(vacuousBelow)}]: the modulus-route bound is vacuous below ε = ${fmt(vacuousBelow)} (H is affine on an interval that long).`,
        data: { vacuousBelow, zeroIntervals: features.zeroIntervals },
      });
    }
    if (near && !near.stable) {
      findings.push({
        code: "analysis-unknown",
        clause: "loss",
        message: `The power of δ** near 0 is not stable (local log-log slopes ${near.slopes.slice(-3).map((s) => fmt(s, 4)).join(", ")}); the modulus exponent is an estimate.`,
        data: { slopes: near.slopes },
      });
    }
    const directLocal = direct?.local ?? null;
    if (direct && directLocal && !directLocal.stable) {
      findings.push({
        code: "analysis-unknown",
        clause: "loss",
        message: `The power of the direct bound near 0 is not stable (local slopes ${directLocal.slopes.slice(-3).map((s) => fmt(s, 4)).join(", ")}); its exponent is an estimate.`,
        data: { slopes: directLocal.slopes },
      });
    }

    const viaModulus = near && near.power > 0 ? 1 / near.power : null;
    const directExp = direct?.exponent ?? null;
    const explanation = explainExponents({
      viaModulus,
      direct: directExp,
      threshold,
      vacuousBelow,
      lambda,
      lambdaAt,
      features,
      vanishing: lam?.vanishingOrder ?? null,
      weightAtC: weight(threshold),
    });
    if (viaModulus !== null && directExp !== null && viaModulus > directExp + EXPONENT_SAME_TOL) {
      findings.push({
        code: "analysis-unknown",
        clause: "loss",
        message: `The modulus exponent ${fmt(viaModulus, 4)} exceeds the tight direct exponent ${fmt(directExp, 4)}, which is impossible in exact arithmetic: the numerics are unreliable for this loss.`,
      });
    }

    const inverseTable: InverseTableRow[] = INVERSE_TABLE_TARGETS.map((a) => {
      let viaM: number | null = null;
      if (modulus && !(vacuousBelow !== null && a <= vacuousBelow)) {
        const v = 2 * modulus.envelope.value(a);
        viaM = v > 0 && Number.isFinite(v) ? v : null;
      }
      let dir: number | null = null;
      if (direct && a <= direct.alphaMax) {
        const v = direct.envelope.value(a);
        dir = v > 0 && Number.isFinite(v) ? v : null;
      }
      let ps: number | null = null;
      if (psi && Math.abs(threshold - 0.5) < 1e-12 && 2 * a <= 1) {
        const v = psi.psi(2 * a);
        ps = v > 0 && Number.isFinite(v) ? v : null;
      }
      return { decisionRegret: a, viaModulus: viaM, direct: dir, psiTransform: ps };
    });

    if (lambda !== null) {
      if (lambda > 0) {
        notes.push(`λ-strongly proper with λ = ${fmt(lambda)}: R(η,q) ≥ ${fmt(lambda / 2)}·(η−q)² for all η, q (Agarwal 2014, Def. 7 / Thm 10), so |η−q| ≤ √(2R/λ).`);
      } else {
        notes.push(`λ = 0 (${lambdaAt?.approached ? "approached at q = " : "attained at q = "}${fmt(lambdaAt?.q ?? NaN)}): no strong-properness bound R ≥ (λ/2)(η−q)² holds with λ > 0.`);
      }
    }
    if (psi && psi.calibrated && Math.abs(threshold - 0.5) >= 1e-12) {
      notes.push("The ψ-transform bounds the decision at threshold ½ only; this loss's threshold differs, so the table omits it.");
    }
    const compareAt = 0.01;
    const parts: string[] = [];
    if (modulus) parts.push(`modulus route ≤ ${fmt(modulusRouteBound(modulus, compareAt))}`);
    if (direct) parts.push(`direct ≤ ${fmt(direct.inverse(compareAt))}`);
    if (psi && Math.abs(threshold - 0.5) < 1e-12) parts.push(`ψ-transform ≤ ${fmt(psi.inverse(compareAt) / 2)}`);
    if (parts.length > 0) {
      notes.push(`At surrogate regret ${fmt(compareAt)} the cost-${fmt(threshold)} regret is bounded by: ${parts.join(", ")} (the direct bound is tight, RW09 Thm 3).`);
    }

    let simonenko: SimonenkoRange | null = null;
    try {
      simonenko = modulus ? modulus.simonenkoRange(0.5) : null;
    } catch (err) {
      findings.push(internalError("Simonenko order", err));
    }

    const lambdaText =
      lambda === null ? "λ unknown" : lambda === 0 ? `λ = 0${lambdaAt?.approached ? ` (approached at ${fmt(lambdaAt.q)})` : ""}` : `λ = ${fmt(lambda, 4)}`;
    const modulusText =
      vacuousBelow !== null
        ? `δ** = 0 below ε = ${fmt(vacuousBelow, 4)}`
        : near
          ? `δ ≈ ${fmt(near.coefficient, 4)}${formatPower(near.power)}`
          : "δ unknown";
    const summary = `${lambdaText} · ${modulusText} · exponents ${formatExponent(near?.power ?? null)} / ${formatExponent(directLocal?.power ?? null)}`;

    return {
      lambda,
      lambdaAt,
      weightFeatures: features,
      modulus: near ? { coefficient: near.coefficient, power: near.power } : null,
      vacuousBelow,
      exponents: { viaModulus, direct: directExp, explanation },
      threshold,
      inverseTable,
      findings,
      summary,
      units: unitsFor(threshold),
      simonenko,
      notes,
    };
  } catch (err) {
    findings.push(internalError("analyseCurvature", err));
    return emptyResult(threshold, findings, "internal error");
  }
}

interface ExplainInput {
  viaModulus: number | null;
  direct: number | null;
  threshold: number;
  vacuousBelow: number | null;
  lambda: number | null;
  lambdaAt: { q: number; approached: boolean } | null;
  features: WeightFeatures;
  vanishing: PowerLaw | null;
  weightAtC: number;
}

/** One sentence on why the two exponents differ (null when they agree or one is unknown without a reason). */
function explainExponents(x: ExplainInput): string | null {
  const c = fmt(x.threshold);
  if (x.viaModulus === null && x.direct !== null && x.vacuousBelow !== null) {
    return `δ** = 0 below ε = ${fmt(x.vacuousBelow)} because H is affine on an interval that long, so the modulus route gives no rate, while the direct bound at c = ${c} has exponent ${fmt(x.direct, 4)}.`;
  }
  if (x.viaModulus === null || x.direct === null) return null;
  if (Math.abs(x.viaModulus - x.direct) <= EXPONENT_SAME_TOL) return null;
  const massAtC = x.features.pointMasses.find((p) => Math.abs(p.q - x.threshold) < 1e-6);
  if (massAtC) {
    return `w has a point mass ${fmt(massAtC.mass, 4)} at the threshold c = ${c}, which makes the direct bound linear there; the modulus route reflects the curvature of H everywhere and stays at ${fmt(x.viaModulus, 4)}.`;
  }
  if (x.direct > x.viaModulus && x.direct > 0.5 + EXPONENT_SAME_TOL && !(x.weightAtC < 1e300)) {
    return `w is unbounded at the threshold c = ${c}, which speeds up only the direct bound; the modulus route cannot beat exponent ½ there.`;
  }
  if (x.direct > x.viaModulus && x.direct > 0.5 + EXPONENT_SAME_TOL) {
    return `w grows without bound at the threshold c = ${c} (the direct bound ψ_RW ~ α^${fmt(1 / x.direct, 3)}), which speeds up only the direct bound.`;
  }
  if (x.direct > x.viaModulus && x.lambda === 0 && x.lambdaAt) {
    const k = x.vanishing && x.vanishing.stable && x.vanishing.power > 0 ? fmt(x.vanishing.power, 3) : "k";
    if (x.lambdaAt.approached || x.lambdaAt.q <= 0 || x.lambdaAt.q >= 1) {
      const e = x.lambdaAt.q >= 1 ? "1" : "0";
      const t = e === "0" ? "q" : "(1−q)";
      return `w vanishes at an endpoint (w ~ ${t}^${k} near ${e}): this slows only the modulus route.`;
    }
    return `w vanishes at q = ${fmt(x.lambdaAt.q)} (w ~ |q − ${fmt(x.lambdaAt.q)}|^${k}), away from the threshold c = ${c}: this slows only the modulus route.`;
  }
  if (x.direct > x.viaModulus) {
    return `The curvature of H is smallest away from the threshold c = ${c}: the global modulus route is slower than the local direct bound.`;
  }
  return null;
}

/**
 * The shape of the weight w = −H'' seen from samples of f = −H on a uniform grid: point masses of w
 * (kinks of H, located by the midpoint gap of f and confirmed by a mass that stays put as the step
 * shrinks) and intervals where w = 0 (H affine). A point mass at c gives the cost-weighted loss ℓ_c
 * (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Table 1 and Thm 6); an interval with w = 0
 * makes the loss proper but not strictly proper (Bao 2023, "Proper Losses, Moduli of Convexity, and
 * Surrogate Regret Bounds", COLT, Thm 2).
 */
import type { RealFn } from "../loss-model.js";
import { goldenMin } from "./numeric/minimise.js";
import { gridScale, ROUNDING_GAP_TOL, type UnitGrid } from "./modulus.js";

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

/**
 * A second difference of f on the grid below ZERO_CURVATURE_TOL·max|f| (`gridScale`) counts as zero curvature:
 * its rounding is ≈ 4N·ulp(max|f|) ≈ 5e-13·max|f| for N = 512, while w·h for the standard losses (test/analysis/standard-losses.ts) is ≥ 1e-7.
 */
export const ZERO_CURVATURE_TOL = 1e-10;
/** A grid second difference this many times its neighbours' is a candidate kink (a smooth w gives a ratio near 1–2). */
const KINK_CANDIDATE_RATIO = 4;
/** Successive point-mass estimates (step shrunk 8×) must agree to 2%: a smooth w changes them 8×. */
const KINK_CONFIRM_REL = 0.02;
/** At most this many kink candidates are refined (bounds the work for noisy H). */
const MAX_KINK_CANDIDATES = 16;
/** Bisection steps extending an affine interval into its neighbouring grid cell (50 halvings of a cell of 1/512 reach 1e-18). */
const AFFINE_EXTEND_BISECTIONS = 50;
/** Rounds of kink location, each shrinking the half-width 8× (the last two masses must agree to KINK_CONFIRM_REL). */
const KINK_ROUNDS = 5;

/** w from second differences of f = −H, with a step that stays inside (0,1) and balances truncation and rounding. */
export function numericWeight(f: RealFn): RealFn {
  return (q: number) => {
    if (!(q > 0 && q < 1)) return NaN;
    const h = Math.min(1e-4, q / 2, (1 - q) / 2);
    return (f(q + h) - 2 * f(q) + f(q - h)) / (h * h);
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
  for (let round = 0; round < KINK_ROUNDS; round++) {
    const a = Math.max(d, c - d);
    const b = Math.min(1 - d, c + d);
    if (!(b > a)) return null;
    // Early rounds only need the kink well within the next, 8× smaller half-width (d/2000); the last
    // round sets the mass, whose relative error is the location error over d, so it is located tightly.
    const tol = round < KINK_ROUNDS - 1 ? d / 2000 / (1 + a + b) : 1e-14;
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

/** Grid second differences n·(F[k+1] − 2F[k] + F[k−1]) of f = −H (≈ w·h). */
function secondDifferences(grid: UnitGrid): Float64Array {
  const { n, values: F } = grid;
  const curv = new Float64Array(n + 1);
  for (let k = 1; k < n; k++) curv[k] = n * (F[k + 1]! - 2 * F[k]! + F[k - 1]!);
  return curv;
}

/** Point masses: a local maximum of the second difference standing well above its surroundings, located and confirmed by `locateKink`. */
function findPointMasses(grid: UnitGrid, curv: Float64Array, zeroTol: number): PointMass[] {
  const { n, f } = grid;
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
  return pointMasses.sort((a, b) => a.q - b.q);
}

/**
 * Zero intervals: runs of (near-)zero second differences, confirmed by the midpoint gap of the whole run
 * being at the rounding level (a high-order zero of w, e.g. w ~ t³ at an endpoint, leaves gaps above it).
 */
function findZeroIntervals(grid: UnitGrid, curv: Float64Array, zeroTol: number, gapTol: number, pointMasses: PointMass[]): [number, number][] {
  const { n, f } = grid;
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
  return zeroIntervals;
}

/** The scan behind `detectWeightFeatures`; throws on failure (the curvature analysis reports it as an internal error). */
export function scanWeightFeatures(grid: UnitGrid): WeightFeatures {
  const scale = gridScale(grid);
  const curv = secondDifferences(grid);
  const zeroTol = ZERO_CURVATURE_TOL * scale;
  const pointMasses = findPointMasses(grid, curv, zeroTol);
  const zeroIntervals = findZeroIntervals(grid, curv, zeroTol, ROUNDING_GAP_TOL * scale, pointMasses);
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
  for (let i = 0; i < AFFINE_EXTEND_BISECTIONS && Math.abs(bad - good) > 1e-13; i++) {
    const m = 0.5 * (good + bad);
    if (affine(m)) good = m;
    else bad = m;
  }
  return good;
}

/**
 * The strong-properness constant λ = inf over (0,1) of the weight w, with where it is attained or
 * approached (Agarwal 2014, "Surrogate Regret Bounds for Bipartite Ranking via Strongly Proper Losses",
 * JMLR 15, Def. 7 / Thm 10: λ-strongly proper ⇔ R(η,q) ≥ (λ/2)(η−q)² ⇔ w ≥ λ). When λ = 0 away from a
 * zero interval, the power at which w vanishes there is fitted (it slows the modulus route).
 */
import type { RealFn } from "../loss-model.js";
import { goldenMin } from "./numeric/minimise.js";
import { probabilityGrid } from "./numeric/sampling.js";
import { fitPowerLawAtZero, type PowerLaw } from "./numeric/fits.js";
import { shanksLimit } from "./numeric/extrapolation.js";
import { numericWeight, type WeightFeatures } from "./weight-features.js";

/**
 * |λ| below this (relative to the weight's own scale, `weightScale`) is reported as 0: closed-form weights
 * are exact to rounding, the endpoint extrapolation to ~1e-12. A multiple cw of a weight gets the same
 * decision (λ scales with the loss; Agarwal 2014, Def. 7).
 */
const LAMBDA_ZERO_TOL_CLOSURE = 1e-10;
/** The same for weights from second differences of H, whose rounding is ≈ 4·ulp·|H|/h² ≈ 1e-7 at h = 1e-4. */
const LAMBDA_ZERO_TOL_NUMERIC = 1e-6;
/** Relative disagreement between a supplied weight and second differences of H beyond which the latter is preferred near an endpoint (the numeric estimate is good to ≈1e-3 even for √q-type endpoint behaviour). */
const LAMBDA_CROSSCHECK_REL = 1e-2;

export interface LambdaEstimate {
  /** The sample within 1e-4 of an endpoint that set λ, if any. */
  extremeAt: number | null;
  lambda: number | null;
  at: { q: number; approached: boolean } | null;
  /** w ~ A·t^k next to where λ = 0 sits (t = distance), when λ = 0 and not on a zero interval. */
  vanishingOrder: PowerLaw | null;
  negativeAt: number | null;
  nonFiniteAt: number | null;
}

/** Where λ sits: a point where the infimum is attained, or an endpoint it is approached at. */
type LambdaAt = { q: number; approached: boolean };

/** w sampled on a probability grid: the first NaN sample and the index of the smallest value. */
interface WeightSamples {
  grid: number[];
  vals: number[];
  nonFiniteAt: number | null;
  iMin: number;
}

/**
 * The weight's own scale: the larger of |w(½)| and the median |w| over the samples (the median ignores the
 * endpoint blow-up of w = 1/(q(1−q)) and sees a weight that vanishes at ½, such as 30|q − ½|⁴).
 */
function weightScale(s: WeightSamples, atHalf: number): number {
  const mags = s.vals.filter((v) => Number.isFinite(v)).map((v) => Math.abs(v)).sort((a, b) => a - b);
  const median = mags.length > 0 ? mags[mags.length >> 1]! : 0;
  return Math.max(Number.isFinite(atHalf) ? atHalf : 0, median);
}

function sampleWeight(w: RealFn, numeric: boolean): WeightSamples {
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
  return { grid, vals, nonFiniteAt, iMin };
}

/** Among samples tied with the minimum (constant w, or a zero interval), the interior one nearest ½; −1 if none. */
function preferredMinimum(s: WeightSamples, minVal: number, tieTol: number): number {
  let chosen = -1;
  for (let i = 0; i < s.grid.length; i++) {
    const q = s.grid[i]!;
    if (q < 0.01 || q > 0.99 || !(s.vals[i]! <= minVal + tieTol)) continue;
    if (chosen < 0 || Math.abs(q - 0.5) < Math.abs(s.grid[chosen]! - 0.5)) chosen = i;
  }
  return chosen;
}

/** The limit of w at an endpoint, extrapolated from a geometric ladder (Shanks), and never above the smallest sample. */
function endpointLimit(w: RealFn, numeric: boolean, atZero: boolean, minVal: number): number {
  // Five points so that Shanks' iterated Aitken removes two error terms (e.g. a·t + b·t², or a·√t + b·t).
  const ladder = numeric ? [1e-2, 10 ** -2.5, 1e-3, 10 ** -3.5, 1e-4] : [1e-6, 10 ** -7.5, 1e-9, 10 ** -10.5, 1e-12];
  const seq = ladder.map((t) => w(atZero ? t : 1 - t));
  let lim = seq.every(Number.isFinite) ? shanksLimit(seq) : minVal;
  // The limit of non-negative samples is non-negative: a negative value is extrapolation overshoot (e.g. w ~ √t).
  if (seq.every((v) => v >= 0)) lim = Math.max(0, lim);
  return Math.min(minVal, lim);
}

/** The infimum of w and where it sits: on a zero interval, at an interior minimum (refined), or approached at an endpoint. */
function locateInfimum(w: RealFn, numeric: boolean, features: WeightFeatures, s: WeightSamples, chosen: number, zeroTol: number): { lambda: number; at: LambdaAt } {
  const { grid, vals, iMin } = s;
  const minVal = vals[iMin]!;
  if (features.zeroIntervals.length > 0 && minVal <= zeroTol) {
    const [a, b] = features.zeroIntervals[0]!;
    return { lambda: 0, at: { q: 0.5 * (a + b), approached: false } };
  }
  if (chosen >= 0 || (iMin > 0 && iMin < grid.length - 1)) {
    const i = chosen >= 0 ? chosen : iMin;
    const lo = grid[Math.max(0, i - 1)]!;
    const hi = grid[Math.min(grid.length - 1, i + 1)]!;
    const r = goldenMin(w, lo, hi, 1e-12);
    return { lambda: Math.min(vals[i]!, r.fx), at: { q: r.fx < vals[i]! ? r.x : grid[i]!, approached: false } };
  }
  // The infimum is approached at an endpoint: extrapolate w(t) as t → 0 (Shanks on a geometric ladder).
  const atZero = iMin === 0;
  return { lambda: endpointLimit(w, numeric, atZero, minVal), at: { q: atZero ? 0 : 1, approached: true } };
}

/**
 * When w is zero to within its noise all the way from an endpoint to the minimiser, the infimum is the
 * endpoint limit (second differences of H cannot resolve w ~ t^k with large k near the endpoint).
 */
function zeroReachesEndpoint(s: WeightSamples, at: LambdaAt, zeroTol: number): LambdaAt {
  const { grid, vals } = s;
  const upTo = (from: number, to: number) => {
    const lo = Math.min(from, to);
    const hi = Math.max(from, to);
    for (let i = 0; i < grid.length; i++) if (grid[i]! >= lo && grid[i]! <= hi && !(vals[i]! <= zeroTol)) return false;
    return true;
  };
  if (at.q < 0.5 && upTo(grid[0]!, at.q)) return { q: 0, approached: true };
  if (at.q > 0.5 && upTo(at.q, grid[grid.length - 1]!)) return { q: 1, approached: true };
  return at;
}

/** w ~ A·t^k next to where λ = 0 sits (t the distance from there). */
function vanishingOrderAt(w: RealFn, numeric: boolean, q0: number, typical: number): PowerLaw | null {
  const toward = q0 >= 1 ? (t: number) => w(1 - t) : q0 <= 0 ? (t: number) => w(t) : (t: number) => w(Math.min(1, q0 + t));
  // Second differences of H carry ≈ 4·ulp·|H|/h² ≈ 1e-7 of rounding; below 1e-5 of the weight's scale they are noise.
  return fitPowerLawAtZero(toward, numeric ? 1e-2 : 1e-3, 8, numeric ? 1e-5 * typical : 0);
}

/** λ = inf w on (0,1) with where it is attained or approached (Agarwal 2014 convention: λ = inf w, Thm 10). */
export function estimateLambda(w: RealFn, numeric: boolean, features: WeightFeatures): LambdaEstimate {
  const s = sampleWeight(w, numeric);
  const { nonFiniteAt, iMin } = s;
  if (iMin < 0) return { lambda: null, at: null, vanishingOrder: null, negativeAt: null, nonFiniteAt, extremeAt: null };
  const qMin = s.grid[iMin]!;
  const extremeAt = qMin < 1e-4 || qMin > 1 - 1e-4 ? qMin : null;
  const typical = weightScale(s, Math.abs(w(0.5)));
  const zeroTol = (numeric ? LAMBDA_ZERO_TOL_NUMERIC : LAMBDA_ZERO_TOL_CLOSURE) * typical;
  const minVal = s.vals[iMin]!;
  // Ties (constant w, or a zero interval) prefer an interior point, the one nearest ½.
  const tieTol = numeric ? zeroTol : 1e-9 * Math.abs(minVal) + 1e-12 * typical;
  const chosen = preferredMinimum(s, minVal, tieTol);
  let { lambda, at } = locateInfimum(w, numeric, features, s, chosen, zeroTol);
  let negativeAt: number | null = null;
  if (Math.abs(lambda) <= zeroTol) {
    lambda = 0;
    if (!at.approached && features.zeroIntervals.length === 0) at = zeroReachesEndpoint(s, at, zeroTol);
  } else if (lambda < 0) negativeAt = at.q;
  const vanishingOrder = lambda === 0 && features.zeroIntervals.length === 0 ? vanishingOrderAt(w, numeric, at.q, typical) : null;
  return { lambda, at, vanishingOrder, negativeAt, nonFiniteAt, extremeAt };
}

/**
 * A supplied weight may itself be a finite difference that loses its digits within 1e-4 of an endpoint.
 * When the infimum comes from there, λ is cross-checked with second differences of H whose step stays
 * away from the endpoints; returns that estimate when it is clearly larger (and not negative), else null.
 */
export function crossCheckedLambda(lam: LambdaEstimate, f: RealFn, features: WeightFeatures): LambdaEstimate | null {
  if (lam.lambda === null || lam.extremeAt === null) return null;
  const own = estimateLambda(numericWeight(f), true, features);
  const gap = own.lambda === null ? 0 : own.lambda - lam.lambda;
  if (own.lambda !== null && own.negativeAt === null && gap > LAMBDA_CROSSCHECK_REL * (1 + Math.abs(own.lambda))) return own;
  return null;
}

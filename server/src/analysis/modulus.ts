/**
 * The modulus of convexity of f = −H in Bao's midpoint convention, its biconjugate δ**, the inverse of
 * δ**, and its behaviour near 0.
 *
 * Definition (Bao 2023, "Proper Losses, Moduli of Convexity, and Surrogate Regret Bounds", COLT, Def. 4,
 * eq. (9)): δ(ε) = inf over |η−η'| ≥ ε of (f(η)+f(η'))/2 − f((η+η')/2), no extra factor. For convex f the
 * infimum is attained at |η−η'| = ε, so δ(ε) = min over midpoints m ∈ [ε/2, 1−ε/2] of the gap at
 * half-width ε/2.
 *
 * Design for speed: f is evaluated once on one uniform grid of N+1 points; the grid gaps at every
 * half-width j/N give upper approximations of δ on ε_j = 2j/N and the basins of the minimising midpoint.
 * Exact values refine those basins by golden-section search with the real f.
 */
import type { RealFn } from "../loss-model.js";
import { goldenMin, robustMin } from "./numeric/minimise.js";
import { boundedUnitFn } from "./numeric/limits.js";
import { fitPowerLawAtZero, type PowerLaw } from "./numeric/fits.js";
import { LowerEnvelope } from "./numeric/envelope.js";

/**
 * The scale of f for zero tests: max |f| on the grid. Rounding of f's values is a few ulps of it, and a
 * multiple c·f (a loss scaled by c) gets the same decisions; an absolute floor of 1 did not. Never 0, so a
 * tolerance that is a multiple of it stays a valid upper bound.
 */
export function gridScale(grid: { scale: number }): number {
  return Math.max(grid.scale, Number.MIN_VALUE);
}
/** Default number of grid cells on [0,1] (N). 512 keeps the O(N²/4) grid scan well under 1 ms; exact values come from refinement, not from the grid. */
export const MODULUS_GRID = 512;
/**
 * A midpoint gap below ZERO_GAP_TOL·max|f| is a candidate zero: the rounding of (f(a)+f(b))/2 − f(m)
 * is a few ulps of max|f| (≈ 1e-15 relative), and most strictly convex f of table L (test/reference/proper-losses.md) have gaps ≥ 1e-9
 * at the first grid width. Losses with a high-order zero of w at an endpoint (w ~ t³) fall below it, so a
 * vacuous stretch is only accepted when the gap at half its width is at the rounding level (ROUNDING_GAP_TOL).
 */
export const ZERO_GAP_TOL = 1e-12;
/** Gaps of an affine stretch are rounding only: (f(a)+f(b))/2 − f(m) with three rounded values is within ≈ 2–4 ulps of max|f|, i.e. 1e-15·max|f|. */
export const ROUNDING_GAP_TOL = 1e-15;
/**
 * Golden-section tolerance on the midpoint (relative to 1 + |a| + |b|). The gap is flat at its minimum, so
 * its error is ≈ ½·g''·Δm² with g'' ≲ 2 for the losses of table L: Δm ≈ 2e-7 gives ≈ 4e-14, far below the 1e-8
 * target, in about 25 iterations per basin (the cost of every exact δ).
 */
const MIDPOINT_TOL = 1e-7;

/** Options of `buildModulusModel`. */
export interface ModulusOptions {
  /** Target absolute accuracy of δ; the midpoint tolerance is tightened below MIDPOINT_TOL only for targets under 1e-8. */
  accuracy?: number;
}

/** Midpoint tolerance for an accuracy target: Δm ≈ √(2·accuracy/g'') with g'' ≲ 2, kept within [1e-10, MIDPOINT_TOL]. */
function midpointTolFor(accuracy: number | undefined): number {
  if (accuracy === undefined || !(accuracy > 0)) return MIDPOINT_TOL;
  return Math.min(MIDPOINT_TOL, Math.max(1e-10, Math.sqrt(accuracy) * 1e-3));
}

/** f sampled on the uniform grid k/N, k = 0..N (shared by the modulus and the weight-feature scan). */
export interface UnitGrid {
  n: number;
  f: RealFn;
  values: Float64Array;
  /** max |f| on the grid (the scale for zero tests). */
  scale: number;
  /** First grid point where f is not finite, or null. */
  nonFiniteAt: number | null;
}

/** Samples f (already wrapped by `boundedUnitFn`) on k/N. */
export function sampleUnitGrid(f: RealFn, n = MODULUS_GRID): UnitGrid {
  const values = new Float64Array(n + 1);
  let scale = 0;
  let nonFiniteAt: number | null = null;
  for (let k = 0; k <= n; k++) {
    const y = f(k / n);
    values[k] = y;
    if (Number.isFinite(y)) scale = Math.max(scale, Math.abs(y));
    else if (nonFiniteAt === null) nonFiniteAt = k / n;
  }
  return { n, f, values, scale, nonFiniteAt };
}

export interface SimonenkoRange {
  /** ε* of Bao23 Thm 10. */
  epsStar: number;
  /** p = sup S̃ on (0, ε*], q = inf S̃ on (0, ε*] (sampled). */
  sup: number;
  inf: number;
  /** κ₁ = δ**(ε*)/ε*^p and κ₂ = δ**(ε*)/ε*^q: κ₁ε^p ≤ δ**(ε) ≤ κ₂ε^q on [0, ε*]. */
  kappa1: number;
  kappa2: number;
}

/** Everything about δ and δ** for one convex f on [0,1]. */
export interface ModulusModel {
  grid: UnitGrid;
  /** Exact δ(ε) (ε ∈ [0,1]); +∞ for ε > 1 (infimum over an empty set). */
  delta(eps: number): number;
  /** δ**(ε): the lower convex envelope on [0,1]. */
  envelope: LowerEnvelope;
  /** (δ**)⁻¹(r) = sup{ε : δ**(ε) ≤ r}, at most 1. */
  inverse(r: number): number;
  /** δ** = 0 on (0, ε0]: ε0, or null when δ** > 0 on (0,1]. */
  vacuousBelow: number | null;
  /** δ**(ε) ≈ coefficient·ε^power as ε → 0 (null when vacuous or not positive). */
  nearZero: PowerLaw | null;
  /** Simonenko order S(t) = t·(δ**)'(t)/δ**(t) (Bao 2023, Def. 9). */
  simonenko(t: number): number;
  /** The range of S on (0, ε*] and the constants of Bao 2023, Thm 10. */
  simonenkoRange(epsStar: number): SimonenkoRange | null;
}

/** The midpoint gap (f(m−d)+f(m+d))/2 − f(m). */
function midpointGap(f: RealFn, m: number, d: number): number {
  return 0.5 * (f(m - d) + f(m + d)) - f(m);
}

/**
 * δ(ε) for a convex f on [0,1] (Bao 2023, Def. 4, eq. (9)) by direct minimisation over the midpoint:
 * a 128-point scan then golden-section refinement of the best basins, the ends kept as they are.
 * ε ≤ 0 gives 0 and ε > 1 gives +∞ (an infimum over the empty set). Never throws: NaN on failure.
 */
export function modulusOfConvexity(f: RealFn, eps: number): number {
  try {
    if (Number.isNaN(eps)) return NaN;
    if (eps <= 0) return 0;
    if (eps > 1) return Infinity;
    const g = boundedUnitFn(f);
    const d = eps / 2;
    if (eps === 1) return Math.max(0, midpointGap(g, 0.5, 0.5));
    const best = robustMin((m) => midpointGap(g, m, d), d, 1 - d, 128, 4, MIDPOINT_TOL);
    return Number.isFinite(best.fx) ? Math.max(0, best.fx) : NaN;
  } catch {
    return NaN;
  }
}

/**
 * Builds the modulus model of f (convex on [0,1]; pass −H). f should already be wrapped by
 * `boundedUnitFn` when a grid is supplied; otherwise it is wrapped here.
 */
export function buildModulusModel(fRaw: RealFn, gridIn?: UnitGrid, options?: ModulusOptions): ModulusModel {
  const midpointTol = midpointTolFor(options?.accuracy);
  const grid = gridIn ?? sampleUnitGrid(boundedUnitFn(fRaw));
  const { n, values: F } = grid;
  const f = grid.f;
  const half = n >> 1;
  const zeroTol = ZERO_GAP_TOL * gridScale(grid);

  // Grid gaps for every half-width j: the row minimum (an upper approximation of δ(2j/N)).
  const gridDelta = new Float64Array(half + 1);
  for (let j = 1; j <= half; j++) {
    let best = Infinity;
    for (let k = j; k <= n - j; k++) {
      const gap = 0.5 * (F[k - j]! + F[k + j]!) - F[k]!;
      if (gap < best) best = gap;
    }
    gridDelta[j] = Math.max(0, best);
  }

  /** Midpoint basins at half-width j: local minima of the grid row within a margin of the row minimum. */
  function basins(j: number): number[] {
    const margin = 2 * Math.max(Math.abs((gridDelta[Math.min(half, j + 1)] ?? 0) - gridDelta[j]!), Math.abs(gridDelta[j]! - gridDelta[Math.max(1, j - 1)]!)) + zeroTol;
    const rowMin = gridDelta[j]!;
    const found: { k: number; v: number }[] = [];
    let prev = Infinity;
    let cur = 0.5 * (F[0]! + F[2 * j]!) - F[j]!;
    for (let k = j; k <= n - j; k++) {
      const next = k + 1 <= n - j ? 0.5 * (F[k + 1 - j]! + F[k + 1 + j]!) - F[k + 1]! : Infinity;
      if (cur <= prev && cur <= next && cur <= rowMin + margin) found.push({ k, v: cur });
      prev = cur;
      cur = next;
    }
    found.sort((a, b) => a.v - b.v);
    return found.slice(0, 4).map((x) => x.k / n);
  }

  function delta(eps: number): number {
    if (Number.isNaN(eps)) return NaN;
    if (eps <= 0) return 0;
    if (eps > 1) return Infinity;
    const d = eps / 2;
    if (eps >= 1) return Math.max(0, midpointGap(f, 0.5, 0.5));
    const gap = (m: number) => midpointGap(f, m, d);
    const lo = d;
    const hi = 1 - d;
    let best = Math.min(gap(lo), gap(hi));
    const j = Math.min(half, Math.max(1, Math.round(eps * half)));
    // Basins from the neighbouring grid rows, merged when closer than the bracket half-width.
    const width = 3 / n;
    const centres: number[] = [];
    for (const jj of [j, Math.max(1, j - 1), Math.min(half, j + 1)]) {
      for (const m of basins(jj)) if (!centres.some((c) => Math.abs(c - m) <= width)) centres.push(m);
    }
    for (const m0 of centres) {
      const a = Math.max(lo, m0 - width);
      const b = Math.min(hi, m0 + width);
      if (!(b > a)) continue;
      const r = goldenMin(gap, a, b, midpointTol);
      if (r.fx < best) best = r.fx;
    }
    return Number.isFinite(best) ? Math.max(0, best) : NaN;
  }

  const epsGrid = new Float64Array(half + 1);
  for (let j = 0; j <= half; j++) epsGrid[j] = (2 * j) / n;
  const envelope = new LowerEnvelope(epsGrid, gridDelta, delta);

  // δ** = 0 exactly on (0, ε0] where ε0 is the largest ε with δ(ε) = 0 (δ is non-decreasing, so its envelope is 0 there and positive after).
  let vacuousBelow: number | null = null;
  if (gridDelta[1]! <= zeroTol) {
    let j0 = 1;
    while (j0 < half && gridDelta[j0 + 1]! <= zeroTol) j0++;
    let a = epsGrid[j0]!;
    let b = Math.min(1, epsGrid[Math.min(half, j0 + 2)]!);
    if (delta(b) <= zeroTol) a = b;
    else {
      for (let i = 0; i < 60 && b - a > 1e-13; i++) {
        const m = 0.5 * (a + b);
        if (delta(m) <= zeroTol) a = m;
        else b = m;
      }
    }
    // A genuine affine stretch gives gaps at the rounding level (a few ulps of max|f|); a tiny power law
    // (w ~ t^k with large k at an endpoint) gives gaps well above it at half the width, so it is not vacuous.
    if (delta(a / 2) <= ROUNDING_GAP_TOL * gridScale(grid)) vacuousBelow = a;
  }

  // Below ≈1e-10·(1 + max|f|) a gap carries a relative rounding error above 1e-6, which would bend the slopes.
  const fitFloor = 1e-10 * gridScale(grid);
  const nearZero = vacuousBelow === null ? fitPowerLawAtZero((e) => envelope.value(e), 0.05, 8, fitFloor) : null;

  function simonenko(t: number): number {
    if (!(t > 0 && t <= 1)) return NaN;
    const v = envelope.value(t);
    if (!(v > 0)) return NaN;
    // Below ε = 0.05, where δ is tiny, a relative step of 1e-2 keeps rounding (≈ ulp·|f|/(h·δ')) under 1e-7
    // and the five-point stencil keeps the truncation error O((h/t)⁴); above it a three-point stencil with
    // relative step 1e-4 has truncation ≈ 1e-8 and rounding ≈ 1e-11, at two evaluations fewer.
    const small = t < 0.05;
    const h = t * (small ? 1e-2 : 1e-4);
    const e = (x: number) => envelope.value(x);
    let slope: number;
    if (t + 2 * h > 1) slope = (3 * v - 4 * e(t - h) + e(t - 2 * h)) / (2 * h);
    else if (small) slope = (8 * (e(t + h) - e(t - h)) - (e(t + 2 * h) - e(t - 2 * h))) / (12 * h);
    else slope = (e(t + h) - e(t - h)) / (2 * h);
    return (t * slope) / v;
  }

  function simonenkoRange(epsStar: number): SimonenkoRange | null {
    if (vacuousBelow !== null || !(epsStar > 0 && epsStar <= 1)) return null;
    let sup = -Infinity;
    let inf = Infinity;
    const pts = 8;
    for (let i = 0; i <= pts; i++) {
      // Log-spaced from ε*·10⁻³ to ε*: the order function varies on a logarithmic scale near 0.
      const t = epsStar * 10 ** (-3 + (3 * i) / pts);
      const s = simonenko(t);
      if (!Number.isFinite(s)) continue;
      sup = Math.max(sup, s);
      inf = Math.min(inf, s);
    }
    if (!Number.isFinite(sup) || !Number.isFinite(inf)) return null;
    const v = envelope.value(epsStar);
    return { epsStar, sup, inf, kappa1: v / epsStar ** sup, kappa2: v / epsStar ** inf };
  }

  return {
    grid,
    delta,
    envelope,
    inverse: (r: number) => {
      if (Number.isNaN(r)) return NaN;
      if (r <= 0) return vacuousBelow ?? 0;
      return envelope.inverse(r);
    },
    vacuousBelow,
    nearZero,
    simonenko,
    simonenkoRange,
  };
}

/**
 * Generic primitives for the curvature and surrogate-regret analyses: memoised evaluation with endpoint
 * limits, lower convex hulls, a lower convex envelope (biconjugate) of a sampled function with exact
 * refinement and inversion, bracketed root finding, power-law fitting near 0 and rational snapping.
 * Everything is a pure function of numbers (no I/O, no globals).
 */
import { goldenMin } from "./numeric.js";
import type { RealFn } from "../loss-model.js";

/** Points tried, in order, for the limit of a function at 0 when f(0) itself is not finite (e.g. 0·ln 0 evaluated as NaN). */
const LEFT_LIMIT_PROBES = [0, 1e-300, 1e-200, 1e-100, 1e-50, 1e-20, 1e-16];
/** The same probes mirrored at 1 (1 − 2⁻⁵³ is the largest double below 1). */
const RIGHT_LIMIT_PROBES = [1, 1 - 2 ** -53, 1 - 2 ** -52, 1 - 1e-15, 1 - 1e-12];

/**
 * The value of f at an endpoint of [0,1] as a limit: f(x) when finite, otherwise f at the nearest probe
 * point where it is finite. Returns NaN when no probe gives a finite value.
 */
export function endpointLimit(f: RealFn, at: 0 | 1): number {
  const probes = at === 0 ? LEFT_LIMIT_PROBES : RIGHT_LIMIT_PROBES;
  for (const x of probes) {
    let y: number;
    try {
      y = f(x);
    } catch {
      y = NaN;
    }
    if (Number.isFinite(y)) return y;
  }
  return NaN;
}

/** Slots of the direct-mapped evaluation cache of `boundedUnitFn` (a power of two). */
const CACHE_SLOTS = 8192;

/**
 * Wraps f on [0,1]: arguments are clamped into [0,1], the endpoint values are the limits from
 * `endpointLimit`, thrown exceptions become NaN, and evaluations are cached in a small direct-mapped
 * table keyed by the bits of x (the analyses revisit grid points and bracket ends, and f may be
 * expensive when H is itself a minimisation). A Map keyed by doubles was measured to cost more than
 * evaluating a closed-form H, hence the fixed table.
 */
export function boundedUnitFn(f: RealFn): RealFn {
  const f0 = endpointLimit(f, 0);
  const f1 = endpointLimit(f, 1);
  const keys = new Float64Array(CACHE_SLOTS).fill(NaN);
  const vals = new Float64Array(CACHE_SLOTS);
  const scratch = new Float64Array(1);
  const bits = new Uint32Array(scratch.buffer);
  return (x: number) => {
    if (!(x > 0)) return f0;
    if (!(x < 1)) return f1;
    scratch[0] = x;
    const slot = (bits[0]! ^ Math.imul(bits[1]!, 0x9e3779b1)) & (CACHE_SLOTS - 1);
    if (keys[slot] === x) return vals[slot]!;
    let y: number;
    try {
      y = f(x);
    } catch {
      y = NaN;
    }
    keys[slot] = x;
    vals[slot] = y;
    return y;
  };
}

/**
 * Indices of the lower convex hull of points (xs[i], ys[i]) with xs strictly increasing (Andrew's
 * monotone chain, lower half). Points with non-finite y are skipped.
 */
export function lowerHullIndices(xs: ArrayLike<number>, ys: ArrayLike<number>): number[] {
  const hull: number[] = [];
  for (let i = 0; i < xs.length; i++) {
    const yi = ys[i]!;
    if (!Number.isFinite(yi)) continue;
    while (hull.length >= 2) {
      const a = hull[hull.length - 2]!;
      const b = hull[hull.length - 1]!;
      // Cross product of (b − a) and (i − a): a non-positive value means b lies on or above the chord a–i.
      const cross = (xs[b]! - xs[a]!) * (yi - ys[a]!) - (ys[b]! - ys[a]!) * (xs[i]! - xs[a]!);
      if (cross <= 0) hull.pop();
      else break;
    }
    hull.push(i);
  }
  return hull;
}

/** Linear interpolation through (x0, y0) and (x1, y1) at x. */
function lerp(x0: number, y0: number, x1: number, y1: number, x: number): number {
  if (x1 === x0) return Math.min(y0, y1);
  return y0 + ((y1 - y0) * (x - x0)) / (x1 - x0);
}

/** Index i of the last element with arr[i] <= x (binary search; arr sorted increasing, x >= arr[0]). */
function lastAtOrBelow(arr: ArrayLike<number>, x: number): number {
  let lo = 0;
  let hi = arr.length - 1;
  if (x >= arr[hi]!) return hi;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (arr[mid]! <= x) lo = mid;
    else hi = mid;
  }
  return lo;
}

/**
 * Illinois (modified regula falsi) root finding for g on [a, b] with g(a) ≤ 0 ≤ g(b) (g non-decreasing
 * in the intended use). Converges superlinearly for smooth g and never leaves the bracket; bounded by
 * `maxIter`. Returns the bracket end where |g| is smallest when the tolerance is not reached.
 */
export function findRootBracketed(g: RealFn, a: number, b: number, xTol = 1e-14, maxIter = 100): number {
  let ga = g(a);
  let gb = g(b);
  if (ga === 0) return a;
  if (gb === 0) return b;
  if (!(ga < 0 && gb > 0)) return Math.abs(ga) <= Math.abs(gb) ? a : b;
  let side = 0;
  for (let i = 0; i < maxIter && b - a > xTol * (1 + Math.abs(a)); i++) {
    let x = (a * gb - b * ga) / (gb - ga);
    // Fall back to bisection when the secant step lands on (or outside) the bracket through rounding.
    if (!(x > a && x < b)) x = 0.5 * (a + b);
    const gx = g(x);
    if (gx === 0) return x;
    if (gx < 0) {
      a = x;
      ga = gx;
      if (side === -1) gb /= 2;
      side = -1;
    } else {
      b = x;
      gb = gx;
      if (side === 1) ga /= 2;
      side = 1;
    }
    // Every fifth step bisects, so a pathological (e.g. piecewise-flat) g still shrinks the bracket.
    if (i % 5 === 4) {
      const m = 0.5 * (a + b);
      const gm = g(m);
      if (gm === 0) return m;
      if (gm < 0) {
        a = m;
        ga = gm;
      } else {
        b = m;
        gb = gm;
      }
      side = 0;
    }
  }
  return Math.abs(ga) <= Math.abs(gb) ? a : b;
}

/**
 * The lower convex envelope (biconjugate g**) of a function g on [lo, hi] that is sampled on a grid and
 * can also be evaluated exactly.
 *
 * Where the hull of the samples joins neighbouring samples, g is convex there and g** = g, so the value
 * is the exact evaluation (clipped by the exact chord). Where the hull bridges over samples, g** is
 * affine between two contact points; these are refined once, lazily, by exact evaluations on a sub-grid
 * around each end of the bridge.
 */
export class LowerEnvelope {
  readonly xs: Float64Array;
  readonly ys: Float64Array;
  /** Indices into xs of the sampled hull vertices. */
  readonly hull: number[];
  private readonly exact: RealFn;
  private readonly exactCache = new Map<number, number>();
  private readonly bridgeCache = new Map<number, { x0: number; y0: number; x1: number; y1: number }>();
  private readonly hullX: Float64Array;
  private readonly hullY: Float64Array;

  /**
   * @param xs increasing sample abscissae (the first is the left end of the domain)
   * @param ys sampled values (upper approximations of g are fine: the exact evaluator corrects them)
   * @param exact the exact evaluation of g
   */
  constructor(xs: ArrayLike<number>, ys: ArrayLike<number>, exact: RealFn) {
    this.xs = Float64Array.from(xs as ArrayLike<number>);
    this.ys = Float64Array.from(ys as ArrayLike<number>);
    this.exact = exact;
    this.hull = lowerHullIndices(this.xs, this.ys);
    this.hullX = Float64Array.from(this.hull.map((i) => this.xs[i]!));
    this.hullY = Float64Array.from(this.hull.map((i) => this.ys[i]!));
  }

  get lo(): number {
    return this.xs[0]!;
  }

  get hi(): number {
    return this.xs[this.xs.length - 1]!;
  }

  /** Exact g(x), memoised. */
  exactValue(x: number): number {
    const hit = this.exactCache.get(x);
    if (hit !== undefined) return hit;
    const y = this.exact(x);
    this.exactCache.set(x, y);
    return y;
  }

  /** The envelope of the samples alone (piecewise linear; cheap, for plotting). */
  approxValue(x: number): number {
    if (this.hull.length === 0) return NaN;
    if (x <= this.hullX[0]!) return this.hullY[0]!;
    const k = lastAtOrBelow(this.hullX, x);
    if (k >= this.hullX.length - 1) return this.hullY[this.hullX.length - 1]!;
    return lerp(this.hullX[k]!, this.hullY[k]!, this.hullX[k + 1]!, this.hullY[k + 1]!, x);
  }

  /** Smallest x with approxValue(x) ≥ r on a non-decreasing envelope (hi when r is above the range). */
  approxInverse(r: number): number {
    const n = this.hullX.length;
    if (n === 0) return NaN;
    if (r < this.hullY[0]!) return this.hullX[0]!;
    for (let k = 0; k < n - 1; k++) {
      const y0 = this.hullY[k]!;
      const y1 = this.hullY[k + 1]!;
      if (y1 > r && y1 > y0) return lerp(y0, this.hullX[k]!, y1, this.hullX[k + 1]!, r);
    }
    return this.hullX[n - 1]!;
  }

  /** The exact envelope value g**(x), x ∈ [lo, hi]. */
  value(x: number): number {
    const n = this.hull.length;
    if (n === 0) return NaN;
    if (x <= this.lo) return this.exactValue(this.lo);
    if (x >= this.hi) {
      const last = this.hull[n - 1]!;
      // The envelope at the right end equals g there unless the hull skipped the last sample (not finite).
      return last === this.xs.length - 1 ? Math.min(this.exactValue(this.hi), this.ys[last]!) : NaN;
    }
    const k = Math.min(lastAtOrBelow(this.hullX, x), n - 2);
    const ia = this.hull[k]!;
    const ib = this.hull[k + 1]!;
    if (ib === ia + 1) {
      // Convex region: g** = g here; clip by the exact chord in case g is not convex below the grid scale.
      const xa = this.xs[ia]!;
      const xb = this.xs[ib]!;
      const chord = lerp(xa, this.exactValue(xa), xb, this.exactValue(xb), x);
      const gx = this.exactValue(x);
      return Number.isFinite(gx) ? Math.min(gx, chord) : chord;
    }
    const bridge = this.refineBridge(k);
    if (x >= bridge.x0 && x <= bridge.x1) return lerp(bridge.x0, bridge.y0, bridge.x1, bridge.y1, x);
    // Between a sampled hull vertex and its refined contact point the envelope touches g again.
    const gx = this.exactValue(x);
    return Number.isFinite(gx) ? gx : lerp(bridge.x0, bridge.y0, bridge.x1, bridge.y1, x);
  }

  /**
   * Refines the contact points of the hull bridge from hull vertex k to k+1: exact values on a sub-grid
   * of ±1 sample step around each end, then the lower hull of those points.
   */
  private refineBridge(k: number): { x0: number; y0: number; x1: number; y1: number } {
    const hit = this.bridgeCache.get(k);
    if (hit) return hit;
    const ia = this.hull[k]!;
    const ib = this.hull[k + 1]!;
    const pts: { x: number; y: number }[] = [];
    const SUB = 8;
    for (const i of [ia, ib]) {
      const left = this.xs[Math.max(0, i - 1)]!;
      const right = this.xs[Math.min(this.xs.length - 1, i + 1)]!;
      for (let s = 0; s <= 2 * SUB; s++) {
        const x = s <= SUB ? left + ((this.xs[i]! - left) * s) / SUB : this.xs[i]! + ((right - this.xs[i]!) * (s - SUB)) / SUB;
        const y = this.exactValue(x);
        if (Number.isFinite(y)) pts.push({ x, y });
      }
    }
    pts.sort((p, q) => p.x - q.x);
    const uniq: { x: number; y: number }[] = [];
    for (const p of pts) if (uniq.length === 0 || p.x > uniq[uniq.length - 1]!.x) uniq.push(p);
    const idx = lowerHullIndices(
      uniq.map((p) => p.x),
      uniq.map((p) => p.y),
    );
    // The bridge is the hull edge that spans the gap between the two sub-grids.
    const gapLo = this.xs[Math.min(this.xs.length - 1, ia + 1)]!;
    const gapHi = this.xs[Math.max(0, ib - 1)]!;
    let best = { x0: this.xs[ia]!, y0: this.exactValue(this.xs[ia]!), x1: this.xs[ib]!, y1: this.exactValue(this.xs[ib]!) };
    for (let t = 0; t + 1 < idx.length; t++) {
      const p = uniq[idx[t]!]!;
      const q = uniq[idx[t + 1]!]!;
      if (p.x <= gapLo && q.x >= gapHi) {
        best = { x0: p.x, y0: p.y, x1: q.x, y1: q.y };
        break;
      }
    }
    this.bridgeCache.set(k, best);
    return best;
  }

  /**
   * sup{x : g**(x) ≤ r} for a non-decreasing envelope: the point where it reaches r (hi when r is above
   * the envelope's maximum, lo when r is below its minimum).
   */
  inverse(r: number, xTol = 1e-13): number {
    if (Number.isNaN(r)) return NaN;
    const yHi = this.value(this.hi);
    if (!(r < yHi)) return this.hi;
    // The sampled hull brackets the crossing; widen until the exact envelope brackets it too.
    let a = this.approxInverse(r);
    let b = a;
    const step = (this.hi - this.lo) / Math.max(1, this.xs.length - 1);
    let fa = this.value(a) - r;
    for (let i = 0; i < 60 && fa > 0 && a > this.lo; i++) {
      a = Math.max(this.lo, a - step * 2 ** i);
      fa = this.value(a) - r;
    }
    if (fa > 0) return this.lo;
    let fb = this.value(b) - r;
    for (let i = 0; i < 60 && fb <= 0 && b < this.hi; i++) {
      a = b;
      b = Math.min(this.hi, b + step * 2 ** i);
      fb = this.value(b) - r;
    }
    if (fb <= 0) return this.hi;
    // Flat stretches (g** = r on an interval) need the right end; the root finder returns a crossing point.
    return findRootBracketed((x) => this.value(x) - r, a, b, xTol);
  }
}

export interface PowerLaw {
  /** Estimated power p (after snapping, when snapped). */
  power: number;
  /** The estimate before snapping. */
  rawPower: number;
  coefficient: number;
  /** True when the power was replaced by a nearby simple rational. */
  snapped: boolean;
  /** True when the last local log-log slopes agree to POWER_STABILITY_TOL. */
  stable: boolean;
  /** Local log-log slopes from the largest x to the smallest. */
  slopes: number[];
}

/** Two successive local log-log slopes must agree to this for the power to count as stable (common practice: a 5% band on the exponent). */
export const POWER_STABILITY_TOL = 0.05;
/**
 * A power within this of a rational n/d with d ≤ 4 is snapped to it. The Aitken-extrapolated slopes of
 * the §7 losses land within 1e-6 of their exact powers, and distinct rationals with d ≤ 4 are at least
 * 1/12 apart, so 1e-3 snaps only genuine ties.
 */
export const POWER_SNAP_TOL = 1e-3;

/** Aitken Δ² extrapolation of the last three terms of a sequence (the last term when it does not converge geometrically). */
export function aitkenLimit(seq: number[]): number {
  const n = seq.length;
  if (n < 3) return seq[n - 1] ?? NaN;
  const a = seq[n - 3]!;
  const b = seq[n - 2]!;
  const c = seq[n - 1]!;
  const d1 = b - a;
  const d2 = c - b;
  const denom = d2 - d1;
  if (d1 === 0 || d2 === 0 || !Number.isFinite(denom) || denom === 0) return c;
  const ratio = d2 / d1;
  // Only a geometric, shrinking correction is extrapolated; oscillation or growth keeps the last term.
  if (!(ratio > 0 && ratio < 0.95)) return c;
  const lim = c - (d2 * d2) / denom;
  return Number.isFinite(lim) ? lim : c;
}

/**
 * Iterated Aitken Δ² (Shanks) extrapolation: each pass removes one geometric error component, so a ladder
 * of 2k+1 terms handles k components (e.g. w(t) = λ + a·t + b·t² sampled at t = 10^{−i}).
 */
export function shanksLimit(seq: number[]): number {
  let cur = seq.slice();
  while (cur.length >= 3) {
    const next: number[] = [];
    for (let i = 0; i + 2 < cur.length; i++) next.push(aitkenLimit(cur.slice(i, i + 3)));
    cur = next;
  }
  return cur[cur.length - 1] ?? NaN;
}

/** Snaps p to a rational n/d (d = 1..4) within tol; returns null when none is that close. */
export function snapRational(p: number, tol = POWER_SNAP_TOL): number | null {
  if (!Number.isFinite(p)) return null;
  let best: number | null = null;
  let bestErr = Infinity;
  for (let d = 1; d <= 4; d++) {
    const r = Math.round(p * d) / d;
    const err = Math.abs(p - r);
    if (err <= tol && err < bestErr - 1e-15) {
      best = r;
      bestErr = err;
    }
  }
  return best;
}

/**
 * Fits g(x) ≈ coefficient·x^power as x → 0⁺ from g at x0·2^{−i}, i = 0..n−1: local log-log slopes,
 * Aitken-extrapolated, snapped to a simple rational within POWER_SNAP_TOL, then the coefficient
 * g(x)/x^power extrapolated the same way. The ladder stops early where g falls below `floor` (its rounding
 * level). Returns null when g is not positive and finite on the ladder.
 */
export function fitPowerLawAtZero(g: RealFn, x0: number, n = 8, floor = 0): PowerLaw | null {
  const xs: number[] = [];
  const ys: number[] = [];
  for (let i = 0; i < n; i++) {
    const x = x0 * 2 ** -i;
    const y = g(x);
    // Values below `floor` are dominated by rounding in g; the ladder stops there (keeping at least four points).
    if (xs.length >= 4 && y < floor) break;
    if (!(Number.isFinite(y) && y > 0)) return null;
    xs.push(x);
    ys.push(y);
  }
  n = xs.length;
  const slopes: number[] = [];
  for (let i = 0; i + 1 < n; i++) slopes.push(Math.log2(ys[i]! / ys[i + 1]!));
  const rawPower = aitkenLimit(slopes);
  const last = slopes[slopes.length - 1]!;
  const prev = slopes[slopes.length - 2] ?? last;
  const stable = Math.abs(last - prev) <= POWER_STABILITY_TOL && Math.abs(rawPower - last) <= POWER_STABILITY_TOL;
  const snappedTo = snapRational(rawPower);
  const power = snappedTo ?? rawPower;
  const coefs = ys.map((y, i) => y / xs[i]! ** power);
  const coefficient = aitkenLimit(coefs);
  return { power, rawPower, coefficient, snapped: snappedTo !== null, stable, slopes };
}

/**
 * Minimum of g over [a, b] robust to several basins: a scan of `scan` points, then golden-section
 * refinement of the best `refine` local minima of the scan (and the two ends, which are kept as they are).
 */
export function robustMin(g: RealFn, a: number, b: number, scan = 64, refine = 3, tol = 1e-10): { x: number; fx: number } {
  if (!(b > a)) return { x: a, fx: g(a) };
  const xs = new Array<number>(scan + 1);
  const ys = new Array<number>(scan + 1);
  for (let i = 0; i <= scan; i++) {
    xs[i] = a + ((b - a) * i) / scan;
    const y = g(xs[i]!);
    ys[i] = Number.isNaN(y) ? Infinity : y;
  }
  const locals: number[] = [];
  for (let i = 0; i <= scan; i++) {
    const l = i > 0 ? ys[i - 1]! : Infinity;
    const r = i < scan ? ys[i + 1]! : Infinity;
    if (ys[i]! <= l && ys[i]! <= r) locals.push(i);
  }
  locals.sort((i, j) => ys[i]! - ys[j]!);
  let best = { x: xs[0]!, fx: ys[0]! };
  for (let i = 0; i <= scan; i++) if (ys[i]! < best.fx) best = { x: xs[i]!, fx: ys[i]! };
  for (const i of locals.slice(0, refine)) {
    const lo = xs[Math.max(0, i - 1)]!;
    const hi = xs[Math.min(scan, i + 1)]!;
    const m = goldenMin(g, lo, hi, tol);
    if (m.fx < best.fx) best = m;
  }
  return best;
}

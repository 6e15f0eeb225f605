/**
 * Lower convex hulls of sampled points and the lower convex envelope (biconjugate) of a sampled function
 * with exact refinement and inversion.
 */
import type { RealFn } from "../../loss-model.js";
import { findRootBracketed } from "./roots.js";

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

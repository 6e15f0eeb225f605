/**
 * Numeric primitives used by the properness engine on top of `numeric.ts`: finite differences that stay
 * inside (0,1), memoisation of expensive closures, tabulated integrals on (0,1) that tolerate integrable
 * endpoint singularities, and a monotone inverse by bisection. Everything is a pure function of numbers.
 */
import { bisect, integrate } from "./numeric.js";

/** Relative step of first differences away from the endpoints (balances truncation ~h² against rounding ~eps/h). */
export const DIFF_STEP = 1e-6;
/** Fraction of the distance to the nearest endpoint a step may take, so differences never leave (0,1). */
export const DIFF_ENDPOINT_FRACTION = 1e-3;
/** Step of second differences (rounding error grows like eps/h², so the step is larger than for first differences). */
export const DIFF2_STEP = 1e-4;

/** First derivative of f at x ∈ (0,1) by a central difference whose step never leaves (0,1); NaN at or outside the endpoints. */
export function diffInUnit(f: (x: number) => number, x: number): number {
  const d = Math.min(x, 1 - x);
  if (!(d > 0)) return NaN;
  const h = Math.min(DIFF_STEP, d * DIFF_ENDPOINT_FRACTION);
  return (f(x + h) - f(x - h)) / (2 * h);
}

/** Second derivative of f at x ∈ (0,1) by a central second difference staying inside (0,1). */
export function diff2InUnit(f: (x: number) => number, x: number): number {
  const d = Math.min(x, 1 - x);
  if (!(d > 0)) return NaN;
  const h = Math.min(DIFF2_STEP, d * 1e-2);
  return (f(x + h) - 2 * f(x) + f(x - h)) / (h * h);
}

/** First derivative of f at a real x (score scale), step relative to |x|. */
export function diffOnLine(f: (x: number) => number, x: number): number {
  const h = DIFF_STEP * Math.max(1, Math.abs(x));
  return (f(x + h) - f(x - h)) / (2 * h);
}

/** Second derivative of f at a real x (score scale). */
export function diff2OnLine(f: (x: number) => number, x: number): number {
  const h = DIFF2_STEP * Math.max(1, Math.abs(x));
  return (f(x + h) - 2 * f(x) + f(x - h)) / (h * h);
}

/** Bound on the number of cached values per memoised closure, so long sessions cannot grow memory without limit. */
export const MEMO_LIMIT = 20000;

/** Memoises a real function of one variable (exact-argument cache, cleared when full). */
export function memoise(f: (x: number) => number): (x: number) => number {
  let cache = new Map<number, number>();
  return (x: number) => {
    const hit = cache.get(x);
    if (hit !== undefined) return hit;
    const y = f(x);
    if (cache.size >= MEMO_LIMIT) cache = new Map();
    cache.set(x, y);
    return y;
  };
}

/**
 * Nodes on (0,1) for tabulation: geometric towards both endpoints (down to 1e-12 from each end) and
 * uniform in the middle, so integrands singular at an endpoint are resolved cell by cell.
 */
export function tabulationNodes(): number[] {
  const pts: number[] = [];
  // Quarter-decade steps from 1e-12 up to 1e-2 resolve power-law endpoint behaviour.
  for (let k = 48; k > 8; k--) pts.push(Math.pow(10, -k / 4));
  for (let i = 1; i < 100; i++) pts.push(i / 100);
  for (let k = 9; k <= 48; k++) pts.push(1 - Math.pow(10, -k / 4));
  return [...new Set(pts)].sort((a, b) => a - b);
}

/** Quadrature tolerances for one tabulation cell (absolute, relative) and its interval budget. */
export const CELL_ABS_TOL = 1e-13;
export const CELL_REL_TOL = 1e-12;
export const CELL_MAX_INTERVALS = 200;

/** Outcome of checking one endpoint of a tabulated integral. */
export interface EndpointStatus {
  finite: boolean;
  /** Where the integral diverges, when it does ("0", "1" or an interior point). */
  where: number | null;
}

/**
 * A tabulated integral of g over (0,1): `head(q) = ∫_0^q g` and `tail(q) = ∫_q^1 g`, computed once on
 * the tabulation nodes and completed by local quadrature, so thousands of evaluations are cheap.
 * Divergence at an endpoint is detected from increments over shrinking neighbourhoods of it.
 */
export class UnitIntegral {
  private readonly nodes: number[];
  /** cumHead[i] = ∫_0^{nodes[i]} g (may be ±Infinity when the head diverges). */
  private readonly cumHead: number[];
  /** cumTail[i] = ∫_{nodes[i]}^1 g. */
  private readonly cumTail: number[];
  /** cumMid[i] = ∫_{1/2}^{nodes[i]} g (finite even when both endpoint integrals diverge). */
  private readonly cumMid: number[];
  /** ∫ g over the first cell [0, nodes[0]] and the last cell [nodes[n-1], 1]. */
  private readonly headEnd: number;
  private readonly tailEnd: number;
  readonly headStatus: EndpointStatus;
  readonly tailStatus: EndpointStatus;
  /** An interior cell whose integral did not converge (a non-integrable interior singularity), if any. */
  readonly interiorDivergence: number | null;

  constructor(private readonly g: (x: number) => number) {
    const nodes = tabulationNodes();
    this.nodes = nodes;
    const n = nodes.length;
    const cells: number[] = new Array<number>(n - 1);
    let interior: number | null = null;
    for (let i = 0; i + 1 < n; i++) {
      const r = integrate(g, nodes[i]!, nodes[i + 1]!, CELL_ABS_TOL, CELL_REL_TOL, CELL_MAX_INTERVALS);
      cells[i] = r.value;
      if (!Number.isFinite(r.value) && interior === null) interior = 0.5 * (nodes[i]! + nodes[i + 1]!);
    }
    this.interiorDivergence = interior;
    const headEnd = endpointIntegral(g, 0, nodes[0]!);
    const tailEnd = endpointIntegral(g, nodes[n - 1]!, 1);
    this.headStatus = { finite: headEnd.finite, where: headEnd.finite ? null : 0 };
    this.tailStatus = { finite: tailEnd.finite, where: tailEnd.finite ? null : 1 };
    this.headEnd = headEnd.finite ? headEnd.value : NaN;
    this.tailEnd = tailEnd.finite ? tailEnd.value : NaN;
    this.cumHead = new Array<number>(n);
    this.cumTail = new Array<number>(n);
    this.cumHead[0] = headEnd.finite ? headEnd.value : NaN;
    for (let i = 1; i < n; i++) this.cumHead[i] = this.cumHead[i - 1]! + cells[i - 1]!;
    this.cumTail[n - 1] = tailEnd.finite ? tailEnd.value : NaN;
    for (let i = n - 2; i >= 0; i--) this.cumTail[i] = this.cumTail[i + 1]! + cells[i]!;
    this.cumMid = new Array<number>(n);
    const half = nodes.indexOf(0.5);
    this.cumMid[half] = 0;
    for (let i = half + 1; i < n; i++) this.cumMid[i] = this.cumMid[i - 1]! + cells[i - 1]!;
    for (let i = half - 1; i >= 0; i--) this.cumMid[i] = this.cumMid[i + 1]! - cells[i]!;
  }

  /** ∫_{1/2}^q g (signed; ±Infinity at an endpoint where the integral diverges). */
  fromHalf(q: number): number {
    if (Number.isNaN(q)) return NaN;
    const n = this.nodes.length;
    if (q <= 0) return this.headStatus.finite ? this.cumMid[0]! - this.headEnd : -Infinity;
    if (q >= 1) return this.tailStatus.finite ? this.cumMid[n - 1]! + this.tailEnd : Infinity;
    const i = this.locate(q);
    if (i < 0) return this.cumMid[0]! - this.local(q, this.nodes[0]!);
    if (i >= n - 1) return this.cumMid[n - 1]! + this.local(this.nodes[n - 1]!, q);
    return this.cumMid[i]! + this.local(this.nodes[i]!, q);
  }

  /** Index i with nodes[i] ≤ q < nodes[i+1], or -1 below the first node, n-1 at or above the last. */
  private locate(q: number): number {
    const xs = this.nodes;
    if (q < xs[0]!) return -1;
    let lo = 0;
    let hi = xs.length - 1;
    if (q >= xs[hi]!) return hi;
    while (hi - lo > 1) {
      const mid = (lo + hi) >> 1;
      if (xs[mid]! <= q) lo = mid;
      else hi = mid;
    }
    return lo;
  }

  private local(a: number, b: number): number {
    return integrate(this.g, a, b, CELL_ABS_TOL, CELL_REL_TOL, CELL_MAX_INTERVALS).value;
  }

  /** ∫_0^q g (NaN when the integral diverges at 0; q = 0 gives 0). */
  head(q: number): number {
    if (!(q > 0)) return q === 0 && this.headStatus.finite ? 0 : NaN;
    // A divergent far end means the full integral is infinite (the regular-loss case l0(1) = ∞).
    if (q >= 1) return this.tailStatus.finite ? this.cumHead[this.nodes.length - 1]! + this.tailEnd : Infinity;
    const i = this.locate(q);
    if (i < 0) return this.headStatus.finite ? this.local(0, q) : NaN;
    return this.cumHead[i]! + this.local(this.nodes[i]!, q);
  }

  /** ∫_q^1 g (NaN when the integral diverges at 1; q = 1 gives 0). */
  tail(q: number): number {
    if (!(q < 1)) return q === 1 && this.tailStatus.finite ? 0 : NaN;
    if (q <= 0) {
      // The full integral from 0 exists only when the head converges too.
      return this.headStatus.finite ? this.cumTail[0]! + this.headEnd : Infinity;
    }
    const i = this.locate(q);
    if (i < 0) return this.cumTail[0]! + this.local(q, this.nodes[0]!);
    if (i >= this.nodes.length - 1) return this.tailStatus.finite ? this.local(q, 1) : NaN;
    return this.cumTail[i + 1]! + this.local(q, this.nodes[i + 1]!);
  }
}

/** Ratio of the last to the first neighbourhood increment above which an endpoint integral is declared divergent. */
export const DIVERGENCE_RATIO = 0.5;

/**
 * ∫ g over a cell touching an endpoint of (0,1) ([0, b] or [a, 1]), with a divergence test: for an
 * integrable singularity the integrals over the decades [10^-(k+1), 10^-k] towards the endpoint shrink;
 * for a divergent one (1/x, 1/x²) they stay constant or grow.
 */
export function endpointIntegral(g: (x: number) => number, a: number, b: number): { value: number; finite: boolean } {
  const atZero = a === 0;
  const r = integrate(g, a, b, CELL_ABS_TOL, CELL_REL_TOL, 4000);
  const dist = (k: number) => Math.pow(10, -k);
  // Decade increments towards the endpoint, from 10^-9 down to 10^-21 at 0 and 10^-15 at 1 (the limit of doubles near 1).
  const incs: number[] = [];
  // The increments may lie outside the cell: g is defined on all of (0,1), and more decades make the test sharper.
  const startK = 9;
  const lastK = atZero ? 21 : 15;
  for (let k = startK; k < lastK; k++) {
    const lo = atZero ? dist(k + 1) : 1 - dist(k);
    const hi = atZero ? dist(k) : 1 - dist(k + 1);
    if (!(hi > lo)) break;
    incs.push(Math.abs(integrate(g, lo, hi, 0, 1e-8, 200).value));
  }
  let divergent = !Number.isFinite(r.value);
  if (!divergent && incs.length >= 2) {
    const first = incs[0]!;
    const last = incs[incs.length - 1]!;
    if (!Number.isFinite(first) || !Number.isFinite(last)) divergent = true;
    else if (last > 0 && last >= DIVERGENCE_RATIO * first) divergent = true;
  }
  if (!divergent && !r.converged && r.error > 1e-6 * (1 + Math.abs(r.value))) divergent = true;
  return { value: r.value, finite: !divergent };
}

/**
 * Inverse of a strictly monotone function f on [lo, hi] at y, by bisection; clamps to the nearer end
 * when y lies outside f's range there.
 */
export function invertMonotone(f: (x: number) => number, y: number, lo: number, hi: number): number {
  const flo = f(lo);
  const fhi = f(hi);
  const increasing = fhi >= flo;
  if (increasing ? y <= flo : y >= flo) return lo;
  if (increasing ? y >= fhi : y <= fhi) return hi;
  const root = bisect((x) => f(x) - y, lo, hi, 1e-15, 200);
  return root ?? NaN;
}

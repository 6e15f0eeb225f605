/**
 * Integrals over (0,1) that tolerate integrable endpoint singularities: `endpointSafe` integrands, the
 * decade-by-decade `endpointIntegral` with divergence detection, and the tabulated `UnitIntegral`.
 */
import { integrate } from "./quadrature.js";
import { tabulationNodes } from "./sampling.js";

/** Absolute quadrature tolerance of a tabulation cell (cells sum to the partial losses; 1e-13 per cell keeps the total below 1e-10). */
export const CELL_ABS_TOL = 1e-13;
/** Relative quadrature tolerance of a tabulation cell (on the Kronrod–Gauss difference, which overstates the Kronrod error by orders of magnitude on smooth cells). */
export const CELL_REL_TOL = 1e-10;
/** Subinterval budget of a tabulation cell (discontinuous weights need a few dozen bisections). */
export const CELL_MAX_INTERVALS = 200;

/** Quadrature nodes closer than this to 1 round to 1 itself (a few ulps of doubles below 1). */
export const ENDPOINT_ULPS = 4.5e-16;

/**
 * Wraps an integrand so that a non-finite value at a node that has rounded onto an endpoint (0·∞ for
 * (1−c)·w(c) at c = 1) counts as 0: such a node carries a width of a few ulps, and an integrable
 * singularity contributes nothing measurable there.
 */
export function endpointSafe(g: (x: number) => number): (x: number) => number {
  return (x: number) => {
    const y = g(x);
    if (Number.isFinite(y)) return y;
    return x <= 0 || x >= 1 - ENDPOINT_ULPS ? 0 : y;
  };
}

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

  private readonly g: (x: number) => number;

  constructor(integrand: (x: number) => number) {
    const g = endpointSafe(integrand);
    this.g = g;
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
    // Below the first node, subtract the piece [q, x0] from the endpoint integral (the singular end is already resolved there).
    if (i < 0) return this.headStatus.finite ? this.headEnd - this.local(q, this.nodes[0]!) : NaN;
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
    if (i >= this.nodes.length - 1) return this.tailStatus.finite ? this.tailEnd - this.local(this.nodes[this.nodes.length - 1]!, q) : NaN;
    return this.cumTail[i + 1]! + this.local(q, this.nodes[i + 1]!);
  }
}

/**
 * Decade-to-decade ratio of the increments of an endpoint integral above which it is declared divergent:
 * g ~ x^p gives a ratio 10^-(p+1), so 0.98 separates p = −1 (ratio 1, divergent) from p ≥ −0.991.
 */
export const DIVERGENCE_RATIO = 0.98;
/** Decades resolved explicitly next to 0 (down to 10^-24 times the cell width). */
export const ENDPOINT_DECADES_AT_ZERO = 12;
/** Absolute target of one endpoint decade, relative to the decades already summed (double rounding of the sum itself is ~1e-16). */
export const ENDPOINT_SUM_REL_TOL = 1e-14;
/** Relative accuracy of the decade increments that measure the decay rate (a ratio to a few digits suffices). */
export const ENDPOINT_DECAY_REL_TOL = 1e-6;
/** Subinterval budget of a decay increment (smooth power laws converge in one or two panels). */
export const ENDPOINT_DECAY_INTERVALS = 16;

/**
 * ∫ g over a cell touching an endpoint of (0,1) ([0, b] or [a, 1]). The cell is split into decades of the
 * distance to the endpoint, each integrated separately (smooth there), and the rest is extrapolated from
 * the geometric decay of the decade increments; increments that do not decay mean divergence (1/x, 1/x²).
 * Near 1 doubles resolve distances only down to ~1e-16, so the decay is measured on the decades from
 * 10^-9 to 10^-15 (outside the cell, where g is defined too).
 */
export function endpointIntegral(integrand: (x: number) => number, a: number, b: number): { value: number; finite: boolean } {
  const g = endpointSafe(integrand);
  // Decades are summed from the largest down, so each needs accuracy only relative to the running total:
  // next to 1 the integrand is rounding noise (1 − c keeps few digits) and a purely relative target on a
  // 1e-60 increment would exhaust the subdivision budget for nothing.
  // The scale of the integral: the decade just outside [a, b], on the interior side.
  const outer = a === 0 ? [b, Math.min(0.5, 10 * b)] : [Math.max(0.5, 1 - 10 * (1 - a)), a];
  const scale = outer[1]! > outer[0]! ? Math.abs(integrate(g, outer[0]!, outer[1]!, 0, ENDPOINT_DECAY_REL_TOL, ENDPOINT_DECAY_INTERVALS).value) : 0;
  const floor = Number.isFinite(scale) ? ENDPOINT_SUM_REL_TOL * scale : 0;
  const inc = (lo: number, hi: number, total: number) => integrate(g, lo, hi, Math.max(floor, ENDPOINT_SUM_REL_TOL * Math.abs(total)), 1e-10, 200).value;
  // The decay measurement needs only the ratio of increments, to a few digits; next to 1 the integrand is
  // rounding noise, which no subdivision removes, so the budget is small.
  const decay = (lo: number, hi: number) => integrate(g, lo, hi, 0, ENDPOINT_DECAY_REL_TOL, ENDPOINT_DECAY_INTERVALS).value;
  // Signed decade increments ordered towards the endpoint; the last few measure the decay.
  const incs: number[] = [];
  let value = 0;
  if (a === 0) {
    for (let k = 0; k < ENDPOINT_DECADES_AT_ZERO; k++) {
      const v = inc(b * Math.pow(10, -(k + 1)), b * Math.pow(10, -k), value);
      incs.push(v);
      value += v;
    }
  } else {
    const decades = Math.max(0, Math.round(Math.log10((1 - a) / 1e-15)));
    for (let k = 0; k < decades; k++) {
      const d = (1 - a) * Math.pow(10, -k);
      value += inc(1 - d, 1 - d / 10, value);
    }
    for (let k = 9; k < 15; k++) incs.push(decay(1 - Math.pow(10, -k), 1 - Math.pow(10, -(k + 1))));
  }
  if (!Number.isFinite(value) || !incs.every(Number.isFinite)) return { value: NaN, finite: false };
  const last = incs[incs.length - 1]!;
  const ref = Math.abs(incs[incs.length - 6]!);
  if (last === 0) return { value, finite: true };
  if (!(ref > 0)) return { value: NaN, finite: false };
  const rho = Math.pow(Math.abs(last) / ref, 1 / 5);
  if (!(rho < DIVERGENCE_RATIO)) return { value: NaN, finite: false };
  // Geometric tail beyond the last resolved decade (exact in the limit for g ~ x^p).
  value += last * (rho / (1 - rho));
  return { value, finite: true };
}

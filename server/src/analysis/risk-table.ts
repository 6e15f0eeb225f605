/**
 * The sampled model the properness searches work on: the partial losses tabulated on a scan grid (a
 * uniform grid, geometric points near both endpoints and seeded random points), extended by points on
 * both sides of every jump located inside a grid cell.
 */
import type { LossFunctions, RealFn } from "../loss-model.js";
import type { Deadline } from "./budget.js";
import { probabilityGrid, seededRandom } from "./numeric/sampling.js";
import type { RiskTable } from "./recovery.js";
import { safeCall } from "./margin.js";

/**
 * Relative tolerance of a risk gap L(η,η) − L(η,q), scaled by S + |η·l1(η)| + |(1−η)·l0(η)| where S is
 * the loss's own scale (`tableScale`; properness is invariant under scaling the loss, so the tolerance
 * must scale with it — an absolute floor of 1 called a loss ×1e-9 proper whatever its shape). Risks are
 * sums of two closure values, and derived forms (tabulated integrals, bisection links) are accurate to
 * ~1e-11 relative, so 1e-9 is two orders above noise and still catches gaps of 1e-8 on O(1) losses.
 */
export const RISK_TOL = 1e-9;
/**
 * Tighter gap tolerance for losses whose partial losses are the user's closures evaluated directly
 * ("partials", "score-partials"): only rounding (~1e-16 relative) separates L(η,q) from its true value.
 */
export const RISK_TOL_DIRECT = 1e-10;
/** Scan grids for Bayes-risk losses without a closed-form H' stop this far from the endpoints, where differences of H lose all accuracy. */
export const NUMERIC_DERIVATIVE_EDGE_EXPONENT = 5;

/** The sampled model: a table of the partial losses on the scan grid. */
export interface Table extends RiskTable {
  /** Indices of interior points (0 < q < 1). */
  interior: boolean[];
  /** Relative gap tolerance for this loss (RISK_TOL or RISK_TOL_DIRECT). */
  tol: number;
  /** Relative variation tolerance for flat intervals. */
  flatTol: number;
  /** The loss's own scale on the grid (`tableScale`): every absolute floor of a sign or equality decision is a multiple of it. */
  scale: number;
}

/** The scale is read on [SCALE_EDGE, 1 − SCALE_EDGE], away from endpoint singularities (log loss is infinite at 0 and 1). */
export const SCALE_EDGE = 0.01;

/**
 * The loss's own scale on the grid: the largest |L(q, q)| and the largest variation of l1 and l0 from
 * q = ½, over grid points in [SCALE_EDGE, 1 − SCALE_EDGE]. It scales with the loss (L ↦ cL gives cS), so
 * tolerances that are multiples of it decide the same way for every multiple of a loss, as properness does
 * (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, §3: L and cL, c > 0, have the same minimisers).
 * 0 only for a loss that is 0 on the whole range.
 */
export function tableScale(qs: number[], l1: number[], l0: number[]): number {
  let scale = 0;
  const mid = qs.findIndex((q) => q >= 0.5);
  for (let j = 0; j < qs.length; j++) {
    const q = qs[j]!;
    if (q < SCALE_EDGE || q > 1 - SCALE_EDGE) continue;
    const d = q * l1[j]! + (1 - q) * l0[j]!;
    if (Number.isFinite(d)) scale = Math.max(scale, Math.abs(d));
    if (mid >= 0) {
      const s1 = Math.abs(l1[j]! - l1[mid]!);
      const s0 = Math.abs(l0[j]! - l0[mid]!);
      if (Number.isFinite(s1)) scale = Math.max(scale, s1);
      if (Number.isFinite(s0)) scale = Math.max(scale, s0);
    }
  }
  return scale;
}

/** The scan grid: a uniform grid with geometric points near both endpoints, both endpoints, and seeded random points. */
export function buildGrid(resolution: number, seed: number, edgeExponent = 10): number[] {
  const rnd = seededRandom(seed);
  const pts = new Set<number>(probabilityGrid(resolution, edgeExponent));
  pts.add(0);
  pts.add(1);
  // Seeded random points break any alignment between the grid and kinks or bumps of the loss.
  const extra = Math.max(8, Math.floor(resolution / 8));
  for (let i = 0; i < extra; i++) pts.add(rnd());
  return [...pts].sort((a, b) => a - b);
}

/** The partial losses evaluated on the grid `qs` (a throwing or non-finite closure gives NaN). */
export function buildTable(fns: LossFunctions, qs: number[], tol: number, flatTol: number): Table {
  const l1 = qs.map((q) => safeCall(fns.l1, q));
  const l0 = qs.map((q) => safeCall(fns.l0, q));
  return { tol, flatTol, qs, l1, l0, interior: qs.map((q) => q > 0 && q < 1), scale: tableScale(qs, l1, l0) };
}

/** Halvings used to test every grid cell for a jump: a jump keeps its size while smooth deviations shrink by 2^-k. */
export const JUMP_PROBE_HALVINGS = 10;
/** A cell holds a jump when its deviation from the neighbours' slope keeps at least this fraction of its size after the probe halvings. */
export const JUMP_PERSIST_FRACTION = 0.25;
/** At most this many jumps per partial loss are located and sampled around (piecewise losses have a handful). */
export const MAX_JUMPS = 16;
/** Offsets around a located jump at which extra points are sampled (both sides). */
export const JUMP_OFFSETS: readonly number[] = [1e-10, 1e-7, 1e-5, 1e-4, 1e-3, 2.5e-3];

/** Halvings of a cell at most while locating a jump (60 halvings take any grid cell below the 1e-15 width that also stops the loop). */
export const JUMP_MAX_HALVINGS = 60;
/** Cells probed for jumps between two readings of the clock (a probe costs up to JUMP_MAX_HALVINGS closure calls). */
const JUMP_CLOCK_STRIDE = 16;

/**
 * The smooth part's slope near a cell, predicted from the neighbouring cells: linear in x through the
 * chord slopes of the cells on either side (placed at their midpoints), constant when only one side is
 * known. A linear slope integrates exactly over any sub-interval, so the predicted f(b) − f(a) is exact for
 * a quadratic and off by O(f‴·h³) otherwise, far below a jump at every level of the halving (common
 * practice). A constant slope is off by f″·h²/4 on each half-cell, which sent the halving into the smooth
 * half beside a small jump (a 1e-5 jump of Brier's l0 went unseen at most grid sizes).
 */
type SlopeModel = (x: number) => number;

function slopeModel(sides: { x: number; s: number }[]): SlopeModel {
  if (sides.length === 1) return () => sides[0]!.s;
  const [a, b] = sides as [{ x: number; s: number }, { x: number; s: number }];
  return (x) => a.s + ((b.s - a.s) * (x - a.x)) / (b.x - a.x);
}

/**
 * Halves the cell [qs[j], qs[j+1]] of the partial loss `f` towards the half that deviates most from the
 * predicted smooth part; returns the final bracket when the deviation persists (a jump), else null.
 */
/** A cell's deviation from the predicted smooth part below this (relative to the loss's scale and the two values) is rounding, not a jump candidate. */
export const JUMP_FLOOR_TOL = 1e-12;

function locateJump(f: RealFn, lo: number, hi: number, flo: number, fhi: number, slope: SlopeModel, scale: number): [number, number] | null {
  const dev = (a: number, b: number, fa: number, fb: number) => Math.abs(fb - fa - slope(0.5 * (a + b)) * (b - a));
  const cellDev = dev(lo, hi, flo, fhi);
  const floor = JUMP_FLOOR_TOL * (scale + Math.abs(flo) + Math.abs(fhi));
  if (!(cellDev > floor)) return null;
  for (let k = 0; k < JUMP_MAX_HALVINGS && hi - lo > 1e-15; k++) {
    if (k === JUMP_PROBE_HALVINGS && !(dev(lo, hi, flo, fhi) > Math.max(floor, JUMP_PERSIST_FRACTION * cellDev))) return null;
    const m = 0.5 * (lo + hi);
    const fm = safeCall(f, m);
    if (!Number.isFinite(fm)) return null;
    if (dev(lo, m, flo, fm) >= dev(m, hi, fm, fhi)) {
      hi = m;
      fhi = fm;
    } else {
      lo = m;
      flo = fm;
    }
  }
  return [lo, hi];
}

/**
 * Locates discontinuities of l1 and l0 inside grid cells and returns extra sample points on both sides
 * of each, so small jumps between grid points (which make a loss improper right next to the diagonal)
 * are sampled. The smooth part is predicted from the neighbouring cells' slope; each cell is halved
 * towards the half that deviates most from that prediction. A jump keeps its deviation at every level,
 * a smooth change loses it in proportion to the width.
 */
export function jumpPoints(fns: LossFunctions, t: Table, deadline: Deadline): number[] {
  const extra: number[] = [];
  const n = t.qs.length;
  for (const [vals, f] of [[t.l1, fns.l1], [t.l0, fns.l0]] as const) {
    /** The chord slope of cell i at its midpoint, or null at the ends or across a non-finite value. */
    const chord = (i: number): { x: number; s: number } | null => {
      if (i < 0 || i + 1 >= n || !t.interior[i] || !t.interior[i + 1]) return null;
      const s = (vals[i + 1]! - vals[i]!) / (t.qs[i + 1]! - t.qs[i]!);
      return Number.isFinite(s) ? { x: 0.5 * (t.qs[i]! + t.qs[i + 1]!), s } : null;
    };
    let found = 0;
    for (let j = 0; j + 1 < n && found < MAX_JUMPS; j++) {
      // Past the deadline the probe stops; the search that follows reports the time-out.
      if (j % JUMP_CLOCK_STRIDE === 0 && deadline.expired()) return extra;
      if (!t.interior[j] || !t.interior[j + 1]) continue;
      const flo = vals[j]!;
      const fhi = vals[j + 1]!;
      if (!Number.isFinite(flo) || !Number.isFinite(fhi)) continue;
      const sides = [chord(j - 1), chord(j + 1)].filter((c): c is { x: number; s: number } => c !== null);
      if (sides.length === 0) continue;
      const bracket = locateJump(f, t.qs[j]!, t.qs[j + 1]!, flo, fhi, slopeModel(sides), t.scale);
      if (!bracket) continue;
      const [lo, hi] = bracket;
      const c = 0.5 * (lo + hi);
      found++;
      extra.push(lo, hi);
      for (const d of JUMP_OFFSETS) {
        if (c - d > 0) extra.push(c - d);
        if (c + d < 1) extra.push(c + d);
      }
    }
  }
  return extra;
}

/** The table extended by extra points (merged in order, values evaluated once). */
export function extendTable(fns: LossFunctions, t: Table, extra: number[]): Table {
  if (extra.length === 0) return t;
  const qs = [...new Set([...t.qs, ...extra])].sort((a, b) => a - b);
  return buildTable(fns, qs, t.tol, t.flatTol);
}

/** Risk from the table, NaN when a needed value is not finite. */
export function tableRisk(t: Table, eta: number, j: number): number {
  const a = eta === 0 ? 0 : eta * t.l1[j]!;
  const b = eta === 1 ? 0 : (1 - eta) * t.l0[j]!;
  const r = a + b;
  return Number.isFinite(r) ? r : NaN;
}

/** The absolute gap tolerance at η: `rel` times the loss's scale plus the size of the two terms of L(η, η). */
export function riskTol(fns: LossFunctions, eta: number, rel: number, scale: number): number {
  const a = eta === 0 ? 0 : Math.abs(eta * safeCall(fns.l1, eta));
  const b = eta === 1 ? 0 : Math.abs((1 - eta) * safeCall(fns.l0, eta));
  return rel * (scale + a + b);
}

/**
 * Affine pieces of the Bayes risk: intervals on which the weight has no mass, so several predictions are
 * optimal for each η inside and the loss is proper but not strictly proper (Bao 2023, "Proper Losses,
 * Moduli of Convexity, and Surrogate Regret Bounds", COLT, Thm 2; Reid & Williamson 2010, text after
 * Thm 6). Found on the table, confirmed from the closures, ends refined by bisection.
 */
import type { LossFunctions } from "../loss-model.js";
import { tableRisk, type Table } from "./risk-table.js";

/** Largest variation of l1 and l0 (relative to the loss scale) over an interval on which H counts as affine (l1, l0 are constant there). */
export const FLAT_VARIATION_TOL = 1e-12;
/** The same for Bayes-risk losses with a numeric H' (differences of H carry ~1e-10 relative noise). */
export const FLAT_VARIATION_TOL_NUMERIC = 1e-8;
/** Mean weight 2R/(b−a)² over an interval, relative to the loss scale, below which H counts as affine there. */
export const FLAT_WEIGHT_TOL = 1e-8;
/** Narrowest affine stretch of H that is reported (narrower ones are below the grid's resolution). */
export const FLAT_MIN_WIDTH = 1e-3;

export interface FlatRun {
  a: number;
  b: number;
}

/** Interior probes of a candidate flat interval at which a closed-form weight is evaluated. */
export const FLAT_WEIGHT_PROBES = 16;

/**
 * True when a closed-form weight is strictly positive inside (a, b): then H is strictly concave there and
 * the interval is not affine, however small the partial losses' variation (a weight vanishing like
 * (1−q)^4 at an endpoint makes l1 and l0 vary by ~1e-13 near it). Strict properness holds iff w puts mass
 * on every open set (Reid & Williamson 2010, text after Thm 6, attributed to Buja, Stuetzle & Shen 2005).
 */
function exactWeightPositive(fns: LossFunctions, a: number, b: number): boolean {
  if (!fns.weightExact || !fns.weight) return false;
  for (let i = 1; i <= FLAT_WEIGHT_PROBES; i++) {
    const x = a + ((b - a) * i) / (FLAT_WEIGHT_PROBES + 1);
    const w = fns.weight(x);
    if (!(Number.isFinite(w) && w > 0)) return false;
  }
  return true;
}

/** Bisection steps refining each end of an affine interval (60 halvings of a grid cell reach rounding). */
export const FLAT_END_BISECTIONS = 60;

/** For each grid cell: mean weight 2R/(b−a)² within `tol` and both partial losses constant to `varTol`. */
function flatCells(t: Table, tol: number, varTol: number): boolean[] {
  const cellFlat: boolean[] = [];
  for (let j = 0; j + 1 < t.qs.length; j++) {
    const a = t.qs[j]!;
    const b = t.qs[j + 1]!;
    const raa = tableRisk(t, a, j);
    const rab = tableRisk(t, a, j + 1);
    const rbb = tableRisk(t, b, j + 1);
    const rba = tableRisk(t, b, j);
    const r = Math.max(rab - raa, rba - rbb);
    // On an affine stretch of H the partial losses are constant (l1' = −(1−q)w = 0), which separates w ≡ 0 from a merely small w.
    const v1 = Math.abs(t.l1[j + 1]! - t.l1[j]!);
    const v0 = Math.abs(t.l0[j + 1]! - t.l0[j]!);
    const constant = v1 <= varTol && v0 <= varTol;
    cellFlat.push(Number.isFinite(r) && (2 * r) / ((b - a) * (b - a)) <= tol && constant);
  }
  return cellFlat;
}

/** Largest variation of l1 and l0 over the grid points j..k (inclusive). */
function drift(t: Table, j: number, k: number): number {
  let lo1 = Infinity, hi1 = -Infinity, lo0 = Infinity, hi0 = -Infinity;
  for (let i = j; i <= k; i++) {
    lo1 = Math.min(lo1, t.l1[i]!);
    hi1 = Math.max(hi1, t.l1[i]!);
    lo0 = Math.min(lo0, t.l0[i]!);
    hi0 = Math.max(hi0, t.l0[i]!);
  }
  return Math.max(hi1 - lo1, hi0 - lo0);
}

/** Bisection between a flat end `flat` and a non-flat point `rough`: the last point still flat. */
function refineEnd(isFlat: (x: number) => boolean, flat: number, rough: number): number {
  let good = flat;
  let bad = rough;
  for (let it = 0; it < FLAT_END_BISECTIONS; it++) {
    const m = 0.5 * (good + bad);
    if (isFlat(m)) good = m;
    else bad = m;
  }
  return good;
}

/** Ends refined to within 1e-9 of 0 or 1 are the endpoints themselves (the bisection cannot reach them exactly when a value there is infinite). */
function snapEnd(x: number): number {
  return x < 1e-9 ? 0 : x > 1 - 1e-9 ? 1 : Number(x.toPrecision(10));
}

/**
 * Intervals where H is affine (w has no mass): consecutive grid cells whose mean weight 2R/(b−a)² is
 * negligible against the loss's scale, merged into runs, confirmed from the closures, and with ends
 * refined by bisection (so a point mass at c gives an interval ending exactly at c).
 */
export function findFlatIntervals(fns: LossFunctions, t: Table): FlatRun[] {
  const n = t.qs.length;
  const scale = t.scale;
  const tol = FLAT_WEIGHT_TOL * scale;
  const varTol = t.flatTol * Math.max(scale, 1e-300);
  const regret = (eta: number, q: number) => fns.risk(eta, q) - fns.risk(eta, eta);
  const flatBetween = (a: number, b: number) => {
    if (!(b > a)) return true;
    const r = Math.max(regret(a, b), regret(b, a));
    return Number.isFinite(r) && (2 * r) / ((b - a) * (b - a)) <= tol;
  };
  const cellFlat = flatCells(t, tol, varTol);
  const runs: FlatRun[] = [];
  let j = 0;
  while (j < cellFlat.length) {
    if (!cellFlat[j]) {
      j++;
      continue;
    }
    let k = j;
    while (k + 1 < cellFlat.length && cellFlat[k + 1]) k++;
    let a = t.qs[j]!;
    let b = t.qs[k + 1]!;
    if (b - a >= FLAT_MIN_WIDTH && drift(t, j, k + 1) <= varTol && flatBetween(a, b) && !exactWeightPositive(fns, a, b)) {
      // Refine the ends towards the neighbouring (non-flat) cells.
      if (j > 0) a = refineEnd((x) => flatBetween(x, b), a, t.qs[j - 1]!);
      if (k + 2 < n) b = refineEnd((x) => flatBetween(a, x), b, t.qs[k + 2]!);
      runs.push({ a: snapEnd(a), b: snapEnd(b) });
    }
    j = k + 1;
  }
  return runs;
}

/**
 * The derivative check that backs a positive verdict of the sampled search: for partial losses with
 * closed-form derivatives, a proper loss satisfies the stationarity identity −l1'(q)/(1−q) = l0'(q)/q with
 * the common value w(q) ≥ 0 (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Thm 1; Savage
 * 1971, "Elicitation of Personal Probabilities and Expectations", JASA 66). Both are checked on a uniform
 * grid finer than the scan table, refined adaptively where the identity's residual rises above rounding or
 * the sign of w changes between neighbours, so a feature narrower than the table's cells is found where its
 * derivatives leak out. A failure is never reported as such: since
 * ∂L(η, q)/∂q at q = η equals η(1−η)(r0 − r1) (r1, r0 the two ratios), a residual means L(η, ·) descends
 * from q = η, and the descent's end is confirmed from the closures (`confirm`) before it counts.
 */
import type { LossFunctions } from "../loss-model.js";
import { goldenMin } from "./numeric/minimise.js";
import { safeCall } from "./margin.js";
import { confirm, gapScore, type Counterexample } from "./search.js";
import type { Table } from "./risk-table.js";
import type { Deadline } from "./budget.js";

/** Cells of the uniform derivative grid on (0, 1): 1/1024 ≈ 1e-3, so a bump of width 1e-4 has a grid point within five widths of its centre, where its slope is still ~1e-8 of the loss's (common practice: e^{-25} tails). */
export const IDENTITY_SCAN_CELLS = 1024;
/** The derivative grid stays this far from 0 and 1, where the ratios divide by q or 1 − q and the table's geometric points take over. */
export const IDENTITY_EDGE = 1e-6;
/**
 * Relative residual |r1 − r0| / (|r1| + |r0| + floor) above which a cell is refined: closed-form
 * derivatives agree to ~1e-13 relative (rounding through a few dozen operations), so 1e-10 is noise-free
 * and still sees the e^{-25} tail of a narrow bump.
 */
export const IDENTITY_NOISE_TOL = 1e-10;
/** Floor of the residual's denominator, relative to the median |w| of the scan: where w vanishes (w = 30|q − ½|⁴ at ½) the two ratios are both rounding, and their disagreement is not news. */
export const WEIGHT_FLOOR_REL = 1e-8;
/** Flagged cells refined, the worst first (a proper loss has none; an improper one needs one). */
export const MAX_REFINED_CELLS = 8;
/** Interior samples per refinement level. */
export const REFINE_SAMPLES = 8;
/** Refinement levels: each divides the bracket by (REFINE_SAMPLES + 1)/2, so 12 levels take a 1e-3 cell below 1e-9. */
export const REFINE_LEVELS = 12;
/** After this many levels a zoom whose worst point is still below IDENTITY_VIOLATION_TOL is following rounding, not a feature, and stops (a real feature's residual reaches O(1) within two or three levels). */
export const NOISE_STOP_LEVEL = 3;
/**
 * A relative residual (or negative w) above this with no confirmed descent is reported in the evidence
 * as unexplained: well above rounding (IDENTITY_NOISE_TOL), so the identity does fail there, but the loss
 * gains less than the gap tolerance by moving away from q = η (or the descent missed).
 */
export const IDENTITY_VIOLATION_TOL = 1e-6;
/** Best points of the refinement tried as η of a descent (each costs two golden-section minimisations). */
export const DESCENT_STARTS = 4;

/** What the derivative check looked at, and the counterexample it found. */
export interface IdentityScan {
  counterexample: Counterexample | null;
  /** Points at which the identity and the sign of w were evaluated (uniform grid, table points and refinements). */
  points: number;
  /** Cells refined because the residual or the sign of w flagged them. */
  refinedCells: number;
  /** η of confirmed descents (evidence for the stationarity finding). */
  slopePoints: number[];
  /** Without a counterexample: the worst point where the identity or w ≥ 0 fails beyond IDENTITY_VIOLATION_TOL, else null. */
  unexplainedAt: number | null;
  timedOut: boolean;
}

interface Probe {
  q: number;
  /** Relative residual of the identity, including a negative w (0 where the identity holds with w ≥ 0). */
  rel: number;
  /** |r1 − r0| + negative parts of r1, r0, in units of the scan's median |w| (what a descent from q can gain grows with it). */
  size: number;
  /** Signs of r1 and r0 (0 inside the noise floor). */
  s1: number;
  s0: number;
}

function ratios(fns: LossFunctions, q: number): [number, number] {
  return [-safeCall(fns.dl1, q) / (1 - q), safeCall(fns.dl0, q) / q];
}

/** The uniform derivative grid merged with the table's (sorted) points inside [IDENTITY_EDGE, 1 − IDENTITY_EDGE]. */
function scanPoints(t: Table): number[] {
  const pts: number[] = [];
  let j = 0;
  const push = (q: number) => {
    if (pts.length === 0 || q > pts[pts.length - 1]!) pts.push(q);
  };
  for (let i = 1; i < IDENTITY_SCAN_CELLS; i++) {
    const u = i / IDENTITY_SCAN_CELLS;
    for (; j < t.qs.length && t.qs[j]! <= u; j++) if (t.qs[j]! >= IDENTITY_EDGE) push(t.qs[j]!);
    push(u);
  }
  for (; j < t.qs.length; j++) if (t.qs[j]! <= 1 - IDENTITY_EDGE) push(t.qs[j]!);
  return pts;
}

/**
 * Checks the stationarity identity and the sign of w on an adaptively refined grid and, where they fail,
 * looks for a descent from q = η, confirmed from the closures against the table's tolerance and scale.
 */
export function identityScan(fns: LossFunctions, t: Table, deadline: Deadline): IdentityScan {
  const qs = scanPoints(t);
  const n = qs.length;
  // The two ratios in flat arrays (this loop is the scan's whole cost on a proper loss: two closure calls per point).
  const r1s = new Float64Array(n);
  const r0s = new Float64Array(n);
  const mags = new Float64Array(n);
  let m = 0;
  for (let i = 0; i < n; i++) {
    const q = qs[i]!;
    const r1 = -safeCall(fns.dl1, q) / (1 - q);
    const r0 = safeCall(fns.dl0, q) / q;
    r1s[i] = r1;
    r0s[i] = r0;
    const mag = 0.5 * (Math.abs(r1) + Math.abs(r0));
    if (Number.isFinite(mag)) mags[m++] = mag;
  }
  // The scan's own scale of w: the median |w| (robust to the endpoint blow-up of log loss's w = 1/(q(1−q))).
  const sorted = mags.subarray(0, m).sort();
  const wScale = m > 0 ? sorted[m >> 1]! : 0;
  const floor = WEIGHT_FLOOR_REL * wScale;
  let points = n;
  const probe = (q: number, r: [number, number]): Probe | null => {
    const [r1, r0] = r;
    if (!Number.isFinite(r1) || !Number.isFinite(r0)) return null;
    const bad = Math.abs(r1 - r0) + Math.max(0, -r1) + Math.max(0, -r0);
    const denom = Math.abs(r1) + Math.abs(r0) + floor;
    const sign = (x: number) => (Math.abs(x) <= floor ? 0 : Math.sign(x));
    return { q, rel: denom > 0 ? bad / denom : 0, size: wScale > 0 ? bad / wScale : bad, s1: sign(r1), s0: sign(r0) };
  };
  /** The relative residual at grid point i without building a probe (NaN where a ratio is not finite). */
  const relAt = (i: number): number => {
    const r1 = r1s[i]!;
    const r0 = r0s[i]!;
    const bad = Math.abs(r1 - r0) + Math.max(0, -r1) + Math.max(0, -r0);
    const denom = Math.abs(r1) + Math.abs(r0) + floor;
    return denom > 0 ? bad / denom : Number.isFinite(bad) ? 0 : NaN;
  };
  const sgn = (x: number) => (Math.abs(x) <= floor ? 0 : Math.sign(x));
  // Flag cells whose ends show a residual above rounding or between which the sign of w changes.
  const flagged: { lo: number; hi: number; score: number; end: Probe }[] = [];
  let relA = n > 0 ? relAt(0) : NaN;
  for (let i = 0; i + 1 < n; i++) {
    const relB = relAt(i + 1);
    const ra = relA;
    relA = relB;
    if (!Number.isFinite(ra) || !Number.isFinite(relB)) continue;
    const score = Math.max(ra, relB);
    const signChange = sgn(r1s[i]!) * sgn(r1s[i + 1]!) < 0 || sgn(r0s[i]!) * sgn(r0s[i + 1]!) < 0;
    if (!(score > IDENTITY_NOISE_TOL || signChange)) continue;
    const a = probe(qs[i]!, [r1s[i]!, r0s[i]!])!;
    const b = probe(qs[i + 1]!, [r1s[i + 1]!, r0s[i + 1]!])!;
    const end = a.size >= b.size ? a : b;
    flagged.push({ lo: a.q, hi: b.q, score: signChange ? Math.max(score, 1) : score, end });
  }
  flagged.sort((x, y) => y.score - x.score);
  const cells = flagged.slice(0, MAX_REFINED_CELLS);
  // Zoom into each flagged cell towards the point of the largest violation.
  const starts: Probe[] = [];
  for (let c = 0; c < cells.length; c++) {
    if (deadline.expired()) return { counterexample: null, points, refinedCells: c, slopePoints: [], unexplainedAt: null, timedOut: true };
    let { lo, hi } = cells[c]!;
    // The worse end of the cell seeds the zoom: a narrow feature may sit in the next cell, seen only through its tail here.
    let best: Probe | null = cells[c]!.end.rel > IDENTITY_NOISE_TOL ? cells[c]!.end : null;
    for (let level = 0; level < REFINE_LEVELS && hi - lo > 1e-12; level++) {
      const h = (hi - lo) / (REFINE_SAMPLES + 1);
      for (let k = 1; k <= REFINE_SAMPLES; k++) {
        const q = lo + k * h;
        points++;
        const p = probe(q, ratios(fns, q));
        if (p && p.rel > IDENTITY_NOISE_TOL && (!best || p.size > best.size)) best = p;
      }
      if (!best || (level + 1 >= NOISE_STOP_LEVEL && best.rel <= IDENTITY_VIOLATION_TOL)) break;
      // The next bracket: two sample spacings around the worst point so far, inside the scanned range (not the cell).
      lo = Math.max(IDENTITY_EDGE, best.q - h);
      hi = Math.min(1 - IDENTITY_EDGE, best.q + h);
    }
    if (best) starts.push(best);
  }
  // Only violations beyond IDENTITY_VIOLATION_TOL are worth a descent: below it the slope at q = η gains ≈ (rel·w)²/(2w), far under the gap tolerance.
  starts.sort((x, y) => y.size - x.size);
  const descents = starts.filter((p) => p.rel > IDENTITY_VIOLATION_TOL);
  let counterexample: Counterexample | null = null;
  const slopePoints: number[] = [];
  for (let s = 0; s < Math.min(DESCENT_STARTS, descents.length); s++) {
    if (deadline.expired()) return { counterexample, points, refinedCells: cells.length, slopePoints, unexplainedAt: null, timedOut: true };
    const c = descend(fns, t, descents[s]!.q);
    if (c) {
      slopePoints.push(c.eta);
      if (!counterexample || gapScore(c, t.scale) > gapScore(counterexample, t.scale)) counterexample = c;
    }
  }
  const worst = starts[0];
  const unexplainedAt = !counterexample && worst && worst.rel > IDENTITY_VIOLATION_TOL ? worst.q : null;
  return { counterexample, points, refinedCells: cells.length, slopePoints, unexplainedAt, timedOut: false };
}

/** Radii of the descent from q = η: a grid cell (a narrow feature) and the search's neighbourhood. */
const DESCENT_RADII: readonly number[] = [2 / IDENTITY_SCAN_CELLS, 0.05];

/**
 * A descent of L(η, ·) from q = η on both sides (downhill first: the slope at η is η·l1'(η) + (1−η)·l0'(η);
 * with w < 0 and the identity holding, q = η is a local maximum and both sides descend), confirmed from
 * the closures. The best confirmed point, or null.
 */
function descend(fns: LossFunctions, t: Table, eta: number): Counterexample | null {
  const slope = eta * safeCall(fns.dl1, eta) + (1 - eta) * safeCall(fns.dl0, eta);
  const sides: (1 | -1)[] = slope > 0 ? [-1, 1] : [1, -1];
  let best: Counterexample | null = null;
  for (const r0 of DESCENT_RADII) {
    for (const side of sides) {
      const r = Math.min(r0, side < 0 ? eta : 1 - eta);
      if (!(r > 0)) continue;
      const [lo, hi] = side < 0 ? [eta - r, eta] : [eta, eta + r];
      const m = goldenMin((q) => fns.risk(eta, q), lo, hi);
      const c = confirm(fns, eta, m.x, t.tol, t.scale);
      if (c && (!best || gapScore(c, t.scale) > gapScore(best, t.scale))) best = c;
    }
    if (best) return best;
  }
  return best;
}

/**
 * The search for a counterexample to properness: a pair (η, q) with L(η, q) < L(η, η). Every η of the
 * table is compared with every q of the table, the best few candidates are refined by golden section,
 * and the slope of L(η, ·) at q = η is tested at each interior η, with a local descent search when it is
 * not zero (this catches improperness confined close to the diagonal, between grid points). Every
 * reported pair is re-evaluated from the closures (`confirm`).
 *
 * Definitions: Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, §3 (proper means
 * L(η, η) = inf_q L(η, q) for all η).
 */
import type { LossFunctions } from "../loss-model.js";
import { goldenMin } from "./numeric/minimise.js";
import { safeCall } from "./margin.js";
import { riskTol, tableRisk, type Table } from "./risk-table.js";
import type { Counterexample } from "./messages.js";
import { CLOCK_STRIDE, type Deadline } from "./budget.js";

export type { Counterexample } from "./messages.js";

/** Relative slope |∂L/∂q| at q = η that triggers a local descent search (central differences are accurate to ~1e-8). */
export const SLOPE_TOL = 1e-6;
/** Confirmed slope points collected as evidence once a counterexample is known (more only cost time). */
export const SLOPE_EVIDENCE_POINTS = 4;
/** Candidates of the table scan refined by golden section (the largest relative gaps; each costs one minimisation of ≈ 60 risk evaluations). */
export const MAX_CANDIDATES = 6;

/** A non-finite value of a partial loss inside (0, 1). */
export interface NonFinite {
  q: number;
  which: "l1" | "l0";
  value: number;
}

export interface SearchOutcome {
  counterexample: Counterexample | null;
  nonFinite: NonFinite | null;
  timedOut: boolean;
  /** Points where the slope test at q = η led to a confirmed descent (evidence for stationarity-mismatch). */
  slopePoints: number[];
}

/**
 * Confirms a candidate (η, q) from the closures; returns it as a counterexample when the gap exceeds the
 * tolerance `rel` relative to the loss's scale `scale` (`tableScale`) and the terms of L(η, η).
 */
export function confirm(fns: LossFunctions, eta: number, q: number, rel: number, scale: number): Counterexample | null {
  const riskAtEta = fns.risk(eta, eta);
  const riskAtQ = fns.risk(eta, q);
  if (!Number.isFinite(riskAtEta) || !Number.isFinite(riskAtQ)) return null;
  if (riskAtQ < riskAtEta - riskTol(fns, eta, rel, scale)) return { eta, q, riskAtEta, riskAtQ };
  return null;
}

/** Relative size of a counterexample's gap (against the loss's scale), used to pick the most convincing one. */
export function gapScore(c: Counterexample, scale: number): number {
  return (c.riskAtEta - c.riskAtQ) / (scale + Math.abs(c.riskAtEta));
}

/** The first interior grid point where l1 or l0 is not finite. */
function firstNonFinite(t: Table): NonFinite | null {
  for (let j = 0; j < t.qs.length; j++) {
    if (!t.interior[j]) continue;
    if (!Number.isFinite(t.l1[j]!)) return { q: t.qs[j]!, which: "l1", value: t.l1[j]! };
    if (!Number.isFinite(t.l0[j]!)) return { q: t.qs[j]!, which: "l0", value: t.l0[j]! };
  }
  return null;
}

/** A grid pair (η, q_j) whose tabulated gap exceeds the tolerance, ranked by its relative gap. */
interface Candidate {
  eta: number;
  j: number;
  score: number;
}

/** The table scan: for every η, the q of the grid with the lowest risk; the best candidates by relative gap. */
function scanCandidates(t: Table, deadline: Deadline): { candidates: Candidate[]; timedOut: boolean } {
  const n = t.qs.length;
  const cands: Candidate[] = [];
  let timedOut = false;
  for (let i = 0; i < n; i++) {
    if (i % CLOCK_STRIDE === 0 && deadline.expired()) {
      timedOut = true;
      break;
    }
    const eta = t.qs[i]!;
    const diag = tableRisk(t, eta, i);
    if (Number.isNaN(diag)) continue;
    let best = diag;
    let bestJ = -1;
    for (let j = 0; j < n; j++) {
      const a = eta === 0 ? 0 : eta * t.l1[j]!;
      const b = eta === 1 ? 0 : (1 - eta) * t.l0[j]!;
      const r = a + b;
      if (r < best) {
        best = r;
        bestJ = j;
      }
    }
    if (bestJ < 0) continue;
    const scale = t.scale + Math.abs(eta === 0 ? 0 : eta * t.l1[i]!) + Math.abs(eta === 1 ? 0 : (1 - eta) * t.l0[i]!);
    const gap = diag - best;
    if (gap > t.tol * scale) {
      const score = gap / (t.scale + Math.abs(diag));
      if (cands.length < MAX_CANDIDATES || score > cands[cands.length - 1]!.score) {
        cands.push({ eta, j: bestJ, score });
        cands.sort((x, y) => y.score - x.score);
        if (cands.length > MAX_CANDIDATES) cands.pop();
      }
    }
  }
  return { candidates: cands, timedOut };
}

/** Refines a candidate by golden section between its grid neighbours and confirms it from the closures. */
function refineCandidate(fns: LossFunctions, t: Table, c: Candidate): Counterexample | null {
  const n = t.qs.length;
  const lo = t.qs[Math.max(0, c.j - 1)]!;
  const hi = t.qs[Math.min(n - 1, c.j + 1)]!;
  const m = goldenMin((q) => fns.risk(c.eta, q), lo, hi);
  const q = m.fx < fns.risk(c.eta, t.qs[c.j]!) ? m.x : t.qs[c.j]!;
  return confirm(fns, c.eta, q, t.tol, t.scale);
}

/**
 * The slope test at q = η: where ∂L(η, q)/∂q ≠ 0 at q = η, a descent from η in the downhill direction
 * is tried and confirmed. Stops after SLOPE_EVIDENCE_POINTS confirmed points.
 */
function slopeSearch(fns: LossFunctions, t: Table, deadline: Deadline): { confirmed: Counterexample[]; points: number[]; timedOut: boolean } {
  const n = t.qs.length;
  const confirmed: Counterexample[] = [];
  const points: number[] = [];
  for (let i = 0; i < n; i++) {
    if (i % CLOCK_STRIDE === 0 && deadline.expired()) return { confirmed, points, timedOut: true };
    // A few confirmed slope points suffice as evidence for the diagnostics (each one is a counterexample).
    if (points.length >= SLOPE_EVIDENCE_POINTS) break;
    const eta = t.qs[i]!;
    if (!(eta >= 1e-6 && eta <= 1 - 1e-6)) continue;
    const d1 = safeCall(fns.dl1, eta);
    const d0 = safeCall(fns.dl0, eta);
    if (!Number.isFinite(d1) || !Number.isFinite(d0)) continue;
    const s = eta * d1 + (1 - eta) * d0;
    const scale = eta * Math.abs(d1) + (1 - eta) * Math.abs(d0);
    if (!(Math.abs(s) > SLOPE_TOL * scale) || scale === 0) continue;
    // Descend from q = η in the downhill direction, within a neighbourhood that stays inside [0, 1].
    const r = Math.min(0.05, eta, 1 - eta);
    const [lo, hi] = s < 0 ? [eta, Math.min(1, eta + r)] : [Math.max(0, eta - r), eta];
    const m = goldenMin((q) => fns.risk(eta, q), lo, hi);
    const c = confirm(fns, eta, m.x, t.tol, t.scale);
    if (c) {
      points.push(eta);
      confirmed.push(c);
    }
  }
  return { confirmed, points, timedOut: false };
}

/** The global search on the table: the confirmed counterexample with the largest relative gap, if any. */
export function searchCounterexample(fns: LossFunctions, t: Table, deadline: Deadline): SearchOutcome {
  const nonFinite = firstNonFinite(t);
  const scan = scanCandidates(t, deadline);
  let counterexample: Counterexample | null = null;
  const consider = (c: Counterexample | null) => {
    if (c && (!counterexample || gapScore(c, t.scale) > gapScore(counterexample, t.scale))) counterexample = c;
  };
  for (const c of scan.candidates) consider(refineCandidate(fns, t, c));
  if (scan.timedOut) return { counterexample, nonFinite, timedOut: true, slopePoints: [] };
  const slope = slopeSearch(fns, t, deadline);
  for (const c of slope.confirmed) consider(c);
  return { counterexample, nonFinite, timedOut: slope.timedOut, slopePoints: slope.points };
}

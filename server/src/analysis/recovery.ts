/**
 * Posterior recovery for improper losses: the minimiser q*(η) of the conditional risk and the map
 * η = l0'(q)/(l0'(q) − l1'(q)) that undoes it where q*(η) is monotone (Reid & Williamson 2010,
 * "Composite Binary Losses", JMLR 11, Cor. 12; for the focal loss: Charoenphakdee, Vongkulbhisal,
 * Chairatanakul & Sugiyama 2021, "On Focal Loss for Class-Posterior Probability Estimation: A
 * Theoretical Perspective", CVPR).
 */
import type { LossFunctions, RealFn } from "../loss-model.js";
import { bisect } from "./numeric/roots.js";
import { globalMin, goldenMin } from "./numeric/minimise.js";

/** The recovery map and the evidence that it works on the sampled η. */
export interface RecoveryMap {
  /** η as a function of the minimiser q: l0'(q)/(l0'(q) − l1'(q)). */
  map: RealFn;
  /** max |map(q*(η)) − η| over the sampled η. */
  maxError: number;
  /** Whether q*(η) is strictly increasing over the samples (required for the map to be a function of q*). */
  monotone: boolean;
  samples: { eta: number; qStar: number }[];
}

/** Sampled partial losses on a grid of q, reused by minimisations so each closure is evaluated once per point. */
export interface RiskTable {
  qs: number[];
  l1: number[];
  l0: number[];
}

/** A minimiser of the conditional risk at η and its value. */
export interface RiskMinimum {
  q: number;
  risk: number;
}

/**
 * Minimises q ↦ L(η, q) on [0,1]: a scan (of the table when given, else a uniform grid), golden-section
 * refinement in the neighbouring cells, and a polish by bisection on the stationarity condition
 * η·l1'(q) + (1−η)·l0'(q) = 0 when it brackets a root (golden section alone is accurate only to ~√eps).
 */
export function minimiseRisk(fns: LossFunctions, eta: number, table?: RiskTable): RiskMinimum {
  const f = (q: number) => {
    const y = fns.risk(eta, q);
    return Number.isNaN(y) ? Infinity : y;
  };
  let lo: number;
  let hi: number;
  if (table && table.qs.length > 2) {
    let best = 0;
    let bestVal = Infinity;
    for (let j = 0; j < table.qs.length; j++) {
      const a = eta === 0 ? 0 : eta * table.l1[j]!;
      const b = eta === 1 ? 0 : (1 - eta) * table.l0[j]!;
      const v = a + b;
      if (v < bestVal) {
        bestVal = v;
        best = j;
      }
    }
    lo = table.qs[Math.max(0, best - 1)]!;
    hi = table.qs[Math.min(table.qs.length - 1, best + 1)]!;
  } else {
    const m = globalMin(f, 0, 1, 400, 1);
    lo = Math.max(0, m.x - 1 / 400);
    hi = Math.min(1, m.x + 1 / 400);
  }
  let m = goldenMin(f, lo, hi);
  const slope = (q: number) => eta * fns.dl1(q) + (1 - eta) * fns.dl0(q);
  const r = m.x > 0 && m.x < 1 ? Math.min(m.x, 1 - m.x, Math.max(1e-6, 1e-3 * (hi - lo))) : 0;
  if (r > 0) {
    const root = bisect(slope, m.x - r, m.x + r, 1e-16, 200);
    if (root !== null) {
      const fr = f(root);
      // Accept the root only if it is no worse than the golden point (up to rounding of the risk values).
      if (fr <= m.fx + 1e-14 * (1 + Math.abs(m.fx))) m = { x: root, fx: fr };
    }
  }
  return { q: m.x, risk: m.fx };
}

/** The recovery map of RW10 Cor. 12 with the identity parametrisation: η = l0'(q)/(l0'(q) − l1'(q)). */
export function recoveryMap(fns: LossFunctions): RealFn {
  return (q: number) => {
    const a = fns.dl0(q);
    const b = fns.dl1(q);
    return a / (a - b);
  };
}

/** Default η samples for the recovery check: both sides of ½, near the endpoints too. */
export const RECOVERY_ETAS: readonly number[] = [0.02, 0.05, 0.1, 0.15, 0.2, 0.25, 0.3, 0.35, 0.4, 0.45, 0.5, 0.55, 0.6, 0.65, 0.7, 0.75, 0.8, 0.85, 0.9, 0.95, 0.98];

/**
 * Samples q*(η) (or reuses `minimisers`, given for the same `etas`), checks monotonicity, and measures how well the recovery map returns η. Returns null
 * when the minimisers sit at the endpoints (the map is then undefined) or the derivatives are not finite.
 */
export function computeRecovery(
  fns: LossFunctions,
  etas: readonly number[] = RECOVERY_ETAS,
  table?: RiskTable,
  minimisers?: readonly number[],
): RecoveryMap | null {
  try {
    return sampleRecovery(fns, etas, table, minimisers);
  } catch {
    // A failure inside a user closure means the map cannot be verified; callers treat null as "no recovery".
    return null;
  }
}

function sampleRecovery(fns: LossFunctions, etas: readonly number[], table?: RiskTable, minimisers?: readonly number[]): RecoveryMap | null {
  const map = recoveryMap(fns);
  // Minimisers already sampled by the caller (same η, same order) are reused.
  const given = minimisers && minimisers.length === etas.length ? minimisers : null;
  const samples = etas.map((eta, i) => ({ eta, qStar: given ? given[i]! : minimiseRisk(fns, eta, table).q }));
  let monotone = true;
  for (let i = 0; i + 1 < samples.length; i++) if (!(samples[i + 1]!.qStar > samples[i]!.qStar)) monotone = false;
  let maxError = 0;
  for (const s of samples) {
    if (!(s.qStar > 0 && s.qStar < 1)) return null;
    const e = Math.abs(map(s.qStar) - s.eta);
    if (!Number.isFinite(e)) return null;
    maxError = Math.max(maxError, e);
  }
  return { map, maxError, monotone, samples };
}

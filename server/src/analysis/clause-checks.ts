/**
 * Checks of the declared clauses beside the verdict: a Bayes risk must be concave (Bao 2023, "Proper
 * Losses, Moduli of Convexity, and Surrogate Regret Bounds", COLT, §2) and, when declared next to other
 * forms, equal to the loss's own Bayes risk and to its Savage representation (Bao 2023, Thm 1); a weight
 * must be non-negative (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Thm 6).
 */
import type { Finding, LossFunctions, LossSpec } from "../loss-model.js";
import { linspace, probabilityGrid } from "./numeric/sampling.js";
import { diffInUnit } from "./numeric/differences.js";
import { safeCall } from "./margin.js";
import { bayesMismatchFinding, bayesNotConcaveFinding, weightNegativeFinding, type BayesMismatch } from "./messages.js";

/**
 * Relative difference between a declared Bayes risk and the loss's own that is reported (numeric H' noise
 * is ~1e-9), relative to the loss's scale (the largest |H|, |l1|, |l0| at the check points) plus the value.
 */
export const BAYES_MISMATCH_TOL = 1e-6;
/** Relative tolerance on second differences of a Bayes risk when testing concavity (rounding of three values). */
export const CONCAVITY_TOL = 1e-9;
/**
 * Points at which a declared Bayes risk is compared with the loss's own (each costs one evaluation of the
 * derived H, a minimisation for partial losses): a fixed count, so the check never depends on time.
 */
export const DECLARED_BAYES_POINTS = 48;

/** Points for checks of a Bayes risk: both sides of ½ and close to the endpoints. */
function bayesCheckPoints(): number[] {
  const pts = linspace(0.01, 0.99, 98);
  for (const x of [1e-3, 3e-3, 1 - 3e-3, 1 - 1e-3]) pts.push(x);
  return pts.sort((a, b) => a - b);
}

/** Concavity of H by second differences (robust to kinks, which concave H may have). */
export function checkBayesConcavity(H: (q: number) => number, declared: boolean): Finding | null {
  let worst = 0;
  let at = -1;
  for (const x of bayesCheckPoints()) {
    const h = Math.min(1e-3, x / 2, (1 - x) / 2);
    const a = safeCall(H, x - h);
    const b = safeCall(H, x);
    const c = safeCall(H, x + h);
    if (!Number.isFinite(a) || !Number.isFinite(b) || !Number.isFinite(c)) continue;
    const d2 = a - 2 * b + c;
    const tol = CONCAVITY_TOL * (Math.abs(a) + 2 * Math.abs(b) + Math.abs(c)) + 1e-300;
    if (d2 > tol && d2 / (h * h) > worst) {
      worst = d2 / (h * h);
      at = x;
    }
  }
  if (at < 0) return null;
  return bayesNotConcaveFinding(declared, at, worst);
}

/** A declared Bayes risk against the loss's own: H vs inf_q L, and (for partials) the Savage links l1 = H + (1−q)H', l0 = H − qH'. */
export function checkDeclaredBayes(spec: LossSpec, fns: LossFunctions): Finding | null {
  const H = spec.bayes!;
  const dH = spec.dbayes ?? ((q: number) => diffInUnit(H, q));
  let worst = 0;
  let ev: BayesMismatch | null = null;
  const pts = linspace(0.02, 0.98, DECLARED_BAYES_POINTS);
  // The loss's own scale replaces an absolute floor of 1, so a loss and its multiples get the same answer.
  let scale = 0;
  for (const q of pts) {
    for (const v of [safeCall(H, q), safeCall(fns.l1, q), safeCall(fns.l0, q)]) if (Number.isFinite(v)) scale = Math.max(scale, Math.abs(v));
  }
  const floor = Math.max(scale, Number.MIN_VALUE);
  for (const q of pts) {
    const declared = safeCall(H, q);
    const actual = fns.bayes(q);
    if (!Number.isFinite(declared) || !Number.isFinite(actual)) continue;
    const d = Math.abs(declared - actual) / (floor + Math.abs(actual));
    if (d > BAYES_MISMATCH_TOL && d > worst) {
      worst = d;
      ev = { against: "infimum", q, declared, derived: actual };
    }
    if (spec.form === "partials") {
      const d1 = safeCall(dH, q);
      const s1 = declared + (1 - q) * d1;
      const s0 = declared - q * d1;
      const l1 = safeCall(fns.l1, q);
      const l0 = safeCall(fns.l0, q);
      for (const [name, savage, given] of [["l1", s1, l1], ["l0", s0, l0]] as const) {
        if (!Number.isFinite(savage) || !Number.isFinite(given)) continue;
        const e = Math.abs(savage - given) / (floor + Math.abs(given));
        if (e > BAYES_MISMATCH_TOL && e > worst) {
          worst = e;
          ev = { against: "savage", q, partial: name, savage, given };
        }
      }
    }
  }
  return ev ? bayesMismatchFinding(ev) : null;
}

/** Weight samples with w < 0 (weight form), reported with the first failing point. */
export function checkWeightSign(spec: LossSpec): Finding | null {
  if (!spec.weight) return null;
  for (const q of probabilityGrid(200, 8)) {
    const y = safeCall(spec.weight, q);
    if (y < 0) return weightNegativeFinding(q, y);
  }
  return null;
}

/**
 * The exponents of the two surrogate-regret bounds (decision regret = O(R^exponent)): the modulus route
 * (Bao 2023, "Proper Losses, Moduli of Convexity, and Surrogate Regret Bounds", COLT, Cor. 7: exponent
 * 1/p for δ** ~ ε^p) and the direct bound at the threshold (Reid & Williamson 2009, "Surrogate Regret
 * Bounds for Proper Losses", ICML, Thm 3) and one sentence on why they differ; their printed forms are
 * display.ts's formatExponent and formatPowerLaw.
 */
import type { PowerLaw } from "./numeric/fits.js";
import { fmt } from "../display.js";
import type { WeightFeatures } from "./weight-features.js";

/** Two exponents closer than this are "the same" (they are snapped rationals or estimates good to 1e-3). */
export const EXPONENT_SAME_TOL = 1e-3;

export interface ExplainInput {
  viaModulus: number | null;
  direct: number | null;
  threshold: number;
  vacuousBelow: number | null;
  lambda: number | null;
  lambdaAt: { q: number; approached: boolean } | null;
  features: WeightFeatures;
  vanishing: PowerLaw | null;
  weightAtC: number;
}

/** One sentence on why the two exponents differ (null when they agree or one is unknown without a reason). */
export function explainExponents(x: ExplainInput): string | null {
  const c = fmt(x.threshold);
  if (x.viaModulus === null && x.direct !== null && x.vacuousBelow !== null) {
    return `δ** = 0 below ε = ${fmt(x.vacuousBelow)} because H is affine on an interval that long, so the modulus route gives no rate, while the direct bound at c = ${c} has exponent ${fmt(x.direct, 4)}.`;
  }
  if (x.viaModulus === null || x.direct === null) return null;
  if (Math.abs(x.viaModulus - x.direct) <= EXPONENT_SAME_TOL) return null;
  const massAtC = x.features.pointMasses.find((p) => Math.abs(p.q - x.threshold) < 1e-6);
  if (massAtC) {
    return `w has a point mass ${fmt(massAtC.mass, 4)} at the threshold c = ${c}, which makes the direct bound linear there; the modulus route reflects the curvature of H everywhere and stays at ${fmt(x.viaModulus, 4)}.`;
  }
  if (x.direct > x.viaModulus && x.direct > 0.5 + EXPONENT_SAME_TOL && !(x.weightAtC < 1e300)) {
    return `w is unbounded at the threshold c = ${c}, which speeds up only the direct bound; the modulus route cannot beat exponent ½ there.`;
  }
  if (x.direct > x.viaModulus && x.direct > 0.5 + EXPONENT_SAME_TOL) {
    return `w grows without bound at the threshold c = ${c} (the direct bound ψ_RW ~ α^${fmt(1 / x.direct, 3)}), which speeds up only the direct bound.`;
  }
  if (x.direct > x.viaModulus && x.lambda === 0 && x.lambdaAt) {
    const k = x.vanishing && x.vanishing.stable && x.vanishing.power > 0 ? fmt(x.vanishing.power, 3) : "k";
    if (x.lambdaAt.approached || x.lambdaAt.q <= 0 || x.lambdaAt.q >= 1) {
      const e = x.lambdaAt.q >= 1 ? "1" : "0";
      const t = e === "0" ? "q" : "(1−q)";
      return `w vanishes at an endpoint (w ~ ${t}^${k} near ${e}): this slows only the modulus route.`;
    }
    return `w vanishes at q = ${fmt(x.lambdaAt.q)} (w ~ |q − ${fmt(x.lambdaAt.q)}|^${k}), away from the threshold c = ${c}: this slows only the modulus route.`;
  }
  if (x.direct > x.viaModulus) {
    return `The curvature of H is smallest away from the threshold c = ${c}: the global modulus route is slower than the local direct bound.`;
  }
  return null;
}

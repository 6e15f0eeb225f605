/**
 * Margin losses φ(yv): the implied inverse link (Reid & Williamson 2010, "Composite Binary Losses",
 * JMLR 11, Cor. 14), the Bayes risk by bounded 1-D minimisation over the score, convexity of φ and
 * classification calibration (Bartlett, Jordan & McAuliffe 2006, "Convexity, Classification, and Risk
 * Bounds", JASA 101).
 */
import type { Finding, RealFn } from "../loss-model.js";
import { fmt } from "../display.js";
import { globalMin } from "./numeric/minimise.js";
import { linspace } from "./numeric/sampling.js";
import { diffOnLine } from "./numeric/differences.js";
import { invertMonotone } from "./numeric/roots.js";

/** Scores are searched in [−50, 50]: wide enough for every link saturating in doubles (σ(2·50) = 1), small enough that exp(±v) stays finite. */
export const MARGIN_SCORE_BOUND = 50;
/** Points of the score grid used to scan the implied link and φ. */
export const MARGIN_SCAN_POINTS = 800;
/** Probabilities closer than this to 0 or 1 count as saturated when scanning the implied link in doubles. */
export const LINK_SATURATION = 1e-12;
/** Relative tolerance on second differences of φ when testing convexity (rounding of three values over h²). */
export const CONVEXITY_REL_TOL = 1e-7;
/**
 * Absolute rounding floor of an evaluation of φ, in units of the loss's own scale near v = 0 (max |φ| on
 * [−1, 1]) times the double-precision epsilon: a formula such as ln(1 + exp(−v)) carries an absolute
 * error of a few ulps of its intermediate 1 + exp(−v) ≈ 1 however small φ becomes, so its second
 * differences far out in the tail are rounding noise of that size (common practice: 16 ulps covers the
 * handful of operations in a closed-form φ and the three values of a second difference).
 */
export const CONVEXITY_ABS_ULPS = 16;
/** Margin (relative to φ's scale) by which H⁻ must exceed H for calibration (above minimisation noise). */
export const CALIBRATION_TOL = 1e-8;

/** Evaluates f at x, turning exceptions into NaN so a broken closure never escapes a check. */
export function safeCall(f: RealFn, x: number): number {
  try {
    const y = f(x);
    return typeof y === "number" ? y : NaN;
  } catch {
    return NaN;
  }
}

/** The conditional risk of a margin loss at score v: ηφ(v) + (1−η)φ(−v), dropping terms with a zero coefficient. */
export function marginRisk(phi: RealFn, eta: number, v: number): number {
  const a = eta === 0 ? 0 : eta * safeCall(phi, v);
  const b = eta === 1 ? 0 : (1 - eta) * safeCall(phi, -v);
  return a + b;
}

/** The implied inverse link ψ⁻¹(v) = φ'(−v)/(φ'(−v) + φ'(v)) of RW10 Cor. 14. */
export function impliedInverseLink(dphi: RealFn): RealFn {
  return (v: number) => {
    const a = safeCall(dphi, -v);
    const b = safeCall(dphi, v);
    return a / (a + b);
  };
}

/** The result of scanning the implied inverse link over the score range. */
export interface MarginLinkScan {
  /** True when ψ⁻¹ is strictly increasing with values in [0,1] on [vlo, vhi] (up to saturation in doubles). */
  invertible: boolean;
  vlo: number;
  vhi: number;
  /** Where ψ⁻¹ is flat or decreasing (the evidence when not invertible). */
  flat: [number, number] | null;
  reason: string | null;
}

/**
 * Scans ψ⁻¹ on [−B, B]: finds the largest interval around 0 where it is finite and in [0,1], and checks
 * that it is strictly increasing there (saturated values 0 and 1 are allowed to repeat).
 */
export function scanMarginLink(inv: RealFn): MarginLinkScan {
  const B = MARGIN_SCORE_BOUND;
  const vs = linspace(-B, B, MARGIN_SCAN_POINTS);
  const rs = vs.map((v) => inv(v));
  const mid = MARGIN_SCAN_POINTS / 2;
  const ok = (r: number) => Number.isFinite(r) && r >= 0 && r <= 1;
  if (!ok(rs[mid]!)) {
    return { invertible: false, vlo: 0, vhi: 0, flat: null, reason: `ψ⁻¹(0) = ${fmt(rs[mid]!)} is not a probability (φ'(0) = 0 or undefined)` };
  }
  let lo = mid;
  while (lo > 0 && ok(rs[lo - 1]!)) lo--;
  let hi = mid;
  while (hi < vs.length - 1 && ok(rs[hi + 1]!)) hi++;
  // Refine the ends of the valid interval so links with a bounded score range (2q−1) end exactly where ψ⁻¹ reaches 0 or 1.
  const edge = (inside: number, outside: number) => {
    let a = inside;
    let b = outside;
    for (let k = 0; k < 60; k++) {
      const m = 0.5 * (a + b);
      if (ok(inv(m))) a = m;
      else b = m;
    }
    return a;
  };
  const vlo = lo > 0 ? edge(vs[lo]!, vs[lo - 1]!) : vs[lo]!;
  const vhi = hi < vs.length - 1 ? edge(vs[hi]!, vs[hi + 1]!) : vs[hi]!;
  let flatStart: number | null = null;
  for (let i = lo; i < hi; i++) {
    const r0 = rs[i]!;
    const r1 = rs[i + 1]!;
    const saturated = (r0 <= LINK_SATURATION && r1 <= LINK_SATURATION) || (r0 >= 1 - LINK_SATURATION && r1 >= 1 - LINK_SATURATION);
    if (saturated) continue;
    if (!(r1 > r0)) {
      if (flatStart === null) flatStart = vs[i]!;
      let j = i;
      while (j < hi && !(rs[j + 1]! > rs[j]!)) j++;
      return {
        invertible: false,
        vlo,
        vhi,
        flat: [vs[i]!, vs[j]!],
        reason: `ψ⁻¹(v) = φ'(−v)/(φ'(−v)+φ'(v)) is not strictly increasing on [${fmt(vs[i]!)}, ${fmt(vs[j]!)}] (value ${fmt(r0)})`,
      };
    }
  }
  return { invertible: true, vlo, vhi, flat: null, reason: null };
}

/** The link ψ(q) as the inverse of the implied ψ⁻¹ on its valid score interval. */
export function marginLinkFromInverse(inv: RealFn, vlo: number, vhi: number): RealFn {
  return (q: number) => {
    if (Number.isNaN(q)) return NaN;
    if (q <= 0) return inv(vlo) <= 0 ? vlo : -Infinity;
    if (q >= 1) return inv(vhi) >= 1 ? vhi : Infinity;
    return invertMonotone(inv, q, vlo, vhi);
  };
}

/** Grid size and refinements for minimising the margin risk over v (kinks and plateaus need a fine scan). */
export const MARGIN_MIN_GRID = 400;

/** Bayes risk of a margin loss, H(η) = inf_{|v| ≤ B} ηφ(v) + (1−η)φ(−v), by a grid scan plus golden refinement. */
export function marginBayes(phi: RealFn): RealFn {
  return (eta: number) => {
    if (!(eta >= 0 && eta <= 1)) return NaN;
    const m = globalMin((v) => marginRisk(phi, eta, v), -MARGIN_SCORE_BOUND, MARGIN_SCORE_BOUND, MARGIN_MIN_GRID, 3);
    return m.fx;
  };
}

/** The wrong-sign Bayes risk H⁻(η): the infimum over scores with v(2η−1) ≤ 0 (BJM06). */
export function marginWrongSignBayes(phi: RealFn, eta: number): number {
  const B = MARGIN_SCORE_BOUND;
  const [a, b] = eta >= 0.5 ? [-B, 0] : [0, B];
  return globalMin((v) => marginRisk(phi, eta, v), a, b, MARGIN_MIN_GRID / 2, 3).fx;
}

/** The result of a second-difference convexity scan, with the evidence point. */
export interface ConvexityScan {
  convex: boolean;
  /** The score where a second difference of φ is negative (the evidence), with its value. */
  where: number | null;
  secondDifference: number | null;
}

/**
 * Convexity of φ on [−B, B] by second differences on a fine grid, skipping non-finite values (overflow
 * far from 0 must not decide convexity); the tolerance is relative to the magnitudes involved.
 */
export function scanConvexity(phi: RealFn, lo = -MARGIN_SCORE_BOUND, hi = MARGIN_SCORE_BOUND, n = MARGIN_SCAN_POINTS): ConvexityScan {
  const vs = linspace(lo, hi, n);
  const ys = vs.map((v) => safeCall(phi, v));
  const central = ys.filter((y, i) => Math.abs(vs[i]!) <= 1 && Number.isFinite(y)).map((y) => Math.abs(y));
  const floor = CONVEXITY_ABS_ULPS * Number.EPSILON * (central.length > 0 ? Math.max(...central) : 0);
  let worst = 0;
  let where: number | null = null;
  for (let i = 1; i + 1 < vs.length; i++) {
    const a = ys[i - 1]!;
    const b = ys[i]!;
    const c = ys[i + 1]!;
    if (!Number.isFinite(a) || !Number.isFinite(b) || !Number.isFinite(c)) continue;
    const d2 = a - 2 * b + c;
    const tol = CONVEXITY_REL_TOL * (Math.abs(a) + 2 * Math.abs(b) + Math.abs(c)) + floor + 1e-300;
    if (d2 < -tol && d2 < worst) {
      worst = d2;
      where = vs[i]!;
    }
  }
  return { convex: where === null, where, secondDifference: where === null ? null : worst };
}

/** Steps for the kink test at 0: one-sided slopes differ by O(h) for smooth φ and by the slope jump at a kink. */
export const KINK_STEPS: readonly [number, number] = [1e-4, 1e-6];
/** A kink is declared when shrinking the step 100-fold shrinks the slope gap by less than this factor (smooth: 100×). */
export const KINK_SHRINK = 10;

/**
 * Whether φ is differentiable at 0: the gap between the right and left difference quotients shrinks
 * linearly with the step for smooth φ and tends to the slope jump at a kink.
 */
export function isDifferentiableAtZero(phi: RealFn): { differentiable: boolean; left: number; right: number } {
  const f0 = safeCall(phi, 0);
  const gapAt = (h: number) => {
    const left = (f0 - safeCall(phi, -h)) / h;
    const right = (safeCall(phi, h) - f0) / h;
    return { left, right, gap: Math.abs(right - left) };
  };
  const [h1, h2] = KINK_STEPS;
  const a = gapAt(h1);
  const b = gapAt(h2);
  if (!Number.isFinite(a.gap) || !Number.isFinite(b.gap)) return { differentiable: false, left: b.left, right: b.right };
  // φ's own scale near 0 (max |φ| at −1, 0, 1) replaces an absolute floor of 1, so c·φ gets the same answer for every c > 0.
  const phiScale = Math.max(...[f0, safeCall(phi, -1), safeCall(phi, 1)].map((x) => (Number.isFinite(x) ? Math.abs(x) : 0)), Number.MIN_VALUE);
  const scale = Math.max(phiScale, Math.abs(b.left), Math.abs(b.right));
  // Rounding in the quotients is ~eps·|φ|/h; gaps below that carry no information.
  const noise = (1e-15 * phiScale) / h2;
  const differentiable = b.gap <= noise + 1e-9 * scale || b.gap * KINK_SHRINK <= a.gap;
  return { differentiable, left: b.left, right: b.right };
}

/** Classification calibration (null when undecided) and the findings explaining a failure. */
export interface CalibrationResult {
  calibrated: boolean | null;
  findings: Finding[];
}

/**
 * Classification calibration. For convex φ, calibrated iff φ is differentiable at 0 with φ'(0) < 0
 * (BJM06, convex case); otherwise the definition is checked numerically: H⁻(η) > H(η) for η ≠ ½.
 */
export function checkMarginCalibration(phi: RealFn, dphi: RealFn, convex: boolean): CalibrationResult {
  const findings: Finding[] = [];
  if (convex) {
    const { differentiable, left, right } = isDifferentiableAtZero(phi);
    const slope = differentiable ? safeCall(dphi, 0) : NaN;
    if (!differentiable) {
      findings.push({
        code: "margin-not-calibrated",
        clause: "margin",
        message: `The convex margin function is not differentiable at 0 (one-sided slopes ${fmt(left)} and ${fmt(right)}), so it is not classification-calibrated (Bartlett, Jordan & McAuliffe 2006).`,
        data: { v: 0, leftSlope: left, rightSlope: right },
      });
      return { calibrated: false, findings };
    }
    if (!(slope < 0)) {
      findings.push({
        code: "margin-not-calibrated",
        clause: "margin",
        message: `The convex margin function has φ'(0) = ${fmt(slope)} ≥ 0, so it is not classification-calibrated (Bartlett, Jordan & McAuliffe 2006).`,
        data: { v: 0, slope },
      });
      return { calibrated: false, findings };
    }
    return { calibrated: true, findings };
  }
  const scale = Math.max(1e-300, Math.abs(safeCall(phi, 0)));
  for (const eta of [0.05, 0.2, 0.35, 0.45, 0.55, 0.65, 0.8, 0.95]) {
    const H = marginBayes(phi)(eta);
    const Hm = marginWrongSignBayes(phi, eta);
    if (!(Hm > H + CALIBRATION_TOL * scale)) {
      findings.push({
        code: "margin-not-calibrated",
        clause: "margin",
        message: `Not classification-calibrated: at η = ${fmt(eta)} the best wrong-sign score has risk ${fmt(Hm)}, no worse than the Bayes risk ${fmt(H)} (Bartlett, Jordan & McAuliffe 2006).`,
        data: { eta, bayes: H, wrongSignBayes: Hm },
      });
      return { calibrated: false, findings };
    }
  }
  return { calibrated: true, findings };
}

/** The derivative of φ: the declared one when present, otherwise a central difference on the line. */
export function marginDerivative(phi: RealFn, dphi?: RealFn): RealFn {
  return dphi ?? ((v: number) => diffOnLine(phi, v));
}
